// The threading promise of ellipsa.h ("Threads and reproducibility"), tested
// through the shared library: no global mutable state; handles passed through
// const pointers (models, fit options given to a fit) may be shared; a
// progress callback runs only on the thread that made the call. Concretely:
// fits and scores running at once on many threads give bit-for-bit the results
// of the same calls made one after another, a shared options handle calls its
// callback on each fitting thread and nowhere else, and ellipsa_last_error()
// belongs to the calling thread. Built under ThreadSanitizer by scripts/run-tsan.sh, where
// a data race fails the run even when the numbers happen to agree.
//
// Threads never call gtest assertions: they record what they saw, and the main
// thread compares after join().
#include <gtest/gtest.h>

#include <array>
#include <atomic>
#include <barrier>
#include <cmath>
#include <cstring>
#include <string>
#include <thread>
#include <vector>

#include "capi_test_util.hpp"

using namespace capi_test;

namespace {

constexpr int kThreads = 8;
constexpr int64_t kRows = 240;
constexpr int64_t kCols = 4;
constexpr int64_t kScoreRows = 60;

// A method with the settings that make it deterministic (seeded where it draws).
struct Config {
  const char* label;
  ellipsa_method method;
  uint64_t seed;
  int32_t max_components;  // mixtures only
};

const Config kConfigs[] = {
    {"classical", ELLIPSA_METHOD_CLASSICAL, 0, 1}, {"ledoit-wolf", ELLIPSA_METHOD_LEDOIT_WOLF, 0, 1},
    {"mcd", ELLIPSA_METHOD_MCD, 20240611, 1},      {"detmcd", ELLIPSA_METHOD_DETMCD, 0, 1},
    {"mixture", ELLIPSA_METHOD_MIXTURE, 77, 2},
};
constexpr int kConfigCount = static_cast<int>(sizeof(kConfigs) / sizeof(kConfigs[0]));

// Fitting rows: a main cloud with a shifted minority (so MCD and the mixture
// have something to find).
std::vector<double> fitting_rows() {
  std::vector<double> x = correlated_rows(kRows - 40, kCols, 101);
  const std::vector<double> shifted = correlated_rows(40, kCols, 202, 9.0);
  x.insert(x.end(), shifted.begin(), shifted.end());
  return x;
}

// Rows to score: new draws, a few far away, a few with NaN (the marginal path).
std::vector<double> scoring_rows() {
  std::vector<double> x = correlated_rows(kScoreRows, kCols, 303, 0.5);
  for (int64_t i = 0; i < kScoreRows; i += 7) x[static_cast<size_t>(i * kCols + (i % kCols))] = std::nan("");
  for (int64_t i = 3; i < kScoreRows; i += 11) x[static_cast<size_t>(i * kCols)] += 25.0;
  return x;
}

Options make_options(const Config& c) {
  Options o = options(c.method);
  if (!o) return o;
  // Only the methods that draw random numbers take a seed (0 marks the others).
  if (c.seed != 0 && ellipsa_fit_options_set_seed(o.get(), c.seed) != ELLIPSA_OK) return nullptr;
  if (c.method == ELLIPSA_METHOD_MIXTURE &&
      (ellipsa_fit_options_set_components(o.get(), 1, c.max_components) != ELLIPSA_OK ||
       ellipsa_fit_options_set_restarts(o.get(), 2) != ELLIPSA_OK))
    return nullptr;
  return o;
}

template <class T>
void append_bytes(std::vector<unsigned char>& out, const std::vector<T>& v) {
  const auto* b = reinterpret_cast<const unsigned char*>(v.data());
  out.insert(out.end(), b, b + v.size() * sizeof(T));
}

// Everything observable about one model: its file (shortest round-trip
// numbers, so equal text means equal doubles), its estimates and every score buffer, as
// raw bytes so that NaN compares equal to the same NaN and -0 differs from +0.
struct Outcome {
  ellipsa_status fit_status = -1;
  ellipsa_status score_status = -1;
  std::string model_text;
  std::vector<unsigned char> bytes;
  bool operator==(const Outcome&) const = default;
};

Outcome observe(const ellipsa_model* m, const std::vector<double>& rows) {
  Outcome r;
  r.fit_status = ELLIPSA_OK;
  char* text = nullptr;
  int64_t length = 0;
  if (ellipsa_model_save(&text, &length, m) == ELLIPSA_OK) {
    r.model_text.assign(text, static_cast<size_t>(length));
    ellipsa_text_free(text);
  }
  int32_t components = 0;
  int64_t p = 0;
  if (ellipsa_model_describe(nullptr, nullptr, &p, &components, m) != ELLIPSA_OK || p != kCols) return r;
  for (int32_t k = 0; k < components; ++k) {
    std::vector<double> loc(kCols), scatter(kCols * kCols), weight(1);
    ellipsa_model_component(loc.data(), kCols, scatter.data(), kCols * kCols, weight.data(), m, k);
    append_bytes(r.bytes, loc);
    append_bytes(r.bytes, scatter);
    append_bytes(r.bytes, weight);
  }
  const int64_t n = kScoreRows;
  ScoreBuffers b(n, kCols, components);
  const ellipsa_matrix v = ellipsa_matrix_row_major(rows.data(), n, kCols);
  r.score_status = ellipsa_model_score(&b.scores, m, &v, 0.975);
  for (const auto* d : {&b.d2, &b.p_value, &b.contribution, &b.conditional_drop, &b.membership, &b.log_density})
    append_bytes(r.bytes, *d);
  for (const auto* i : {&b.flag, &b.observed, &b.component, &b.low_density}) append_bytes(r.bytes, *i);
  return r;
}

Outcome fit_and_observe(const ellipsa_fit_options* o, const std::vector<double>& fit_rows,
                        const std::vector<double>& score_rows) {
  const ellipsa_matrix v = ellipsa_matrix_row_major(fit_rows.data(), kRows, kCols);
  ellipsa_model* m = nullptr;
  const ellipsa_status st = ellipsa_model_fit(&m, &v, o);
  if (st != ELLIPSA_OK) {
    Outcome r;
    r.fit_status = st;
    return r;
  }
  Model guard(m);
  return observe(m, score_rows);
}

// The reference: each configuration fitted and scored on this thread, alone.
std::vector<Outcome> serial_outcomes(const std::vector<double>& fit_rows, const std::vector<double>& score_rows) {
  std::vector<Outcome> out;
  for (const Config& c : kConfigs) {
    Options o = make_options(c);
    out.push_back(o ? fit_and_observe(o.get(), fit_rows, score_rows) : Outcome{});
  }
  return out;
}

}  // namespace

