#include "mixture_em.hpp"

#include <cblas.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <memory>
#include <numbers>
#include <string>
#include <vector>

#include "cholesky.hpp"
#include "error.hpp"
#include "kmeans_seed.hpp"
#include "mixture_acceleration.hpp"
#include "mixture_em_steps.hpp"
#include "mixture_missing.hpp"
#include "mixture_score.hpp"
#include "moments.hpp"
#include "parallel.hpp"

namespace ellipsa::core {

Index mixture_parameter_count(Index k, Index p, CovarianceStructure structure) {
  if (k < 1 || p < 1) throw Error(ErrorKind::Argument, "parameter count: K and p must be at least 1");
  const Index shared = (k - 1) + k * p;  // mixing weights and means
  switch (structure) {
    case CovarianceStructure::Full: return shared + k * p * (p + 1) / 2;
    case CovarianceStructure::Diagonal: return shared + k * p;
    case CovarianceStructure::Tied: return shared + p * (p + 1) / 2;
    case CovarianceStructure::Spherical: return shared + k;
  }
  throw Error(ErrorKind::Argument, "unknown covariance structure");
}

namespace {

const char* structure_name(CovarianceStructure s) {
  switch (s) {
    case CovarianceStructure::Full: return "full";
    case CovarianceStructure::Diagonal: return "diagonal";
    case CovarianceStructure::Tied: return "tied";
    case CovarianceStructure::Spherical: return "spherical";
  }
  return "?";
}

}  // namespace

// The E-step for complete rows (Dempster, Laird & Rubin 1977): responsibilities
// into t (n x K) and the posterior summary. Chunk by chunk, so that a chunk is
// read from memory once for all K components: per component the centred chunk
// is whitened by one right-sided triangular solve (y_i' = (x_i - mu)' L^-T,
// column-major, the BLAS-3 shape) and its row norms are the squared Mahalanobis
// distances. The arithmetic does not depend on the layout of x.
Posterior mixture_e_step_complete(const MixtureModel& model, const std::vector<CholeskyFactor>& factors, DataView x,
                                  Eigen::MatrixXd& t, int threads) {
  constexpr Index kChunkRows = 4096;
  const Index n = x.rows();
  const Index p = x.cols();
  const Index k_count = model.components();
  const Eigen::VectorXd offset = component_log_offsets(model, factors, p);
  t.resize(n, k_count);
  Posterior post;
  post.log_density.resize(n);
  // Fixed chunks on `threads` threads (parallel.hpp); each chunk's rows are
  // written in place and its sum_t_log_t is added in chunk order afterwards.
  const Index chunk_total = chunk_count(n, kChunkRows);
  struct Scratch {
    Eigen::MatrixXd lj, y;
    Eigen::ArrayXd d2;
    std::unique_ptr<ColumnMajorChunks> chunks;
  };
  std::vector<Scratch> scratch(static_cast<std::size_t>(parallel_workers(threads, chunk_total)));
  std::vector<double> sum_t_log_t(static_cast<std::size_t>(chunk_total), 0.0);
  parallel_for(threads, chunk_total, [&](Index c, int worker) {
    Scratch& s = scratch[static_cast<std::size_t>(worker)];
    if (!s.chunks) {
      s.chunks = std::make_unique<ColumnMajorChunks>(x);
      s.y.resize(std::min(kChunkRows, std::max<Index>(n, 1)), p);
    }
    Eigen::MatrixXd& lj = s.lj;
    Eigen::MatrixXd& y = s.y;
    Eigen::ArrayXd& d2 = s.d2;
    const Index start = c * kChunkRows;
    const Index m = std::min(kChunkRows, n - start);
    Index ld = 0;
    const double* block = s.chunks->block(start, m, ld);
    lj.resize(m, k_count);
    for (Index k = 0; k < k_count; ++k) {
      const Eigen::MatrixXd& l = factors[static_cast<std::size_t>(k)].lower();
      for (Index j = 0; j < p; ++j)
        y.col(j).head(m).array() = Eigen::Map<const Eigen::ArrayXd>(block + j * ld, m) - model.means(k, j);
      cblas_dtrsm(CblasColMajor, CblasRight, CblasLower, CblasTrans, CblasNonUnit, static_cast<int>(m),
                  static_cast<int>(p), 1.0, l.data(), static_cast<int>(l.outerStride()), y.data(),
                  static_cast<int>(y.rows()));
      d2 = y.col(0).head(m).array().square();
      for (Index j = 1; j < p; ++j) d2 += y.col(j).head(m).array().square();
      lj.col(k).array() = offset(k) - 0.5 * d2;
    }
    const Posterior part = normalise_posterior(lj);
    t.middleRows(start, m) = lj;
    post.log_density.segment(start, m) = part.log_density;
    sum_t_log_t[static_cast<std::size_t>(c)] = part.sum_t_log_t;
  });
  for (double v : sum_t_log_t) post.sum_t_log_t += v;
  return post;
}

MixtureModel mixture_m_step(const std::vector<ComponentMoments>& moments, double rows, CovarianceStructure structure,
                            Index p, const Eigen::VectorXd& ridge) {
  const Index k_count = static_cast<Index>(moments.size());
  const double n = rows;
  MixtureModel model;
  model.structure = structure;
  model.weights.resize(k_count);
  model.means.resize(k_count, p);
  model.covariances.resize(static_cast<std::size_t>(k_count));
  Eigen::MatrixXd pooled = Eigen::MatrixXd::Zero(p, p);
  const Eigen::MatrixXd ridge_matrix = ridge.asDiagonal();
  for (Index k = 0; k < k_count; ++k) {
    const ComponentMoments& mom = moments[static_cast<std::size_t>(k)];
    model.weights(k) = mom.weight / n;
    model.means.row(k) = mom.mean.transpose();
    Eigen::MatrixXd& cov = model.covariances[static_cast<std::size_t>(k)];
    if (!(mom.weight > 0.0)) {
      cov = Eigen::MatrixXd::Constant(p, p, std::numeric_limits<double>::quiet_NaN());
      continue;
    }
    switch (model.structure) {
      case CovarianceStructure::Full: cov = mom.scatter / mom.weight + ridge_matrix; break;
      case CovarianceStructure::Diagonal: cov = (mom.scatter.diagonal() / mom.weight + ridge).asDiagonal(); break;
      case CovarianceStructure::Spherical:
        // One variance for all columns: mixture_ridge() gives every column the
        // same ridge here, so the mean is that value.
        cov = (mom.scatter.trace() / (mom.weight * static_cast<double>(p)) + ridge.mean()) *
              Eigen::MatrixXd::Identity(p, p);
        break;
      case CovarianceStructure::Tied: pooled += mom.scatter; break;
    }
  }
  if (model.structure == CovarianceStructure::Tied) {
    const Eigen::MatrixXd shared = pooled / n + ridge_matrix;
    for (auto& c : model.covariances) c = shared;
  }
  return model;
}

double mixture_min_component_rows(const MixtureOptions& o, Index p) {
  if (o.min_component_rows >= 0.0) return o.min_component_rows;
  return o.structure == CovarianceStructure::Full   ? static_cast<double>(p + 1)
         : o.structure == CovarianceStructure::Tied ? 1.0
                                                    : 2.0;
}

std::vector<CollapseEvent> collapsed_components(const MixtureModel& model, double rows, double min_rows) {
  std::vector<CollapseEvent> found;
  for (Index k = 0; k < model.components(); ++k) {
    CollapseEvent e;
    e.component = k;
    CholeskyFactor f;
    if (!(model.weights(k) * rows >= min_rows)) {
      e.reason = CollapseReason::SmallWeight;
    } else if (!f.compute(model.covariances[static_cast<std::size_t>(k)])) {
      e.reason = CollapseReason::NotPositiveDefinite;
    } else {
      continue;
    }
    found.push_back(e);
  }
  return found;
}

namespace {

// The two ways the EM sees its data: complete rows, or rows with missing
// coordinates handled by conditional expectations.
class EmData {
 public:
  virtual ~EmData() = default;
  virtual Index rows() const = 0;
  virtual Eigen::MatrixXd log_joint(const MixtureModel& m, const std::vector<CholeskyFactor>& f) const = 0;
  // Responsibilities (into t) and the posterior summary under m.
  virtual Posterior e_step(const MixtureModel& m, const std::vector<CholeskyFactor>& f, Eigen::MatrixXd& t) const {
    t = log_joint(m, f);
    return normalise_posterior(t);
  }
  virtual ComponentMoments moments(const MixtureModel& current, Index k, const Eigen::VectorXd& t) const = 0;
  // The moments of every component (column of t).
  virtual std::vector<ComponentMoments> all_moments(const MixtureModel& current, const Eigen::MatrixXd& t) const {
    std::vector<ComponentMoments> out;
    for (Index k = 0; k < t.cols(); ++k) out.push_back(moments(current, k, t.col(k)));
    return out;
  }
  // A complete row to restart a component at (missing coordinates filled from fill).
  virtual Eigen::RowVectorXd seed_row(Index i, const Eigen::RowVectorXd& fill) const = 0;
};

class CompleteData final : public EmData {
 public:
  CompleteData(DataView x, int threads) : x_(x), threads_(threads) {}
  Index rows() const override { return x_.rows(); }
  Eigen::MatrixXd log_joint(const MixtureModel& m, const std::vector<CholeskyFactor>& f) const override {
    return weighted_log_densities(m, f, x_);
  }
  Posterior e_step(const MixtureModel& m, const std::vector<CholeskyFactor>& f, Eigen::MatrixXd& t) const override {
    return mixture_e_step_complete(m, f, x_, t, threads_);
  }
  // One component by the centred two-pass path (all_moments below does all K at once).
  ComponentMoments moments(const MixtureModel&, Index, const Eigen::VectorXd& t) const override {
    MomentAccumulator acc(x_.cols());
    acc.add(x_, t);
    return {acc.weight_sum(), acc.mean(), acc.cross_products()};
  }
  std::vector<ComponentMoments> all_moments(const MixtureModel& current, const Eigen::MatrixXd& t) const override {
    // The M-step of Dempster, Laird & Rubin (1977) is a weighted mean and scatter
    // per component with the responsibilities as weights: all K in one pass over
    // the rows, each about its previous mean (unknown before the first M-step).
    Eigen::MatrixXd shifts = Eigen::MatrixXd::Constant(t.cols(), x_.cols(), std::numeric_limits<double>::quiet_NaN());
    if (current.means.rows() == t.cols() && current.means.cols() == x_.cols()) shifts = current.means;
    std::vector<ComponentMoments> out;
    for (auto& r : weighted_moments(x_, t, shifts, threads_))
      out.push_back({r.weight, std::move(r.mean), std::move(r.cross_products)});
    return out;
  }
  Eigen::RowVectorXd seed_row(Index i, const Eigen::RowVectorXd&) const override { return x_.row(i); }

