// E-step statistics and the M-step from them (ellipsa_em_statistics_*):
// checked against a textbook EM step written out here in plain loops
// (Dempster, Laird & Rubin 1977; the update formulas as in Bishop 2006,
// "Pattern Recognition and Machine Learning", eqs. 9.23-9.27, from memory),
// against the log-likelihood ellipsa_model_fit reports for its own
// parameters, and for every status the header promises.
#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <sstream>
#include <cstring>
#include <memory>
#include <random>
#include <string>
#include <vector>

#include "capi_test_util.hpp"

using namespace capi_test;

namespace {

// The demo data's complete rows in the named columns ("NA" cells mark missing values).
std::vector<double> demo_complete_rows(const std::vector<std::string>& names, int64_t* rows) {
  return read_complete_rows(ELLIPSA_EXAMPLES_DIR "/moulding_line.csv", names, rows);
}

struct StatsFree {
  void operator()(ellipsa_em_statistics* s) const { ellipsa_em_statistics_destroy(s); }
};
using Stats = std::unique_ptr<ellipsa_em_statistics, StatsFree>;

// Two clusters in the plane, 300 rows (seeded).
std::vector<double> two_clusters(int64_t n, uint64_t seed) {
  std::mt19937_64 gen(seed);
  std::normal_distribution<double> z(0.0, 1.0);
  std::vector<double> x;
  for (int64_t i = 0; i < n; ++i) {
    const bool second = i % 3 == 0;
    const double a = z(gen), b = z(gen);
    x.push_back(second ? 6.0 + 0.5 * a : 1.0 * a);
    x.push_back(second ? 2.0 + 0.3 * a + 0.4 * b : 0.8 * a + 0.6 * b);
  }
  return x;
}

Model fit_mixture(const std::vector<double>& x, int64_t n, int64_t p, int32_t k, const char* structure) {
  auto o = options(ELLIPSA_METHOD_MIXTURE);
  EXPECT_EQ(ellipsa_fit_options_set_components(o.get(), k, k), ELLIPSA_OK);
  int32_t s = 0;
  EXPECT_EQ(ellipsa_structure_from_name(&s, structure), ELLIPSA_OK);
  EXPECT_EQ(ellipsa_fit_options_set_structure(o.get(), s), ELLIPSA_OK);
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), n, p);
  ellipsa_model* m = nullptr;
  EXPECT_EQ(ellipsa_model_fit(&m, &v, o.get()), ELLIPSA_OK) << ellipsa_last_error();
  return Model(m);
}

Stats stats_of(const ellipsa_model* parameters, const std::vector<double>& x, int64_t p,
               const std::vector<int64_t>& cuts) {
  ellipsa_em_statistics* s = nullptr;
  EXPECT_EQ(ellipsa_em_statistics_create(&s, parameters), ELLIPSA_OK) << ellipsa_last_error();
  for (size_t c = 0; c + 1 < cuts.size(); ++c) {
    const ellipsa_matrix v = ellipsa_matrix_row_major(x.data() + cuts[c] * p, cuts[c + 1] - cuts[c], p);
    EXPECT_EQ(ellipsa_em_statistics_add(s, &v), ELLIPSA_OK) << ellipsa_last_error();
  }
  return Stats(s);
}

std::string bytes_of(const ellipsa_em_statistics* s) {
  char* b = nullptr;
  int64_t n = 0;
  EXPECT_EQ(ellipsa_em_statistics_save(&b, &n, s), ELLIPSA_OK) << ellipsa_last_error();
  std::string out(b, static_cast<size_t>(n));
  ellipsa_text_free(b);
  return out;
}

struct Component2 {
  double w, m[2], s[4];
};
std::vector<Component2> components(const ellipsa_model* m) {
  int32_t k = 0;
  EXPECT_EQ(ellipsa_model_describe(nullptr, nullptr, nullptr, &k, m), ELLIPSA_OK);
  std::vector<Component2> out(static_cast<size_t>(k));
  for (int32_t c = 0; c < k; ++c)
    EXPECT_EQ(ellipsa_model_component(out[c].m, 2, out[c].s, 4, &out[c].w, m, c), ELLIPSA_OK);
  return out;
}

