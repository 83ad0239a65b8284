// Model files: exact round trips for every method, and hostile input refused
// with a status and a message.
#include <gtest/gtest.h>

#include <string>
#include <vector>

#include "capi_test_util.hpp"

using namespace capi_test;

namespace {
std::string replace(std::string s, const std::string& from, const std::string& to) {
  const auto at = s.find(from);
  EXPECT_NE(at, std::string::npos) << from;
  if (at != std::string::npos) s.replace(at, from.size(), to);
  return s;
}
}  // namespace

TEST(ModelFile, EveryMethodRoundTripsBitExactly) {
  const int64_t n = 120, p = 3;
  auto x = correlated_rows(n, p, 21, 50.0);
  x[10] = std::nan("");  // one dropped row, recorded in the file
  for (ellipsa_method method = ELLIPSA_METHOD_CLASSICAL; method <= ELLIPSA_METHOD_MIXTURE; ++method) {
    if (method == ELLIPSA_METHOD_MRCD) continue;  // covered below with p > n
    auto o = options(method);
    if (method == ELLIPSA_METHOD_MCD || method == ELLIPSA_METHOD_MIXTURE)
      ASSERT_EQ(ellipsa_fit_options_set_seed(o.get(), 3), ELLIPSA_OK);
    if (method == ELLIPSA_METHOD_MIXTURE) ASSERT_EQ(ellipsa_fit_options_set_components(o.get(), 1, 3), ELLIPSA_OK);
    ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), n, p);
    ellipsa_model* raw = nullptr;
    ASSERT_EQ(ellipsa_model_fit(&raw, &v, o.get()), ELLIPSA_OK) << ellipsa_method_name(method) << ellipsa_last_error();
    Model m(raw);
    const std::string first = save(m.get());
    Model back;
    ASSERT_EQ(load(first, &back), ELLIPSA_OK) << ellipsa_method_name(method) << ": " << ellipsa_last_error();
    EXPECT_EQ(save(back.get()), first) << ellipsa_method_name(method);
    // Scores from the loaded model are identical to the bit.
    std::vector<double> a(n), b(n);
    ellipsa_scores sa = ELLIPSA_SCORES_INIT, sb = ELLIPSA_SCORES_INIT;
    sa.squared_distance = a.data();
    sb.squared_distance = b.data();
    ASSERT_EQ(ellipsa_model_score(&sa, m.get(), &v, 0.975), ELLIPSA_OK);
    ASSERT_EQ(ellipsa_model_score(&sb, back.get(), &v, 0.975), ELLIPSA_OK);
    for (int64_t i = 0; i < n; ++i)
      if (!std::isnan(a[i])) EXPECT_EQ(a[i], b[i]) << ellipsa_method_name(method) << " row " << i;
    // The documented keys are present.
    for (const char* key : {"\"kind\"", "\"method\"", "\"columns\"", "\"n_rows_used\"", "\"format_version\""})
      EXPECT_NE(first.find(key), std::string::npos) << key;
  }
}

TEST(ModelFile, RegularisedMcdRoundTripsWithItsRegularisation) {
  const auto x = correlated_rows(15, 25, 22);
  auto o = options(ELLIPSA_METHOD_MRCD);
  ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), 15, 25);
  ellipsa_model* raw = nullptr;
  ASSERT_EQ(ellipsa_model_fit(&raw, &v, o.get()), ELLIPSA_OK) << ellipsa_last_error();
  Model m(raw);
  const std::string text = save(m.get());
  EXPECT_NE(text.find("\"regularisation\""), std::string::npos);
  Model back;
  ASSERT_EQ(load(text, &back), ELLIPSA_OK) << ellipsa_last_error();
  EXPECT_EQ(save(back.get()), text);
}