 private:
  DataView x_;
  int threads_;
};

class IncompleteData final : public EmData {
 public:
  explicit IncompleteData(DataView x) : x_(x), layout_(group_missing_patterns(x, "mixture")) {}
  Index rows() const override { return x_.rows(); }
  Eigen::MatrixXd log_joint(const MixtureModel& m, const std::vector<CholeskyFactor>&) const override {
    return observed_weighted_log_densities(m, layout_, x_);
  }
  ComponentMoments moments(const MixtureModel& current, Index k, const Eigen::VectorXd& t) const override {
    return missing_component_moments(current, k, layout_, x_, t);
  }
  Eigen::RowVectorXd seed_row(Index i, const Eigen::RowVectorXd& fill) const override {
    Eigen::RowVectorXd r = x_.row(i);
    for (Index j = 0; j < r.size(); ++j)
      if (std::isnan(r(j))) r(j) = fill(j);
    return r;
  }

 private:
  DataView x_;
  MissingLayout layout_;
};

struct StartOutcome {
  MixtureModel model;
  Eigen::MatrixXd responsibilities;  // used rows x K
  Posterior posterior;
  std::vector<double> trace;
  bool converged = false;
  int iterations = 0;
};

struct Settings {
  const MixtureOptions* options;
  Eigen::VectorXd ridge;  // mixture_ridge(): added to the diagonals after each M-step
  double min_rows;
  Index p;
  Eigen::VectorXd inv_spread;  // 1 / the spread of each column, for the acceleration's step length
};

// M-step: parameters from responsibilities. `current` supplies the conditional
// expectations when coordinates are missing (ignored for complete data).
MixtureModel m_step(const EmData& data, const MixtureModel& current, const Eigen::MatrixXd& t, const Settings& set) {
  const Index p = set.p;
  const double n = static_cast<double>(data.rows());
  return mixture_m_step(data.all_moments(current, t), n, set.options->structure, p, set.ridge);
}

void check_progress(const MixtureOptions& o, const char* stage, double fraction) {
  if (o.progress && !o.progress(stage, std::clamp(fraction, 0.0, 1.0)))
    throw Error(ErrorKind::Cancelled, "mixture fit cancelled by the progress callback");
}

// Finds collapsed components and re-seeds or removes them (model and t in step).
// Returns true when something was done.
bool handle_collapse(const EmData& data, MixtureModel& model, Eigen::MatrixXd& t, const Settings& set, int start,
                     int iteration, int& reseeds, std::vector<CollapseEvent>& events) {
  const Index k_count = model.components();
  const double n = static_cast<double>(data.rows());
  std::vector<CollapseEvent> found = collapsed_components(model, n, set.min_rows);
  std::vector<bool> healthy(static_cast<std::size_t>(k_count), true);
  for (auto& e : found) {
    e.start = start;
    e.iteration = iteration;
    healthy[static_cast<std::size_t>(e.component)] = false;
  }
  if (found.empty()) return false;
  if (found.size() == static_cast<std::size_t>(k_count))
    throw Error(ErrorKind::Singular,
                "every mixture component collapsed (weight below " + std::to_string(set.min_rows) +
                    " rows or covariance not positive definite); raise the regularisation or lower K");

  // The mixture of the healthy components explains each row; the worst-explained
  // rows are where a re-seeded component restarts.
  MixtureModel healthy_model;
  healthy_model.structure = model.structure;
  std::vector<Index> keep;
  for (Index k = 0; k < k_count; ++k)
    if (healthy[static_cast<std::size_t>(k)]) keep.push_back(k);
  const Index h = static_cast<Index>(keep.size());
  healthy_model.weights.resize(h);
  healthy_model.means.resize(h, set.p);
  Eigen::MatrixXd mean_cov = Eigen::MatrixXd::Zero(set.p, set.p);
  for (Index j = 0; j < h; ++j) {
    healthy_model.weights(j) = model.weights(keep[static_cast<std::size_t>(j)]);
    healthy_model.means.row(j) = model.means.row(keep[static_cast<std::size_t>(j)]);
    healthy_model.covariances.push_back(model.covariances[static_cast<std::size_t>(keep[static_cast<std::size_t>(j)])]);
    mean_cov += healthy_model.weights(j) * healthy_model.covariances.back();
  }
  const double healthy_weight = healthy_model.weights.sum();
  healthy_model.weights /= healthy_weight;
  mean_cov /= healthy_weight;

  const bool reseed = set.options->on_collapse == CollapseAction::Reseed &&
                      reseeds + static_cast<int>(found.size()) <= 2 * static_cast<int>(k_count);
  if (!reseed) {
    for (auto& e : found) {
      e.action = CollapseAction::Remove;
      events.push_back(e);
    }
    MixtureModel kept = healthy_model;
    Eigen::MatrixXd kept_t(t.rows(), h);
    for (Index j = 0; j < h; ++j) kept_t.col(j) = t.col(keep[static_cast<std::size_t>(j)]);
    model = std::move(kept);
    t = std::move(kept_t);
    return true;
  }

  const auto factors = factor_components(healthy_model);
  Eigen::MatrixXd lj = data.log_joint(healthy_model, factors);
  const Eigen::VectorXd log_f = normalise_posterior(lj).log_density;
  std::vector<Index> order(static_cast<std::size_t>(log_f.size()));
  for (std::size_t i = 0; i < order.size(); ++i) order[i] = static_cast<Index>(i);
  std::stable_sort(order.begin(), order.end(), [&](Index a, Index b) { return log_f(a) < log_f(b); });
  const Eigen::RowVectorXd overall = healthy_model.weights.transpose() * healthy_model.means;
  std::size_t next = 0;
  for (auto& e : found) {
    const Index row = order[std::min(next++, order.size() - 1)];
    e.action = CollapseAction::Reseed;
    e.seed_row = row;
    events.push_back(e);
    model.means.row(e.component) = data.seed_row(row, overall);
    if (model.structure != CovarianceStructure::Tied || e.reason == CollapseReason::NotPositiveDefinite)
      model.covariances[static_cast<std::size_t>(e.component)] = mean_cov;
    model.weights(e.component) = 1.0 / static_cast<double>(k_count);
    ++reseeds;
  }
  model.weights /= model.weights.sum();
  return true;
}

// When a run stops: at the tolerance (the fit's rule), or earlier for the
// short runs that choose among the starts (Biernacki, Celeux & Govaert 2003):
// when the last change is at most short_run_tolerance of the whole gain since
// the run's first iteration.
enum class StopRule { Converged, ShortRun };

// One start's EM, resumable: the starts run short, and the best goes on from
// where it stopped (fit_mixture()). With options.accelerate every two plain
// iterations are followed by a SQUAREM jump (mixture_acceleration.hpp), kept
// only when the jumped-to model is valid (no collapsed component) and its
// log-likelihood is no lower than the second iteration's; otherwise the run
// goes on from that iteration. The stopping rules are tested after plain
// iterations only, so the returned model is always an M-step's.
class EmRun {
 public:
  EmRun(const EmData& data, MixtureModel provisional, Eigen::MatrixXd t, const Settings& set, int start,
        std::vector<CollapseEvent>& events)
      : data_(data), set_(set), start_(start), events_(events), model_(std::move(provisional)) {
    t_ = std::move(t);
  }

