// The single-process reference for the distributed EM and C-steps: the
// core's own iterations on all rows in one process, from the start model the
// MPI run was given (--start), with no MPI and not through the statistics
// path the driver uses:
//   mixture: core::fit_mixture with one start whose initial responsibilities
//     are the E-step of the start model (its first M-step is then the
//     driver's first), the same tolerance, iteration cap and regularisation,
//     plain EM (no acceleration) like the driver;
//   mcd: the start's location and scatter in the standardised coordinates of
//     core::fast_mcd, core C-steps to convergence (c_steps_to_convergence),
//     then the core's finish (consistency, small-sample factors, reweighting).
// Writes the estimate as JSON lines of numbers for test_mpi.py.
//
//   iterative_reference mixture|mcd START OUTPUT STRUCTURE TOLERANCE MAX_ITERATIONS FILE...
#include <cmath>
#include <cstdio>
#include <fstream>
#include <iterator>
#include <stdexcept>
#include <string>
#include <vector>

#include "core/mcd_common.hpp"
#include "core/mcd_small_sample.hpp"
#include "core/mixture_em.hpp"
#include "core/mixture_em_steps.hpp"
#include "csv_reader.hpp"
#include "ellipsa.h"

namespace core = ellipsa::core;

namespace {

void check(ellipsa_status s, const char* what) {
  if (s != ELLIPSA_OK) throw std::runtime_error(std::string(what) + ": " + ellipsa_last_error());
}

Eigen::MatrixXd read_rows(const std::vector<std::string>& files) {
  ellipsa::cli::CsvReader detect(files.at(0));
  const std::vector<std::string> columns = detect.selected_names();
  std::vector<double> v;
  const auto p = static_cast<Eigen::Index>(columns.size());
  for (const auto& f : files) {
    ellipsa::cli::CsvOptions o;
    o.columns = columns;
    ellipsa::cli::CsvReader reader(f, o);
    ellipsa::cli::CsvChunk chunk;
    while (reader.next_chunk(chunk, 65536))
      for (std::size_t i = 0; i < chunk.rows(); ++i) {  // complete rows, as the fits use
        const double* row = chunk.data() + i * chunk.cols();
        bool complete = true;
        for (std::size_t j = 0; j < chunk.cols(); ++j) complete = complete && !std::isnan(row[j]);
        if (complete) v.insert(v.end(), row, row + chunk.cols());
      }
  }
  const Eigen::Index n = static_cast<Eigen::Index>(v.size()) / p;
  return Eigen::Map<const Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>>(v.data(), n, p);
}

ellipsa_model* load_model(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  const std::string text((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  ellipsa_model* m = nullptr;
  check(ellipsa_model_load(&m, text.data(), static_cast<int64_t>(text.size())), "loading the start");
  return m;
}

void component(const ellipsa_model* m, int32_t k, Eigen::VectorXd& loc, Eigen::MatrixXd& s, double& w) {
  const Eigen::Index p = loc.size();
  Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor> rm(p, p);
  check(ellipsa_model_component(loc.data(), p, rm.data(), p * p, &w, m, k), "component");
  s = rm;
}

void put(std::FILE* f, const char* name, const Eigen::MatrixXd& a) {
  std::fprintf(f, "%s", name);
  for (Eigen::Index i = 0; i < a.rows(); ++i)
    for (Eigen::Index j = 0; j < a.cols(); ++j) std::fprintf(f, " %.17g", a(i, j));
  std::fprintf(f, "\n");
}

}  // namespace

int main(int argc, char** argv) {
  try {
    if (argc < 8)
      throw std::runtime_error("usage: iterative_reference mixture|mcd START OUTPUT STRUCTURE TOL MAXIT FILE...");
    const std::string method = argv[1], output = argv[3], structure = argv[4];
    const double tolerance = std::stod(argv[5]);
    const int max_iterations = std::stoi(argv[6]);
    const Eigen::MatrixXd x = read_rows(std::vector<std::string>(argv + 7, argv + argc));
    const Eigen::Index n = x.rows(), p = x.cols();
    ellipsa_model* start = load_model(argv[2]);
    std::FILE* f = std::fopen(output.c_str(), "w");
    if (!f) throw std::runtime_error("cannot write " + output);
    if (method == "mixture") {
      int32_t k_count = 0;
      check(ellipsa_model_describe(nullptr, nullptr, nullptr, &k_count, start), "describe");
      core::MixtureModel m0;
      m0.structure = structure == "full"       ? core::CovarianceStructure::Full
                     : structure == "diagonal" ? core::CovarianceStructure::Diagonal
                     : structure == "tied"     ? core::CovarianceStructure::Tied
                                               : core::CovarianceStructure::Spherical;
      m0.weights.resize(k_count);
      m0.means.resize(k_count, p);
      for (int32_t k = 0; k < k_count; ++k) {
        Eigen::VectorXd loc(p);
        Eigen::MatrixXd s;
        double w = 0.0;
        component(start, k, loc, s, w);
        m0.weights(k) = w;
        m0.means.row(k) = loc.transpose();
        m0.covariances.push_back(s);
      }
      Eigen::MatrixXd t0;
      core::mixture_e_step_complete(m0, core::factor_components(m0), core::make_view(x), t0, 1);
      core::MixtureOptions o;
      o.components = k_count;
      o.structure = m0.structure;
      o.restarts = 1;
      o.tolerance = tolerance;
      o.max_iterations = max_iterations;
      o.regularisation = 1e-6;  // the C interface's default, as the driver's M-step uses
      o.accelerate = false;     // the driver runs plain EM: one M-step per exchange of statistics
      o.initial_responsibilities = t0;
      const core::MixtureResult r = core::fit_mixture(core::make_view(x), o);
      std::fprintf(f, "log_likelihood %.17g\niterations %d\nconverged %d\n", r.log_likelihood, r.iterations,
                   r.converged ? 1 : 0);
      put(f, "weights", r.model.weights.transpose());
      put(f, "means", r.model.means);
      for (const auto& c : r.model.covariances) put(f, "covariance", c);
    } else {
      Eigen::VectorXd loc(p);
      Eigen::MatrixXd s;
      double w = 0.0;
      component(start, 0, loc, s, w);
      const core::mcd_detail::Standardised st =
          core::mcd_detail::standardise(core::make_view(x), core::mcd_detail::ColumnScale::Mad);
      core::mcd_detail::SubsetFit fit;
      fit.mean = (loc - st.centre).cwiseQuotient(st.scale);
      fit.cov = st.scale.cwiseInverse().asDiagonal() * s * st.scale.cwiseInverse().asDiagonal();
      core::mcd_detail::factor_fit(fit);
      const Eigen::Index h = core::mcd_subset_size(n, p, 0.5);
      const int steps = core::mcd_detail::c_steps_to_convergence(st.z, h, fit, 200);
      core::mcd_detail::FinishRule rule;
      rule.small_sample = core::small_sample_factors(core::McdFamily::Fast, core::SmallSample::Both, n, p, 0.5);
      const core::RobustFit r = core::mcd_detail::finish_fit(core::make_view(x), st, fit, h, rule);
      std::fprintf(f, "csteps %d\n", steps);
      put(f, "location", r.location.transpose());
      put(f, "scatter", r.scatter);
      put(f, "raw_location", r.raw_location.transpose());
      put(f, "raw_scatter", r.raw_scatter);
    }
    std::fclose(f);
    ellipsa_model_destroy(start);
    return 0;
  } catch (const std::exception& e) {
    std::fprintf(stderr, "iterative_reference: %s\n", e.what());
    return 1;
  }
}
