#include "study_cells.hpp"

#include <cmath>
#include <memory>
#include <stdexcept>
#include <vector>

namespace ellipsa::calibration {
namespace {

struct OptionsDeleter {
  void operator()(ellipsa_fit_options* o) const { ellipsa_fit_options_destroy(o); }
};
struct ModelDeleter {
  void operator()(ellipsa_model* m) const { ellipsa_model_destroy(m); }
};
using Options = std::unique_ptr<ellipsa_fit_options, OptionsDeleter>;
using Model = std::unique_ptr<ellipsa_model, ModelDeleter>;

void check(ellipsa_status st, const char* what) {
  if (st != ELLIPSA_OK)
    throw std::runtime_error(std::string(what) + ": " + ellipsa_status_string(st) + ": " + ellipsa_last_error());
}

bool uses_seed(ellipsa_method m) { return m == ELLIPSA_METHOD_MCD || m == ELLIPSA_METHOD_MIXTURE; }
bool is_mcd_family(ellipsa_method m) {
  return m == ELLIPSA_METHOD_MCD || m == ELLIPSA_METHOD_DETMCD || m == ELLIPSA_METHOD_MRCD;
}

Options make_options(const CellSettings& s, uint64_t replicate_seed) {
  ellipsa_fit_options* raw = nullptr;
  check(ellipsa_fit_options_create(&raw, s.method), "options");
  Options o(raw);
  if (uses_seed(s.method)) check(ellipsa_fit_options_set_seed(o.get(), replicate_seed), "seed");
  if (s.correction >= 0 && is_mcd_family(s.method))
    check(ellipsa_fit_options_set_small_sample(o.get(), s.correction), "small-sample correction");
  if (s.consistency >= 0 && (s.method == ELLIPSA_METHOD_MCD || s.method == ELLIPSA_METHOD_DETMCD))
    check(ellipsa_fit_options_set_consistency(o.get(), s.consistency), "consistency rule");
  return o;
}

// Flags among rows scored against the model; their distances appended to d2 when given.
int64_t count_flags(const ellipsa_model* model, const std::vector<double>& x, int64_t rows, int64_t p,
                    const CellSettings& s, int32_t reference, std::vector<double>* d2 = nullptr) {
  std::vector<int32_t> flag(static_cast<size_t>(rows));
  std::vector<double> dist(static_cast<size_t>(rows));
  ellipsa_scores sc = ELLIPSA_SCORES_INIT;
  sc.flag = flag.data();
  sc.squared_distance = dist.data();
  const ellipsa_matrix m = ellipsa_matrix_row_major(x.data(), rows, p);
  check(ellipsa_model_score_v2(&sc, model, &m, s.level, reference), "score");
  if (d2 != nullptr) d2->insert(d2->end(), dist.begin(), dist.end());
  int64_t k = 0;
  for (int32_t f : flag) k += f == 1;
  return k;
}

struct Replicates {
  CellResult result;
  std::vector<double> d2;
};

Replicates run_replicates(Bulk bulk, int64_t n, int64_t p, Use use, int64_t replicates, const CellSettings& s,
                          bool keep_d2);

}  // namespace

const char* use_name(Use u) { return u == Use::Self ? "self" : "fresh"; }

bool method_applies(ellipsa_method m, int64_t n, int64_t p) {
  switch (m) {
    case ELLIPSA_METHOD_LEDOIT_WOLF:
    case ELLIPSA_METHOD_OAS: return n >= 2;
    case ELLIPSA_METHOD_MRCD: return 2 * p >= n;  // regularisation is for p close to or above n
    default: return n > p + 1;
  }
}

CellResult run_cell(Bulk bulk, int64_t n, int64_t p, Use use, int64_t replicates, const CellSettings& s) {
  return run_replicates(bulk, n, p, use, replicates, s, false).result;
}

std::vector<double> pooled_distances(Bulk bulk, int64_t n, int64_t p, Use use, int64_t replicates,
                                     const CellSettings& s) {
  return run_replicates(bulk, n, p, use, replicates, s, true).d2;
}

namespace {

Replicates run_replicates(Bulk bulk, int64_t n, int64_t p, Use use, int64_t replicates, const CellSettings& s,
                          bool keep_d2) {
  Replicates out;
  CellResult& r = out.result;
  std::vector<double>* d2 = keep_d2 ? &out.d2 : nullptr;
  std::vector<double> rates;
  for (int64_t rep = 0; rep < replicates; ++rep) {
    const uint64_t seed = cell_seed(s.seed, static_cast<uint64_t>(bulk), static_cast<uint64_t>(n),
                                    static_cast<uint64_t>(p), static_cast<uint64_t>(rep));
    Stream stream(seed);
    const std::vector<double> x = draw(bulk, n, p, stream);
    const Options opt = make_options(s, seed);
    ellipsa_model* raw = nullptr;
    const ellipsa_matrix view = ellipsa_matrix_row_major(x.data(), n, p);
    const ellipsa_status st = ellipsa_model_fit(&raw, &view, opt.get());
    ++r.replicates;
    if (st >= ELLIPSA_ERR_DATA) {  // singular, exact fit ...: the method cannot use this sample
      ++r.failed;
      continue;
    }
    check(st, "fit");
    const Model model(raw);
    int64_t rows = n, flags = 0;
    if (use == Use::Self) {
      const int32_t ref = s.reference >= 0 ? s.reference : ELLIPSA_REFERENCE_FITTING_ROWS;
      flags = count_flags(model.get(), x, n, p, s, ref, d2);
    } else {
      rows = s.fresh_rows;
      const std::vector<double> fresh = draw(bulk, rows, p, stream);
      const int32_t ref = s.reference >= 0 ? s.reference : ELLIPSA_REFERENCE_MODEL;
      flags = count_flags(model.get(), fresh, rows, p, s, ref, d2);
    }
    r.rows += rows;
    r.flagged += flags;
    rates.push_back(static_cast<double>(flags) / static_cast<double>(rows));
  }
  if (rates.size() > 1) {
    double mean = 0.0, ss = 0.0;
    for (double v : rates) mean += v;
    mean /= static_cast<double>(rates.size());
    for (double v : rates) ss += (v - mean) * (v - mean);
    r.standard_error = std::sqrt(ss / static_cast<double>(rates.size() - 1) / static_cast<double>(rates.size()));
  }
  return out;
}

}  // namespace

}  // namespace ellipsa::calibration