  // Iterates until `rule` holds or the iteration cap is reached; progress
  // fractions run from `from` to `to` over the iteration cap.
  void run(StopRule rule, double from, double to) {
    rule_ = rule;
    from_ = from;
    to_ = to;
    if (out_.trace.empty() && iterate()) return;  // iteration 0: the first M-step from the start's responsibilities
    while (!stopped_) {
      if (!set_.options->accelerate) {
        iterate();
        continue;
      }
      const MixtureModel theta0 = model_;
      if (iterate()) return;
      const MixtureModel theta1 = model_;
      const bool collapsed1 = collapsed_;
      if (iterate()) return;
      if (!collapsed1 && !collapsed_) jump(theta0, theta1);  // else the parameters changed under the step
    }
  }
  // Makes the run ready to go on under another rule.
  void resume() {
    stopped_ = out_.converged || it_ >= set_.options->max_iterations;
    if (!stopped_) ++it_;
  }
  double log_likelihood() const { return state_log_likelihood_; }
  StartOutcome finish() && {
    out_.model = std::move(model_);
    out_.responsibilities = std::move(t_);
    return std::move(out_);  // a run ends on an iteration, so trace.back() is its log-likelihood
  }

 private:
  // One plain iteration (M-step, collapse handling, E-step); true when the run
  // stops here.
  bool iterate() {
    const MixtureOptions& o = *set_.options;
    model_ = m_step(data_, model_, t_, set_);
    collapsed_ = handle_collapse(data_, model_, t_, set_, start_, it_, reseeds_, events_);
    const auto factors = factor_components(model_);
    out_.posterior = data_.e_step(model_, factors, t_);
    const double ll = out_.posterior.log_density.sum();
    const double before = state_log_likelihood_;
    state_log_likelihood_ = ll;
    out_.trace.push_back(ll);
    out_.iterations = it_;
    check_progress(o, "EM", from_ + (to_ - from_) * static_cast<double>(it_) / o.max_iterations);
    if (it_ > 0 && !collapsed_) {
      const double change = std::abs(ll - before);
      if (change <= o.tolerance * std::abs(ll)) {
        out_.converged = true;
        stopped_ = true;
      } else if (rule_ == StopRule::ShortRun && change <= o.short_run_tolerance * std::abs(ll - out_.trace.front())) {
        stopped_ = true;
      }
    }
    if (it_ >= o.max_iterations) stopped_ = true;
    if (!stopped_) ++it_;
    return stopped_;
  }