TEST(Concurrency, SerialReferenceIsComplete) {
  // Guards the other tests against comparing two empty outcomes.
  const auto fit_rows = fitting_rows();
  const auto score_rows = scoring_rows();
  for (const Config& c : kConfigs) ASSERT_TRUE(make_options(c)) << c.label << ": " << ellipsa_last_error();
  const auto ref = serial_outcomes(fit_rows, score_rows);
  for (int c = 0; c < kConfigCount; ++c) {
    EXPECT_EQ(ref[c].fit_status, ELLIPSA_OK) << kConfigs[c].label;
    EXPECT_EQ(ref[c].score_status, ELLIPSA_OK) << kConfigs[c].label;
    EXPECT_FALSE(ref[c].model_text.empty()) << kConfigs[c].label;
    EXPECT_GT(ref[c].bytes.size(), size_t(kScoreRows * kCols * 2 * sizeof(double))) << kConfigs[c].label;
  }
  // The serial run repeated gives the same bits (otherwise the comparisons
  // below would test nothing about threads).
  EXPECT_TRUE(ref == serial_outcomes(fit_rows, score_rows));
}

TEST(Concurrency, FitsOnManyThreadsMatchSerialRunsBitForBit) {
  const auto fit_rows = fitting_rows();
  const auto score_rows = scoring_rows();
  // Options shared read-only by the odd threads (allowed by ellipsa_model_fit's
  // contract); the even threads make their own.
  std::vector<Options> shared;
  for (const Config& c : kConfigs) shared.push_back(make_options(c));
  for (const auto& o : shared) ASSERT_TRUE(o) << ellipsa_last_error();

  // Every thread runs every configuration, each starting at a different one, so
  // all methods are in flight together; all start at the same moment.
  std::vector<std::vector<Outcome>> seen(kThreads, std::vector<Outcome>(kConfigCount));
  std::barrier start(kThreads);
  std::vector<std::thread> threads;
  for (int t = 0; t < kThreads; ++t) {
    threads.emplace_back([&, t] {
      start.arrive_and_wait();
      for (int r = 0; r < kConfigCount; ++r) {
        const int c = (t + r) % kConfigCount;
        if (t % 2 == 1) {
          seen[t][c] = fit_and_observe(shared[c].get(), fit_rows, score_rows);
        } else {
          Options own = make_options(kConfigs[c]);
          if (own) seen[t][c] = fit_and_observe(own.get(), fit_rows, score_rows);
        }
      }
    });
  }
  for (auto& th : threads) th.join();

  const auto ref = serial_outcomes(fit_rows, score_rows);
  for (int t = 0; t < kThreads; ++t)
    for (int c = 0; c < kConfigCount; ++c) {
      EXPECT_EQ(seen[t][c].fit_status, ref[c].fit_status) << kConfigs[c].label << " thread " << t;
      EXPECT_EQ(seen[t][c].model_text, ref[c].model_text) << kConfigs[c].label << " thread " << t;
      EXPECT_TRUE(seen[t][c].bytes == ref[c].bytes) << kConfigs[c].label << " thread " << t;
    }
}