// One textbook EM step for a full-covariance mixture in two dimensions, no
// regularisation: responsibilities from the 2 x 2 Gaussian densities, then
// weights, means and covariances (divisor: the summed responsibility).
std::vector<Component2> textbook_step(const std::vector<Component2>& c, const std::vector<double>& x, double* loglik) {
  const size_t n = x.size() / 2, k = c.size();
  std::vector<double> t(n * k);
  *loglik = 0.0;
  for (size_t i = 0; i < n; ++i) {
    double total = 0.0;
    for (size_t j = 0; j < k; ++j) {
      const double* s = c[j].s;
      const double det = s[0] * s[3] - s[1] * s[2];
      const double a = x[2 * i] - c[j].m[0], b = x[2 * i + 1] - c[j].m[1];
      const double q = (s[3] * a * a - 2.0 * s[1] * a * b + s[0] * b * b) / det;
      t[i * k + j] = c[j].w * std::exp(-0.5 * q) / (2.0 * M_PI * std::sqrt(det));
      total += t[i * k + j];
    }
    for (size_t j = 0; j < k; ++j) t[i * k + j] /= total;
    *loglik += std::log(total);
  }
  std::vector<Component2> next(k);
  for (size_t j = 0; j < k; ++j) {
    double nk = 0.0, m0 = 0.0, m1 = 0.0;
    for (size_t i = 0; i < n; ++i) {
      nk += t[i * k + j];
      m0 += t[i * k + j] * x[2 * i];
      m1 += t[i * k + j] * x[2 * i + 1];
    }
    m0 /= nk;
    m1 /= nk;
    double s00 = 0.0, s01 = 0.0, s11 = 0.0;
    for (size_t i = 0; i < n; ++i) {
      const double a = x[2 * i] - m0, b = x[2 * i + 1] - m1;
      s00 += t[i * k + j] * a * a;
      s01 += t[i * k + j] * a * b;
      s11 += t[i * k + j] * b * b;
    }
    next[j] = {nk / static_cast<double>(n), {m0, m1}, {s00 / nk, s01 / nk, s01 / nk, s11 / nk}};
  }
  return next;
}

Options no_regularisation() {
  auto o = options(ELLIPSA_METHOD_MIXTURE);
  EXPECT_EQ(ellipsa_fit_options_set_regularisation(o.get(), 0.0), ELLIPSA_OK);
  return o;
}

}  // namespace

TEST(EmStatistics, MStepEqualsTheTextbookEmStep) {
  const int64_t n = 300, p = 2;
  const auto x = two_clusters(n, 7);
  // Parameters off the optimum: a fit stopped after its first iterations.
  auto o = options(ELLIPSA_METHOD_MIXTURE);
  ASSERT_EQ(ellipsa_fit_options_set_components(o.get(), 2, 2), ELLIPSA_OK);
  ASSERT_EQ(ellipsa_fit_options_set_iterations(o.get(), 1, 1e-6), ELLIPSA_OK);
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), n, p);
  ellipsa_model* raw = nullptr;
  ASSERT_EQ(ellipsa_model_fit(&raw, &v, o.get()), ELLIPSA_OK) << ellipsa_last_error();
  Model start(raw);
  double loglik = 0.0;
  const auto expected = textbook_step(components(start.get()), x, &loglik);
  Stats s = stats_of(start.get(), x, p, {0, 100, 101, 300});
  double ll = 0.0;
  int64_t rows = 0, skipped = -1;
  ASSERT_EQ(ellipsa_em_statistics_summary(&ll, &rows, &skipped, s.get()), ELLIPSA_OK);
  EXPECT_EQ(rows, n);
  EXPECT_EQ(skipped, 0);
  EXPECT_NEAR(ll, loglik, 1e-10 * std::abs(loglik));  // textbook log-likelihood
  auto reg0 = no_regularisation();
  ellipsa_model* next = nullptr;
  ASSERT_EQ(ellipsa_em_statistics_m_step(&next, s.get(), reg0.get()), ELLIPSA_OK) << ellipsa_last_error();
  Model nm(next);
  const auto got = components(nm.get());
  ASSERT_EQ(got.size(), expected.size());
  for (size_t j = 0; j < got.size(); ++j) {  // textbook M-step, to rounding
    EXPECT_NEAR(got[j].w, expected[j].w, 1e-12);
    for (int d = 0; d < 2; ++d) EXPECT_NEAR(got[j].m[d], expected[j].m[d], 1e-11);
    for (int d = 0; d < 4; ++d) EXPECT_NEAR(got[j].s[d], expected[j].s[d], 1e-11);
  }
}