  void jump(const MixtureModel& theta0, const MixtureModel& theta1) {
    // The bound on |alpha| and its growth factor: Varadhan & Roland's
    // globalisation (mixture_acceleration.hpp).
    constexpr double kStepGrowth = 4.0;
    const double alpha = std::max(squarem_step_length(theta0, theta1, model_, set_.inv_spread), -step_bound_);
    if (alpha == -step_bound_) step_bound_ *= kStepGrowth;
    if (!(alpha < -1.0)) return;  // alpha = -1 is theta2 itself
    MixtureModel candidate = squarem_jump(theta0, theta1, model_, alpha);
    if (!collapsed_components(candidate, static_cast<double>(data_.rows()), set_.min_rows).empty()) {
      step_bound_ = std::max(1.0, step_bound_ / kStepGrowth);
      return;
    }
    Posterior post = data_.e_step(candidate, factor_components(candidate), t_jump_);
    const double ll = post.log_density.sum();
    if (!(ll >= state_log_likelihood_)) {
      step_bound_ = std::max(1.0, step_bound_ / kStepGrowth);
      return;
    }
    model_ = std::move(candidate);
    t_.swap(t_jump_);
    out_.posterior = std::move(post);
    state_log_likelihood_ = ll;  // not in the trace, which holds iterations
  }