namespace {
// Which test thread is inside a fit (-1: none of ours), for the callback below.
thread_local int t_fitting_thread = -1;

struct ProgressLog {
  std::atomic<int> off_thread{0};                      // calls on a thread not inside one of our fits
  std::array<std::atomic<int>, kThreads> by_thread{};  // calls per fitting thread
  std::atomic<int> serial{0};                          // calls during the serial reference
};

int log_progress(const char*, double, void* user) {
  auto* log = static_cast<ProgressLog*>(user);
  if (t_fitting_thread == kThreads) log->serial.fetch_add(1);
  else if (t_fitting_thread < 0) log->off_thread.fetch_add(1);
  else log->by_thread[static_cast<size_t>(t_fitting_thread)].fetch_add(1);
  return 0;
}
}  // namespace

TEST(Concurrency, SharedOptionsCallTheirProgressCallbackOnEachFittingThread) {
  // The header ("Threads and reproducibility"): fit options passed to
  // ellipsa_model_fit() may be shared by concurrent fits; a progress callback
  // is called only on the thread that made the call, so shared options call
  // theirs from every fitting thread, and the results are those of serial fits.
  const auto fit_rows = fitting_rows();
  const auto score_rows = scoring_rows();
  ProgressLog log;
  std::vector<Options> shared;
  for (const Config& c : kConfigs) {
    shared.push_back(make_options(c));
    ASSERT_TRUE(shared.back()) << ellipsa_last_error();
    ASSERT_EQ(ellipsa_fit_options_set_progress(shared.back().get(), log_progress, &log), ELLIPSA_OK);
  }
  // Serial reference with the same shared handles (marked as thread kThreads).
  std::vector<Outcome> ref;
  t_fitting_thread = kThreads;
  for (int c = 0; c < kConfigCount; ++c) ref.push_back(fit_and_observe(shared[c].get(), fit_rows, score_rows));
  t_fitting_thread = -1;
  const int serial_calls = log.serial.load();
  ASSERT_GT(serial_calls, kConfigCount);  // the robust fits and the mixture report progress

  std::vector<std::vector<Outcome>> seen(kThreads, std::vector<Outcome>(kConfigCount));
  std::barrier start(kThreads);
  std::vector<std::thread> threads;
  for (int t = 0; t < kThreads; ++t)
    threads.emplace_back([&, t] {
      start.arrive_and_wait();
      for (int r = 0; r < kConfigCount; ++r) {
        const int c = (t + r) % kConfigCount;
        t_fitting_thread = t;
        seen[t][c] = fit_and_observe(shared[c].get(), fit_rows, score_rows);
        t_fitting_thread = -1;
      }
    });
  for (auto& th : threads) th.join();

  EXPECT_EQ(log.off_thread.load(), 0);  // never on a thread of the library's own
  for (int t = 0; t < kThreads; ++t) {
    // Each thread ran every configuration once: as many calls as the serial run.
    EXPECT_EQ(log.by_thread[static_cast<size_t>(t)].load(), serial_calls) << "thread " << t;
    for (int c = 0; c < kConfigCount; ++c) {
      EXPECT_EQ(seen[t][c].model_text, ref[c].model_text) << kConfigs[c].label << " thread " << t;
      EXPECT_TRUE(seen[t][c].bytes == ref[c].bytes) << kConfigs[c].label << " thread " << t;
    }
  }
}

