// What rank 0 says when a fit is done: a line for people, or JSON (--json)
// with the timings and the bytes communicated.
#include <cmath>
#include <sstream>

#include "mpi_fit_methods.hpp"

namespace ellipsa::mpi {

void emit_fit_summary(const Comm& comm, const FitArgs& a, const std::vector<std::string>& columns, const FitReport& r) {
  int64_t used = 0, dropped = 0;
  cli::check(ellipsa_model_rows(&used, &dropped, r.model.get()), "reading the model");
  nlohmann::json j{{"method", a.fit.method},
                   {"ranks", comm.size()},
                   {"rows_read", r.rows_read},
                   {"rows_used", used},
                   {"rows_dropped", dropped},
                   {"columns", columns},
                   {"reductions", r.reductions},
                   {"bytes_per_reduction", r.bytes_per_reduction},
                   {"iterations_distributed", r.iterations},
                   {"seconds",
                    {{"read", r.read_seconds},
                     {"start", r.start_seconds},
                     {"reduce", r.reduce_seconds},
                     {"fit", r.fit_seconds},
                     {"total", r.total_seconds}}},
                   {"output", a.output}};
  for (const char* name : {"shrinkage_intensity", "log_likelihood", "iterations", "converged", "log_det"}) {
    double v = 0.0;
    if (ellipsa_model_diagnostic(&v, r.model.get(), name) == ELLIPSA_OK && std::isfinite(v)) j[name] = v;
  }
  std::ostringstream human;
  human << "fitted " << a.fit.method << " on " << used << " of " << r.rows_read << " rows across " << comm.size()
        << " ranks (" << r.reductions << " reductions of " << r.bytes_per_reduction << " bytes); model written to "
        << a.output << "\n";
  cli::emit_summary(a.common.out, human.str(), j);
}

}  // namespace ellipsa::mpi