  const EmData& data_;
  const Settings& set_;
  int start_;
  std::vector<CollapseEvent>& events_;
  MixtureModel model_;
  Eigen::MatrixXd t_, t_jump_;
  StartOutcome out_;
  StopRule rule_ = StopRule::Converged;
  double from_ = 0.0, to_ = 1.0;
  int it_ = 0;
  int reseeds_ = 0;
  bool collapsed_ = false;
  bool stopped_ = false;
  double step_bound_ = 1.0;
  double state_log_likelihood_ = 0.0;  // of model_: the last iteration's or an accepted jump's
};

void validate_options(const MixtureOptions& o, Index n_input) {
  if (o.components < 1) throw Error(ErrorKind::Argument, "mixture: the number of components K must be at least 1");
  if (o.restarts < 1) throw Error(ErrorKind::Argument, "mixture: restarts must be at least 1");
  if (o.max_iterations < 1) throw Error(ErrorKind::Argument, "mixture: max_iterations must be at least 1");
  if (o.lloyd_steps < 0) throw Error(ErrorKind::Argument, "mixture: lloyd_steps must be >= 0");
  if (!(o.tolerance >= 0.0) || !std::isfinite(o.tolerance))
    throw Error(ErrorKind::Argument, "mixture: tolerance must be finite and >= 0");
  if (!(o.short_run_tolerance >= 0.0) || !std::isfinite(o.short_run_tolerance))
    throw Error(ErrorKind::Argument, "mixture: short_run_tolerance must be finite and >= 0");
  if (!(o.regularisation >= 0.0) || !std::isfinite(o.regularisation))
    throw Error(ErrorKind::Argument, "mixture: regularisation must be finite and >= 0");
  if (std::isnan(o.min_component_rows)) throw Error(ErrorKind::Argument, "mixture: min_component_rows is NaN");
  if (o.initial_labels.size() > 0 && o.initial_responsibilities.size() > 0)
    throw Error(ErrorKind::Argument, "mixture: give initial labels or initial responsibilities, not both");
  if (o.initial_labels.size() > 0) {
    if (o.initial_labels.size() != n_input)
      throw Error(ErrorKind::Shape, "mixture: one initial label per input row is required");
    if (o.initial_labels.minCoeff() < 0 || o.initial_labels.maxCoeff() >= o.components)
      throw Error(ErrorKind::Argument, "mixture: initial labels must lie in [0, K)");
  }
  if (o.initial_responsibilities.size() > 0) {
    if (o.initial_responsibilities.rows() != n_input || o.initial_responsibilities.cols() != o.components)
      throw Error(ErrorKind::Shape, "mixture: initial responsibilities must be rows x K");
    if (!o.initial_responsibilities.allFinite() || o.initial_responsibilities.minCoeff() < 0.0)
      throw Error(ErrorKind::Argument, "mixture: initial responsibilities must be finite and >= 0");
  }
  // More components than rows is a property of the data, not a misuse: a model
  // choice over a range of K records it as a failed candidate (checked after
  // the options, so that a bad option is still reported as one).
  if (o.components > n_input)
    throw Error(ErrorKind::Data, "mixture: K = " + std::to_string(o.components) + " exceeds the number of rows (" +
                                     std::to_string(n_input) + ")");
}

}  // namespace

double mixture_check_columns(const Eigen::VectorXd& variance, const MixtureOptions& o) {
  std::string constant;
  Index count = 0;
  for (Index j = 0; j < variance.size(); ++j)
    if (!(variance(j) > 0.0)) {
      constant += (count++ ? ", " : "") + std::to_string(j);
    }
  if (count == variance.size())
    throw Error(ErrorKind::Data, "mixture: all usable rows are identical (every column is constant)");
  // A constant column under a diagonal or spherical structure only adds the same
  // regularised variance to every component, so a positive regularisation rescues
  // it; full and tied matrices would be fitted around a degenerate direction.
  const bool rescued = o.regularisation > 0.0 &&
                       (o.structure == CovarianceStructure::Diagonal || o.structure == CovarianceStructure::Spherical);
  if (count > 0 && !rescued)
    throw Error(ErrorKind::Data, "mixture: constant column(s) " + constant +
                                     " (zero variance over the usable rows); drop them, or use a "
                                     "diagonal or spherical structure with a positive regularisation");
  return variance.mean();
}

Eigen::VectorXd mixture_ridge(const Eigen::VectorXd& variance, const MixtureOptions& o) {
  const double mean_variance = mixture_check_columns(variance, o);
  // A spherical covariance is one variance times I: it already treats the
  // columns as if in one unit (it is not equivariant under column scaling),
  // and a ridge that differed by column would make it no longer spherical.
  // One scalar, the mean variance, is the natural scale there. A constant
  // column has no variance of its own to scale its ridge (the check above
  // admits one only where the regularisation rescues it); it takes the mean.
  Eigen::VectorXd ridge(variance.size());
  for (Index j = 0; j < variance.size(); ++j) {
    const bool own = o.structure != CovarianceStructure::Spherical && variance(j) > 0.0;
    ridge(j) = o.regularisation * (own ? variance(j) : mean_variance);
  }
  return ridge;
}

namespace {

Eigen::MatrixXd one_hot(const Eigen::VectorXi& labels, Index k_count) {
  Eigen::MatrixXd t = Eigen::MatrixXd::Zero(labels.size(), k_count);
  for (Index i = 0; i < labels.size(); ++i) t(i, labels(i)) = 1.0;
  return t;
}

}  // namespace

MixtureResult fit_mixture(DataView x, const MixtureOptions& o) {
  const Index n_input = x.rows();
  const Index p = x.cols();
  if (p < 1) throw Error(ErrorKind::Shape, "mixture: the data have no column");
  validate_options(o, n_input);
  const TeamScope team(o.threads);  // the fit's loops share one team of threads (parallel.hpp)
  const Index k_count = o.components;

  // Which rows take part.
  const MissingLayout layout = group_missing_patterns(x, "mixture");  // rejects infinite values
  const bool em_missing = o.missing == MissingHandling::EmOverMissing;
  if (em_missing && !layout.all_missing_rows.empty())
    throw Error(ErrorKind::Data,
                "mixture: row " + std::to_string(layout.all_missing_rows.front()) + " has no observed value");
  std::vector<Index> used;
  if (em_missing || layout.incomplete_rows == 0) {
    used.resize(static_cast<std::size_t>(n_input));
    for (Index i = 0; i < n_input; ++i) used[static_cast<std::size_t>(i)] = i;
  } else {
    for (const auto& pat : layout.patterns)
      if (pat.missing.empty()) used = pat.rows;
  }
  const Index n = static_cast<Index>(used.size());
  const Index needed = mixture_parameter_count(k_count, p, o.structure);
  if (n < needed || n < k_count)
    throw Error(ErrorKind::Data, "mixture: " + std::to_string(n) + " usable rows (" + std::to_string(n_input - n) +
                                     " dropped for missing values), fewer than the " + std::to_string(needed) +
                                     " free parameters of a " + std::to_string(k_count) + "-component " +
                                     structure_name(o.structure) + " mixture in " + std::to_string(p) + " dimensions");
  Eigen::MatrixXd compact;
  if (n < n_input) {
    compact.resize(n, p);
    for (Index i = 0; i < n; ++i) compact.row(i) = x.row(used[static_cast<std::size_t>(i)]);
  }
  const DataView xu = n < n_input ? make_view(compact) : x;

  // Column variances over the observed values (divisor: their count).
  Eigen::VectorXd variance(p);
  Eigen::RowVectorXd column_mean(p);
  // Passes for the count and range, the mean (each value scaled by 1 / count, so the
  // running sum stays within the values' range and cannot overflow where a
  // plain sum of values near 1e303 would) and the squares about it: no
  // division per value, which in the running update this replaces took a
  // fifth of a one-component fit of 1e5 x 10 (measured with perf).
  for (Index j = 0; j < p; ++j) {
    const auto column = xu.col(j);
    double count = 0.0;
    double low = std::numeric_limits<double>::infinity(), high = -low;
    for (Index i = 0; i < n; ++i) {
      const double v = column(i);
      if (std::isnan(v)) continue;
      count += 1.0;
      low = std::min(low, v);
      high = std::max(high, v);
    }
    if (low == high) {  // one value: variance exactly 0 (a sum of scaled copies need not give it back)
      variance(j) = 0.0;
      column_mean(j) = low;
      continue;
    }
    const double inv_count = 1.0 / count;
    double mean = 0.0;
    for (Index i = 0; i < n; ++i) {
      const double v = column(i);
      if (!std::isnan(v)) mean += v * inv_count;
    }
    double m2 = 0.0;
    for (Index i = 0; i < n; ++i) {
      const double d = column(i) - mean;
      if (!std::isnan(d)) m2 += d * d;
    }
    variance(j) = m2 / count;
    column_mean(j) = mean;
  }
  Settings set{&o, mixture_ridge(variance, o), 0.0, p, {}};
  set.min_rows = mixture_min_component_rows(o, p);
  // A constant column (admitted only where the ridge rescues it) is measured
  // in the mean variance's unit, as its ridge is.
  const double mean_variance = variance.mean();
  set.inv_spread = variance.unaryExpr([&](double v) { return 1.0 / std::sqrt(v > 0.0 ? v : mean_variance); });

  std::unique_ptr<EmData> data;
  Eigen::MatrixXd imputed;  // the k-means++ start needs complete rows
  if (em_missing) {
    data = std::make_unique<IncompleteData>(xu);
    imputed = xu;
    for (Index j = 0; j < p; ++j)
      for (Index i = 0; i < n; ++i)
        if (std::isnan(imputed(i, j))) imputed(i, j) = column_mean(j);
  } else {
    data = std::make_unique<CompleteData>(xu, o.threads);
  }
  const DataView seed_view = em_missing ? make_view(imputed) : xu;

  // Every start runs short EM; the best goes on to the tolerance (the em-EM
  // strategy of Biernacki, Celeux & Govaert 2003). One start runs to the
  // tolerance at once. Progress: the short runs fill the first half.
  PortableRandom rng(o.seed);
  MixtureResult result;
  std::vector<CollapseEvent> events;
  std::unique_ptr<EmRun> best;
  const bool short_runs = o.restarts > 1;
  const double stage_share = short_runs ? 0.5 : 1.0;
  for (int s = 0; s < o.restarts; ++s) {
    const double from = stage_share * s / o.restarts, to = stage_share * (s + 1) / o.restarts;
    check_progress(o, "seeding", from);
    Eigen::MatrixXd t;
    if (s == 0 && o.initial_labels.size() > 0) {
      Eigen::VectorXi lab(n);
      for (Index i = 0; i < n; ++i) lab(i) = o.initial_labels(used[static_cast<std::size_t>(i)]);
      t = one_hot(lab, k_count);
    } else if (s == 0 && o.initial_responsibilities.size() > 0) {
      t.resize(n, k_count);
      for (Index i = 0; i < n; ++i) {
        t.row(i) = o.initial_responsibilities.row(used[static_cast<std::size_t>(i)]);
        const double sum = t.row(i).sum();
        if (!(sum > 0.0))
          throw Error(ErrorKind::Argument, "mixture: initial responsibilities of row " +
                                               std::to_string(used[static_cast<std::size_t>(i)]) + " sum to 0");
        t.row(i) /= sum;
      }
    } else {
      t = one_hot(kmeans_seed(seed_view, k_count, o.lloyd_steps, rng).labels, k_count);
    }
    MixtureModel provisional;
    if (em_missing) {
      provisional = provisional_missing_model(xu, t, o.structure);
      for (auto& c : provisional.covariances) c.diagonal() += set.ridge;
    }
    auto run = std::make_unique<EmRun>(*data, std::move(provisional), std::move(t), set, s, events);
    run->run(short_runs ? StopRule::ShortRun : StopRule::Converged, from, to);
    // A later start replaces the kept one only when it is higher by more than
    // rounding: starts that reach the same optimum in another component order
    // then keep the first, so tiny perturbations of the data do not relabel.
    if (!best || run->log_likelihood() > best->log_likelihood() + 1e-12 * std::abs(best->log_likelihood())) {
      best = std::move(run);
      result.best_start = s;
    }
  }
  if (short_runs) {
    best->resume();
    best->run(StopRule::Converged, 0.5, 1.0);
    // The kept start's later events follow the other starts' ones: back in start order.
    std::stable_sort(events.begin(), events.end(),
                     [](const CollapseEvent& a, const CollapseEvent& b) { return a.start < b.start; });
  }
  check_progress(o, "done", 1.0);

  StartOutcome kept = std::move(*best).finish();
  const Index k_final = kept.model.components();
  const double nan = std::numeric_limits<double>::quiet_NaN();
  result.responsibilities = Eigen::MatrixXd::Constant(n_input, k_final, nan);
  result.log_density = Eigen::VectorXd::Constant(n_input, nan);
  for (Index i = 0; i < n; ++i) {
    const Index row = used[static_cast<std::size_t>(i)];
    result.responsibilities.row(row) = kept.responsibilities.row(i);
    result.log_density(row) = kept.posterior.log_density(i);
  }
  result.labels = hard_labels(result.responsibilities);
  result.model = std::move(kept.model);
  result.log_likelihood = kept.trace.back();
  result.n_parameters = mixture_parameter_count(k_final, p, o.structure);
  // Schwarz (1978); Biernacki, Celeux & Govaert (2000).
  result.bic = mixture_bic(result.log_likelihood, result.n_parameters, n);
  result.icl = mixture_icl(result.bic, kept.posterior.sum_t_log_t);
  result.converged = kept.converged;
  result.iterations = kept.iterations;
  result.loglik_trace = std::move(kept.trace);
  result.collapses = std::move(events);
  result.rows_used = n;
  result.rows_dropped = n_input - n;
  result.regularisation_added = set.ridge;
  return result;
}

}  // namespace ellipsa::core