TEST(Concurrency, OneFittedModelScoredByManyThreadsMatchesSerialScoring) {
  const auto fit_rows = fitting_rows();
  const auto score_rows = scoring_rows();
  std::vector<Model> models;
  std::vector<Outcome> ref;
  for (const Config& c : kConfigs) {
    Options o = make_options(c);
    ASSERT_TRUE(o) << c.label << ": " << ellipsa_last_error();
    const ellipsa_matrix v = ellipsa_matrix_row_major(fit_rows.data(), kRows, kCols);
    ellipsa_model* m = nullptr;
    ASSERT_EQ(ellipsa_model_fit(&m, &v, o.get()), ELLIPSA_OK) << c.label << ": " << ellipsa_last_error();
    models.emplace_back(m);
    ref.push_back(observe(m, score_rows));
  }

  // Each thread scores and queries every shared model several times (save,
  // components, diagnostics, row sets), all threads at once.
  constexpr int kRounds = 3;
  std::vector<std::vector<Outcome>> seen(kThreads, std::vector<Outcome>(kConfigCount * kRounds));
  // Two numbers per (round, model): a diagnostic and the dropped-row count,
  // stored by model (not by the order a thread visited them).
  auto numbers = [](const ellipsa_model* m, ellipsa_method method, double* out) {
    out[0] = std::nan("");
    ellipsa_model_diagnostic(&out[0], m, method == ELLIPSA_METHOD_MIXTURE ? "bic" : "log_det");
    int64_t count = -1;
    ellipsa_model_row_set(nullptr, 0, &count, m, ELLIPSA_ROWS_DROPPED);
    out[1] = static_cast<double>(count);
  };
  std::vector<double> ref_numbers(2 * kConfigCount);
  for (int c = 0; c < kConfigCount; ++c) numbers(models[c].get(), kConfigs[c].method, &ref_numbers[2 * c]);
  std::vector<std::vector<double>> diagnostics(kThreads, std::vector<double>(2 * kConfigCount * kRounds));
  std::barrier start(kThreads);
  std::vector<std::thread> threads;
  for (int t = 0; t < kThreads; ++t) {
    threads.emplace_back([&, t] {
      start.arrive_and_wait();
      for (int r = 0; r < kRounds; ++r)
        for (int i = 0; i < kConfigCount; ++i) {
          const int c = (t + i) % kConfigCount;
          seen[t][r * kConfigCount + c] = observe(models[c].get(), score_rows);
          numbers(models[c].get(), kConfigs[c].method, &diagnostics[t][2 * (r * kConfigCount + c)]);
        }
    });
  }
  for (auto& th : threads) th.join();

  for (int c = 0; c < kConfigCount; ++c) {
    EXPECT_TRUE(std::isfinite(ref_numbers[2 * c])) << kConfigs[c].label;
    EXPECT_EQ(ref_numbers[2 * c + 1], 0.0) << kConfigs[c].label;  // no NaN in the fitting rows
  }
  for (int t = 0; t < kThreads; ++t) {
    for (int r = 0; r < kRounds; ++r)
      for (int c = 0; c < kConfigCount; ++c) {
        const Outcome& o = seen[t][r * kConfigCount + c];
        EXPECT_EQ(o.score_status, ELLIPSA_OK) << kConfigs[c].label << " thread " << t;
        EXPECT_EQ(o.model_text, ref[c].model_text) << kConfigs[c].label << " thread " << t;
        EXPECT_TRUE(o.bytes == ref[c].bytes) << kConfigs[c].label << " thread " << t << " round " << r;
      }
    for (int r = 0; r < kRounds; ++r)
      EXPECT_EQ(0, std::memcmp(&diagnostics[t][2 * r * kConfigCount], ref_numbers.data(),
                               ref_numbers.size() * sizeof(double)))
          << "thread " << t << " round " << r;
  }
}

TEST(Concurrency, DistributionFunctionsFromManyThreadsAtFirstUse) {
  // Each TEST runs in a fresh process (gtest_discover_tests), so here the
  // threads are the first callers: lazily initialised constants inside the
  // distribution code must not race.
  constexpr int kPoints = 40;
  auto grid = [](std::vector<double>& out) {
    for (int i = 0; i < kPoints; ++i) {
      const double u = (i + 0.5) / kPoints;
      double v[6] = {};
      ellipsa_chi2_quantile(&v[0], u, 1.0 + i);
      ellipsa_chi2_tail(&v[1], 3.0 * u * (i + 1), 0.5 + i);
      ellipsa_f_quantile(&v[2], u, 2.0 + i, 7.5);
      ellipsa_f_tail(&v[3], 4.0 * u, 3.0, 1.0 + i);
      ellipsa_beta_quantile(&v[4], u, 0.5 + i, 2.5);
      ellipsa_hotelling_limit(&v[5], i % 2 ? ELLIPSA_PHASE_ONE : ELLIPSA_PHASE_TWO, 30 + i, 1 + i % 5, 0.01 + u / 50);
      out.insert(out.end(), v, v + 6);
    }
  };
  std::vector<std::vector<double>> seen(kThreads);
  std::barrier start(kThreads);
  std::vector<std::thread> threads;
  for (int t = 0; t < kThreads; ++t)
    threads.emplace_back([&, t] {
      start.arrive_and_wait();
      grid(seen[t]);
    });
  for (auto& th : threads) th.join();
  std::vector<double> ref;
  grid(ref);
  for (int t = 0; t < kThreads; ++t) {
    ASSERT_EQ(seen[t].size(), ref.size());
    EXPECT_EQ(0, std::memcmp(seen[t].data(), ref.data(), ref.size() * sizeof(double))) << "thread " << t;
  }
  for (double v : ref) EXPECT_TRUE(std::isfinite(v));
}