TEST(ModelFile, HostileOrBrokenFilesAreRefusedWithAMessage) {
  const auto x = correlated_rows(40, 2, 23);
  auto o = options(ELLIPSA_METHOD_CLASSICAL);
  ellipsa_matrix v = ellipsa_matrix_row_major(x.data(), 40, 2);
  ellipsa_model* raw = nullptr;
  ASSERT_EQ(ellipsa_model_fit(&raw, &v, o.get()), ELLIPSA_OK);
  Model m(raw);
  const std::string good = save(m.get());
  Model out;
  struct Case {
    std::string text;
    const char* expect;
  };
  const std::vector<Case> cases = {
      {good.substr(0, good.size() / 2), "not valid JSON"},
      {std::string(100000, '['), "nesting"},
      {"[]", "top level"},
      {replace(good, "\"format_version\": 2", "\"format_version\": 7"), "not supported"},
      {replace(good, "\"kind\": \"gaussian\"", "\"kind\": \"banana\""), "unknown kind"},
      {replace(good, "\"method\": \"classical\"", "\"method\": \"mixture\""), "disagree"},
      {replace(good, "\"normalisation\": \"n-1\"", "\"normalisation\": \"n+1\""), "normalisation"},
      {replace(good, "\"n_rows_used\": 40", "\"n_rows_used\": -4"), "n_rows_used"},
      {replace(good, "\"columns\": [", "\"columns\": [\"extra\","), "location must be an array of 3"},
      {replace(good, "\"format\": \"ellipsa-model\"", "\"format\": \"other\""), "format"},
  };
  for (const auto& c : cases) {
    EXPECT_EQ(load(c.text, &out), ELLIPSA_ERR_FORMAT) << c.expect;
    EXPECT_EQ(out.get(), nullptr);
    EXPECT_NE(std::string(ellipsa_last_error()).find(c.expect), std::string::npos)
        << c.expect << " / " << ellipsa_last_error();
  }
  // Not positive definite, not symmetric, not finite: edit the scatter.
  const std::string scatter_at = "\"scatter\": [";
  const auto at = good.find(scatter_at);
  ASSERT_NE(at, std::string::npos);
  const auto end = good.find("]\n ]", at);
  const std::string head = good.substr(0, at), tail = good.substr(end + 4);
  EXPECT_EQ(load(head + "\"scatter\": [[1, 2], [2, 1]]" + tail, &out), ELLIPSA_ERR_FORMAT);
  EXPECT_NE(std::string(ellipsa_last_error()).find("positive definite"), std::string::npos);
  EXPECT_EQ(load(head + "\"scatter\": [[1, 0.5], [0.4, 1]]" + tail, &out), ELLIPSA_ERR_FORMAT);
  EXPECT_NE(std::string(ellipsa_last_error()).find("symmetric"), std::string::npos);
  EXPECT_EQ(load(head + "\"scatter\": [[1, 0], [0, 1e999]]" + tail, &out), ELLIPSA_ERR_FORMAT);
  EXPECT_EQ(load(head + "\"scatter\": [[1, 0], [0, \"1\"]]" + tail, &out), ELLIPSA_ERR_FORMAT);
  EXPECT_EQ(load(head + "\"scatter\": [[1, 0], [0, 1]]" + tail, &out), ELLIPSA_OK) << ellipsa_last_error();
  // Arguments.
  ellipsa_model* mm = nullptr;
  EXPECT_EQ(ellipsa_model_load(&mm, good.data(), 0), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_model_load(&mm, good.data(), -5), ELLIPSA_ERR_ARGUMENT);
  // Oversized: refused by its length before a byte is read.
  EXPECT_EQ(ellipsa_model_load(&mm, good.data(), (int64_t{1} << 30) + 1), ELLIPSA_ERR_ARGUMENT);
  // Every truncation of a valid file is refused, none crashes.
  for (size_t cut = 1; cut + 2 < good.size(); cut += 7) {  // the last two bytes are "}\n"
    EXPECT_EQ(ellipsa_model_load(&mm, good.data(), static_cast<int64_t>(cut)), ELLIPSA_ERR_FORMAT) << cut;
    EXPECT_EQ(mm, nullptr);
  }
  EXPECT_EQ(ellipsa_model_load(&mm, nullptr, 10), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_model_load(nullptr, good.data(), 10), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_model_save(nullptr, nullptr, m.get()), ELLIPSA_ERR_NULL);
  ellipsa_text_free(nullptr);  // a no-op
}