TEST(EmStatistics, MStepAddsTheRidgeOfEachColumn) {
  // The header's promise (ellipsa_fit_options_set_regularisation()): entry j
  // of every covariance diagonal gets the regularisation times the variance
  // of column j over the rows added (divisor their count); under the
  // spherical structure every entry gets it times the mean column variance.
  // The second column is in units 1e6 times smaller, so a ridge from the mean
  // variance would differ from the per-column one by a factor of about 1e12.
  // Reference: the column variances computed here by two-pass sums.
  const int64_t n = 300, p = 2;
  auto x = two_clusters(n, 5);
  for (int64_t i = 0; i < n; ++i) x[static_cast<size_t>(i * p + 1)] *= 1e-6;
  double var[2] = {0.0, 0.0};
  for (int64_t j = 0; j < p; ++j) {
    double mean = 0.0;
    for (int64_t i = 0; i < n; ++i) mean += x[static_cast<size_t>(i * p + j)];
    mean /= static_cast<double>(n);
    for (int64_t i = 0; i < n; ++i) {
      const double d = x[static_cast<size_t>(i * p + j)] - mean;
      var[j] += d * d;
    }
    var[j] /= static_cast<double>(n);
  }
  const double reg = 0.25;  // large, so the ridge stands far above rounding
  for (const char* structure : {"full", "diagonal", "tied", "spherical"}) {
    SCOPED_TRACE(structure);
    const Model m = fit_mixture(x, n, p, 2, structure);
    Stats st = stats_of(m.get(), x, p, {0, 100, n});
    int32_t code = 0;
    ASSERT_EQ(ellipsa_structure_from_name(&code, structure), ELLIPSA_OK);
    auto with = options(ELLIPSA_METHOD_MIXTURE), without = no_regularisation();
    ASSERT_EQ(ellipsa_fit_options_set_structure(with.get(), code), ELLIPSA_OK);
    ASSERT_EQ(ellipsa_fit_options_set_structure(without.get(), code), ELLIPSA_OK);
    ASSERT_EQ(ellipsa_fit_options_set_regularisation(with.get(), reg), ELLIPSA_OK);
    ellipsa_model *a = nullptr, *b = nullptr;
    ASSERT_EQ(ellipsa_em_statistics_m_step(&a, st.get(), with.get()), ELLIPSA_OK) << ellipsa_last_error();
    ASSERT_EQ(ellipsa_em_statistics_m_step(&b, st.get(), without.get()), ELLIPSA_OK) << ellipsa_last_error();
    Model ma(a), mb(b);
    const auto ca = components(ma.get()), cb = components(mb.get());
    const bool spherical = std::string(structure) == "spherical";
    for (size_t k = 0; k < ca.size(); ++k)
      for (int j = 0; j < 2; ++j) {
        const double want = reg * (spherical ? 0.5 * (var[0] + var[1]) : var[j]);
        // The difference of two M-steps on the same statistics: rounding of
        // the covariance entries (about var[j] * 1e-16) against a ridge a
        // quarter of var[j].
        EXPECT_NEAR(ca[k].s[j * 3] - cb[k].s[j * 3], want, 1e-12 * want) << "component " << k << " column " << j;
        EXPECT_EQ(ca[k].s[1], cb[k].s[1]);  // off the diagonal nothing is added
      }
  }
}

TEST(EmStatistics, LogLikelihoodOfAFitsParametersIsTheFitsOwn) {
  // ellipsa_model_fit reports the log-likelihood of its final parameters.
  int64_t n = 0;
  const auto x = demo_complete_rows({"melt_temp_C", "cooling_water_C", "injection_pressure_bar", "cap_mass_g"}, &n);
  const Model m = fit_mixture(x, n, 4, 2, "full");
  Stats s = stats_of(m.get(), x, 4, {0, 150, 400, n});
  double ll = 0.0;
  ASSERT_EQ(ellipsa_em_statistics_summary(&ll, nullptr, nullptr, s.get()), ELLIPSA_OK);
  EXPECT_NEAR(ll, diagnostic(m.get(), "log_likelihood"), 1e-9 * std::abs(ll));
}

