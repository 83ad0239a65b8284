#include "mixture_em_statistics.hpp"

#include <string>
#include <utility>

#include "error.hpp"
#include "mixture_em_steps.hpp"
#include "mixture_missing.hpp"
#include "mixture_score.hpp"

namespace ellipsa::core {

EmStatistics::EmStatistics(MixtureModel parameters) : parameters_(std::move(parameters)) {
  const Index k = parameters_.components(), p = parameters_.dimension();
  if (k < 1 || p < 1 || parameters_.weights.size() != k || static_cast<Index>(parameters_.covariances.size()) != k)
    throw Error(ErrorKind::Argument, "EM statistics: the parameters have inconsistent sizes");
  factors_ = factor_components(parameters_);  // throws Singular naming the component
  components_.assign(static_cast<std::size_t>(k), MomentAccumulator(p));
  overall_ = MomentAccumulator(p);
}

void EmStatistics::add(DataView x, int threads) {
  if (x.rows() == 0) return;
  Eigen::MatrixXd t;
  const Posterior post = mixture_e_step_complete(parameters_, factors_, x, t, threads);
  for (Index k = 0; k < t.cols(); ++k) components_[static_cast<std::size_t>(k)].add(x, t.col(k));
  overall_.add(x);
  log_likelihood_ += post.log_density.sum();
  sum_t_log_t_ += post.sum_t_log_t;
}

void EmStatistics::merge(const EmStatistics& other) {
  if (other.components_.size() != components_.size() || other.overall_.dimension() != overall_.dimension())
    throw Error(ErrorKind::Shape, "EM statistics: merging statistics of other K or p");
  for (std::size_t k = 0; k < components_.size(); ++k) components_[k].merge(other.components_[k]);
  overall_.merge(other.overall_);
  log_likelihood_ += other.log_likelihood_;
  sum_t_log_t_ += other.sum_t_log_t_;
}

EmStatistics EmStatistics::from_parts(MixtureModel parameters, std::vector<MomentAccumulator> components,
                                      MomentAccumulator overall, double log_likelihood, double sum_t_log_t) {
  EmStatistics s(std::move(parameters));
  if (components.size() != s.components_.size() || overall.dimension() != s.overall_.dimension())
    throw Error(ErrorKind::Format, "EM statistics: parts of other K or p than the parameters");
  s.components_ = std::move(components);
  s.overall_ = std::move(overall);
  s.log_likelihood_ = log_likelihood;
  s.sum_t_log_t_ = sum_t_log_t;
  return s;
}

Eigen::VectorXd EmStatistics::ridge(const MixtureOptions& options) const {
  if (overall_.rows() < 1) throw Error(ErrorKind::Data, "EM statistics: no rows were added");
  const Eigen::VectorXd variance =
      overall_.cross_products().diagonal() / overall_.weight_sum();  // divisor: the count, as fit_mixture
  return mixture_ridge(variance, options);
}

MixtureModel EmStatistics::m_step(const MixtureOptions& options) const {
  const Index n = overall_.rows(), p = overall_.dimension(), k = parameters_.components();
  const Index needed = mixture_parameter_count(k, p, options.structure);
  if (n < needed)
    throw Error(ErrorKind::Data, "EM statistics: " + std::to_string(n) + " rows, fewer than the " +
                                     std::to_string(needed) + " free parameters");
  const Eigen::VectorXd reg = ridge(options);
  std::vector<ComponentMoments> moments;
  for (const auto& c : components_) moments.push_back({c.weight_sum(), c.mean(), c.cross_products()});
  MixtureModel next = mixture_m_step(moments, static_cast<double>(n), options.structure, p, reg);
  const auto collapsed = collapsed_components(next, static_cast<double>(n), mixture_min_component_rows(options, p));
  if (!collapsed.empty()) {
    const auto& e = collapsed.front();
    throw Error(ErrorKind::Singular,
                "component " + std::to_string(e.component) + " collapsed (" +
                    (e.reason == CollapseReason::SmallWeight
                         ? "effective rows " + std::to_string(next.weights(e.component) * static_cast<double>(n)) +
                               " below " + std::to_string(mixture_min_component_rows(options, p))
                         : std::string("covariance not positive definite")) +
                    "); re-seeding needs every row, so the statistics path stops here: lower K, raise the "
                    "regularisation or choose other starts");
  }
  return next;
}

}  // namespace ellipsa::core