TEST(Concurrency, LastErrorBelongsToTheCallingThread) {
  // Round 1: every thread fails with a message that names the thread. Round 2:
  // the other threads fail again (with their own messages) or succeed, and
  // some fail inside a fit (the deeper path through the core). Round 3: each
  // thread still reads its own round-1 message. A thread that never failed
  // keeps reading "".
  const auto fit_rows = fitting_rows();
  std::vector<std::string> own(kThreads), after(kThreads), expected(kThreads);
  std::vector<ellipsa_status> status(kThreads, -1);
  std::string quiet_before, quiet_after;
  std::barrier sync(kThreads + 1);  // + one thread that never fails
  std::vector<std::thread> threads;
  for (int t = 0; t < kThreads; ++t) {
    threads.emplace_back([&, t] {
      const std::string name = "no-such-method-" + std::to_string(t);
      ellipsa_method m = 0;
      status[t] = ellipsa_method_from_name(&m, name.c_str());
      own[t] = ellipsa_last_error();
      sync.arrive_and_wait();
      // Round 2, all threads at once.
      for (int r = 0; r < 20; ++r) {
        if (t % 2 == 0) {
          // A success must not clear or change this thread's message.
          double q = 0.0;
          ellipsa_chi2_quantile(&q, 0.9, 3.0);
        } else {
          // Fail again inside a fit (constant column), then restore own message
          // by failing with the same call as in round 1.
          std::vector<double> x(fit_rows);
          for (int64_t i = 0; i < kRows; ++i) x[static_cast<size_t>(i * kCols + 1)] = 2.0;
          const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), kRows, kCols);
          Options o = options(ELLIPSA_METHOD_CLASSICAL);
          ellipsa_model* model = nullptr;
          if (ellipsa_model_fit(&model, &v, o.get()) == ELLIPSA_OK) ellipsa_model_destroy(model);
          ellipsa_method_from_name(&m, name.c_str());
        }
      }
      sync.arrive_and_wait();
      after[t] = ellipsa_last_error();
    });
  }
  std::thread quiet([&] {
    quiet_before = ellipsa_last_error();
    sync.arrive_and_wait();
    double q = 0.0;
    for (int r = 0; r < 20; ++r) ellipsa_f_quantile(&q, 0.5, 2.0, 9.0);
    sync.arrive_and_wait();
    quiet_after = ellipsa_last_error();
  });
  for (auto& th : threads) th.join();
  quiet.join();

  for (int t = 0; t < kThreads; ++t) {
    EXPECT_EQ(status[t], ELLIPSA_ERR_ARGUMENT);
    const std::string name = "no-such-method-" + std::to_string(t) + "'";
    EXPECT_EQ(own[t].rfind("ellipsa_method_from_name", 0), 0u) << own[t];
    EXPECT_NE(own[t].find(name), std::string::npos) << "thread " << t << " read: " << own[t];
    EXPECT_EQ(after[t], own[t]) << "thread " << t;
  }
  EXPECT_EQ(quiet_before, "");
  EXPECT_EQ(quiet_after, "");

  // The fit failure of round 2, seen alone on this thread, is a different
  // message: so round 3 really shows that round 2 did not leak across threads.
  std::vector<double> x(fit_rows);
  for (int64_t i = 0; i < kRows; ++i) x[static_cast<size_t>(i * kCols + 1)] = 2.0;
  const ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), kRows, kCols);
  Options o = options(ELLIPSA_METHOD_CLASSICAL);
  ellipsa_model* model = nullptr;
  EXPECT_EQ(ellipsa_model_fit(&model, &v, o.get()), ELLIPSA_ERR_DATA);
  EXPECT_EQ(std::string(ellipsa_last_error()).rfind("ellipsa_model_fit", 0), 0u) << ellipsa_last_error();
}