TEST(EmStatistics, EveryStructureStepsAndPiecesMergeToOneChunk) {
  const int64_t n = 300, p = 2;
  const auto x = two_clusters(n, 11);
  for (const char* structure : {"full", "diagonal", "tied", "spherical"}) {
    const Model m = fit_mixture(x, n, p, 2, structure);
    Stats whole = stats_of(m.get(), x, p, {0, n});
    Stats a = stats_of(m.get(), x, p, {0, 120});
    Stats b = stats_of(m.get(), x, p, {120, 300});
    // Through bytes, as between processes.
    ellipsa_em_statistics* loaded = nullptr;
    const std::string bb = bytes_of(b.get());
    ASSERT_EQ(ellipsa_em_statistics_load(&loaded, bb.data(), static_cast<int64_t>(bb.size()), m.get()), ELLIPSA_OK)
        << ellipsa_last_error();
    Stats lb(loaded);
    EXPECT_EQ(bytes_of(lb.get()), bb) << structure;  // exact round trip
    ASSERT_EQ(ellipsa_em_statistics_merge(a.get(), lb.get()), ELLIPSA_OK);
    auto o = options(ELLIPSA_METHOD_MIXTURE);
    int32_t s = 0;
    ASSERT_EQ(ellipsa_structure_from_name(&s, structure), ELLIPSA_OK);
    ASSERT_EQ(ellipsa_fit_options_set_structure(o.get(), s), ELLIPSA_OK);
    ellipsa_model *n1 = nullptr, *n2 = nullptr;
    ASSERT_EQ(ellipsa_em_statistics_m_step(&n1, whole.get(), o.get()), ELLIPSA_OK) << ellipsa_last_error();
    ASSERT_EQ(ellipsa_em_statistics_m_step(&n2, a.get(), o.get()), ELLIPSA_OK) << ellipsa_last_error();
    Model m1(n1), m2(n2);
    // A converged fit is (nearly) a fixed point of its own EM step, and the
    // merged pieces give the one-chunk step to rounding.
    const auto c0 = components(m.get()), c1 = components(m1.get()), c2 = components(m2.get());
    for (size_t j = 0; j < c0.size(); ++j) {
      EXPECT_NEAR(c1[j].w, c2[j].w, 1e-13) << structure;
      for (int d = 0; d < 2; ++d) {
        EXPECT_NEAR(c1[j].m[d], c2[j].m[d], 1e-12) << structure;
        EXPECT_NEAR(c1[j].m[d], c0[j].m[d], 1e-3) << structure;
      }
      for (int d = 0; d < 4; ++d) EXPECT_NEAR(c1[j].s[d], c2[j].s[d], 1e-12) << structure;
    }
    if (std::string(structure) == "diagonal") {
      const auto c = components(m1.get());
      EXPECT_EQ(c[0].s[1], 0.0);  // the structure is respected
    }
  }
}

TEST(EmStatistics, FinishedModelCarriesTheDiagnostics) {
  const int64_t n = 300, p = 2;
  const auto x = two_clusters(n, 3);
  const Model m = fit_mixture(x, n, p, 2, "full");
  Stats s = stats_of(m.get(), x, p, {0, n});
  auto o = options(ELLIPSA_METHOD_MIXTURE);
  ellipsa_model* out = nullptr;
  ASSERT_EQ(ellipsa_em_statistics_model(&out, s.get(), -5.5, 1, 17, o.get()), ELLIPSA_OK) << ellipsa_last_error();
  Model f(out);
  EXPECT_EQ(diagnostic(f.get(), "iterations"), 17.0);
  EXPECT_EQ(diagnostic(f.get(), "converged"), 1.0);
  EXPECT_EQ(diagnostic(f.get(), "log_density_cutoff"), -5.5);
  // BIC = -2 logL + k log n (Schwarz 1978) with k = 2 - 1 + 2*2 + 2*3 = 11.
  const double ll = diagnostic(f.get(), "log_likelihood");
  EXPECT_NEAR(diagnostic(f.get(), "bic"), -2.0 * ll + 11.0 * std::log(300.0), 1e-9 * std::abs(ll));
  EXPECT_NEAR(ll, diagnostic(m.get(), "log_likelihood"), 1e-9 * std::abs(ll));
  std::string text = save(f.get());
  Model back;
  ASSERT_EQ(load(text, &back), ELLIPSA_OK) << ellipsa_last_error();  // a model file like any other
}

TEST(EmStatistics, StatusesOfTheHeader) {
  const int64_t n = 300, p = 2;
  const auto x = two_clusters(n, 5);
  const Model m = fit_mixture(x, n, p, 2, "full");
  const Model other = fit_mixture(x, n, p, 3, "full");
  ellipsa_em_statistics* s = nullptr;
  EXPECT_EQ(ellipsa_em_statistics_create(nullptr, m.get()), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_em_statistics_create(&s, nullptr), ELLIPSA_ERR_NULL);
  EXPECT_EQ(s, nullptr);
  {
    auto g = options(ELLIPSA_METHOD_CLASSICAL);
    const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), n, p);
    ellipsa_model* gm = nullptr;
    ASSERT_EQ(ellipsa_model_fit(&gm, &v, g.get()), ELLIPSA_OK);
    Model gauss(gm);
    EXPECT_EQ(ellipsa_em_statistics_create(&s, gauss.get()), ELLIPSA_ERR_ARGUMENT);
    EXPECT_NE(std::string(ellipsa_last_error()).find("mixture"), std::string::npos);
  }
  ellipsa_em_statistics_destroy(nullptr);  // no-op
  Stats a = stats_of(m.get(), x, p, {0, n});
  Stats b = stats_of(other.get(), x, p, {0, n});
  // add: shape, infinite value (nothing added), missing values skipped and counted
  const std::vector<double> three(6, 1.0);
  const ellipsa_matrix w3 = ellipsa_matrix_row_major(three.data(), 2, 3);
  EXPECT_EQ(ellipsa_em_statistics_add(a.get(), &w3), ELLIPSA_ERR_SHAPE);
  EXPECT_EQ(ellipsa_em_statistics_add(nullptr, &w3), ELLIPSA_ERR_NULL);
  std::vector<double> bad = {1.0, 2.0, INFINITY, 0.0};
  const ellipsa_matrix wb = ellipsa_matrix_row_major(bad.data(), 2, 2);
  EXPECT_EQ(ellipsa_em_statistics_add(a.get(), &wb), ELLIPSA_ERR_DATA);
  bad = {1.0, 2.0, NAN, 0.0};
  EXPECT_EQ(ellipsa_em_statistics_add(a.get(), &wb), ELLIPSA_OK);
  int64_t rows = 0, skipped = 0;
  ASSERT_EQ(ellipsa_em_statistics_summary(nullptr, &rows, &skipped, a.get()), ELLIPSA_OK);
  EXPECT_EQ(rows, n + 1);
  EXPECT_EQ(skipped, 1);
  EXPECT_EQ(ellipsa_em_statistics_summary(nullptr, nullptr, nullptr, nullptr), ELLIPSA_ERR_NULL);
  // merge: same handle, other parameters
  EXPECT_EQ(ellipsa_em_statistics_merge(a.get(), a.get()), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_em_statistics_merge(a.get(), b.get()), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_em_statistics_merge(nullptr, b.get()), ELLIPSA_ERR_NULL);
  // load: length, K of other parameters, a changed byte, parameters that differ in one bit
  const std::string bytes = bytes_of(a.get());
  EXPECT_EQ(ellipsa_em_statistics_load(&s, bytes.data(), 0, m.get()), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_em_statistics_load(&s, bytes.data(), static_cast<int64_t>(bytes.size()), other.get()),
            ELLIPSA_ERR_FORMAT);
  std::string changed = bytes;
  changed[60] ^= 1;
  EXPECT_EQ(ellipsa_em_statistics_load(&s, changed.data(), static_cast<int64_t>(changed.size()), m.get()),
            ELLIPSA_ERR_FORMAT);
  EXPECT_EQ(ellipsa_em_statistics_load(&s, bytes.data(), static_cast<int64_t>(bytes.size()) - 1, m.get()),
            ELLIPSA_ERR_FORMAT);
  {
    Model m_other;
    ASSERT_EQ(load(save(fit_mixture(x, n, p, 2, "full").get()), &m_other), ELLIPSA_OK);
    // The same fit again is the same parameters: loads.
    ASSERT_EQ(ellipsa_em_statistics_load(&s, bytes.data(), static_cast<int64_t>(bytes.size()), m_other.get()),
              ELLIPSA_OK)
        << ellipsa_last_error();
    ellipsa_em_statistics_destroy(s);
    s = nullptr;
    Stats c = stats_of(fit_mixture(two_clusters(n, 6), n, p, 2, "full").get(), x, p, {0, n});
    const std::string cb = bytes_of(c.get());
    EXPECT_EQ(ellipsa_em_statistics_load(&s, cb.data(), static_cast<int64_t>(cb.size()), m.get()), ELLIPSA_ERR_FORMAT);
    EXPECT_NE(std::string(ellipsa_last_error()).find("other parameters"), std::string::npos) << ellipsa_last_error();
  }
  // m_step and model: options of another method or structure, EM over missing values
  ellipsa_model* out = nullptr;
  auto classical = options(ELLIPSA_METHOD_CLASSICAL);
  EXPECT_EQ(ellipsa_em_statistics_m_step(&out, a.get(), classical.get()), ELLIPSA_ERR_ARGUMENT);
  auto diag = options(ELLIPSA_METHOD_MIXTURE);
  ASSERT_EQ(ellipsa_fit_options_set_structure(diag.get(), ELLIPSA_STRUCTURE_DIAGONAL), ELLIPSA_OK);
  EXPECT_EQ(ellipsa_em_statistics_m_step(&out, a.get(), diag.get()), ELLIPSA_ERR_ARGUMENT);
  auto em = options(ELLIPSA_METHOD_MIXTURE);
  ASSERT_EQ(ellipsa_fit_options_set_missing(em.get(), ELLIPSA_MISSING_EM), ELLIPSA_OK);
  EXPECT_EQ(ellipsa_em_statistics_m_step(&out, a.get(), em.get()), ELLIPSA_ERR_ARGUMENT);
  auto mix = options(ELLIPSA_METHOD_MIXTURE);
  EXPECT_EQ(ellipsa_em_statistics_m_step(nullptr, a.get(), mix.get()), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_em_statistics_model(&out, a.get(), NAN, 1, 1, mix.get()), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_em_statistics_model(&out, a.get(), 0.0, 2, 1, mix.get()), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_em_statistics_model(&out, a.get(), 0.0, 1, -1, mix.get()), ELLIPSA_ERR_ARGUMENT);
  Stats empty = stats_of(m.get(), x, p, {0, 0});
  EXPECT_EQ(ellipsa_em_statistics_model(&out, empty.get(), 0.0, 1, 1, mix.get()), ELLIPSA_ERR_DATA);
  EXPECT_EQ(ellipsa_em_statistics_m_step(&out, empty.get(), mix.get()), ELLIPSA_ERR_DATA);
  EXPECT_EQ(out, nullptr);
}

TEST(EmStatistics, ACollapsingComponentIsNamed) {
  // Three components on data with two clusters, statistics of a few rows of
  // one cluster only: one component receives (almost) no weight.
  const int64_t n = 300, p = 2;
  const auto x = two_clusters(n, 9);
  const Model m = fit_mixture(x, n, p, 3, "full");
  std::vector<double> few;
  for (int64_t i = 1; i < n && few.size() < 16; ++i)
    if (i % 3 != 0) few.insert(few.end(), {x[2 * i], x[2 * i + 1]});
  Stats s = stats_of(m.get(), few, p, {0, 8});
  auto o = options(ELLIPSA_METHOD_MIXTURE);
  ellipsa_model* out = nullptr;
  const ellipsa_status st = ellipsa_em_statistics_m_step(&out, s.get(), o.get());
  // 8 rows, 17 free parameters of a 3-component full mixture in 2 dimensions.
  EXPECT_EQ(st, ELLIPSA_ERR_DATA) << ellipsa_last_error();
  // All rows of the first cluster: the component of the other cluster collapses.
  std::vector<double> one;
  for (int64_t i = 0; i < n; ++i)
    if (i % 3 != 0) one.insert(one.end(), {x[2 * i], x[2 * i + 1]});
  const auto rows = static_cast<int64_t>(one.size() / 2);
  Stats u = stats_of(m.get(), one, p, {0, rows});
  EXPECT_EQ(ellipsa_em_statistics_m_step(&out, u.get(), o.get()), ELLIPSA_NUM_SINGULAR) << ellipsa_last_error();
  EXPECT_NE(std::string(ellipsa_last_error()).find("collapsed"), std::string::npos) << ellipsa_last_error();
  EXPECT_EQ(out, nullptr);
}
