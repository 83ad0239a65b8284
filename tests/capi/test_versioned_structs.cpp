// Structs that may grow (they start with struct_size) are read and written
// with the caller's size: a caller compiled against an older, shorter version
// gets the fields it knows, a newer, longer one is walked with its own element
// size and its extra fields are left alone; below the first published size
// (0.1.0, recorded in abi/) is refused. Through ellipsa.h only.
#include <gtest/gtest.h>

#include <cstddef>
#include <vector>

#include "capi_test_util.hpp"
#include "ellipsa.h"

namespace {

capi_test::Model mixture_with_three_candidates() {
  const auto x = capi_test::correlated_rows(120, 2, 3);
  auto o = capi_test::options(ELLIPSA_METHOD_MIXTURE);
  EXPECT_EQ(ellipsa_fit_options_set_components(o.get(), 1, 3), ELLIPSA_OK);
  const ellipsa_matrix m = ellipsa_matrix_row_major(x.data(), 120, 2);
  ellipsa_model* out = nullptr;
  EXPECT_EQ(ellipsa_model_fit(&out, &m, o.get()), ELLIPSA_OK) << ellipsa_last_error();
  return capi_test::Model(out);
}

// A caller compiled against a later header whose candidate grew by one field.
struct LongerCandidate {
  ellipsa_candidate v1;
  double added_later;
};

}  // namespace

TEST(VersionedStructs, CandidateArrayIsWalkedWithTheCallersElementSize) {
  const auto model = mixture_with_three_candidates();
  ellipsa_candidate table[3] = {ELLIPSA_CANDIDATE_INIT, ELLIPSA_CANDIDATE_INIT, ELLIPSA_CANDIDATE_INIT};
  int64_t count = 0;
  ASSERT_EQ(ellipsa_model_selection(table, 3, &count, model.get()), ELLIPSA_OK);
  ASSERT_EQ(count, 3);

  LongerCandidate longer[3];
  for (auto& l : longer) {
    l.v1.struct_size = sizeof(LongerCandidate);
    l.added_later = -7.0;
  }
  ASSERT_EQ(ellipsa_model_selection(&longer[0].v1, 3, &count, model.get()), ELLIPSA_OK) << ellipsa_last_error();
  for (int i = 0; i < 3; ++i) {
    EXPECT_EQ(longer[i].v1.components, table[i].components);
    EXPECT_EQ(longer[i].v1.bic, table[i].bic);
    EXPECT_EQ(longer[i].v1.chosen, table[i].chosen);
    EXPECT_EQ(longer[i].added_later, -7.0);                                                // not ours to write
    EXPECT_EQ(longer[i].v1.struct_size, static_cast<int64_t>(sizeof(ellipsa_candidate)));  // bytes written
  }
}

TEST(VersionedStructs, CandidateSizesBelowTheFirstVersionOrMixedAreRefused) {
  const auto model = mixture_with_three_candidates();
  ellipsa_candidate table[3] = {ELLIPSA_CANDIDATE_INIT, ELLIPSA_CANDIDATE_INIT, ELLIPSA_CANDIDATE_INIT};
  int64_t count = 0;
  table[0].struct_size = offsetof(ellipsa_candidate, chosen);
  EXPECT_EQ(ellipsa_model_selection(table, 3, &count, model.get()), ELLIPSA_ERR_SHAPE);
  table[0].struct_size = sizeof(ellipsa_candidate);
  table[2].struct_size = sizeof(ellipsa_candidate) + 8;
  EXPECT_EQ(ellipsa_model_selection(table, 3, &count, model.get()), ELLIPSA_ERR_SHAPE);
}

TEST(VersionedStructs, ScoresBelowTheFirstPublishedVersionAreRefused) {
  const auto x = capi_test::correlated_rows(40, 2, 5);
  auto o = capi_test::options(ELLIPSA_METHOD_CLASSICAL);
  const ellipsa_matrix m = ellipsa_matrix_row_major(x.data(), 40, 2);
  ellipsa_model* raw = nullptr;
  ASSERT_EQ(ellipsa_model_fit(&raw, &m, o.get()), ELLIPSA_OK);
  const capi_test::Model model(raw);
  std::vector<double> d2(40);
  ellipsa_scores s = ELLIPSA_SCORES_INIT;
  s.squared_distance = d2.data();
  s.struct_size = offsetof(ellipsa_scores, low_density);  // never shipped: 0.1.0 ends with low_density
  EXPECT_EQ(ellipsa_model_score(&s, model.get(), &m, 0.975), ELLIPSA_ERR_SHAPE);
  s.struct_size = sizeof(ellipsa_scores);
  EXPECT_EQ(ellipsa_model_score(&s, model.get(), &m, 0.975), ELLIPSA_OK);
}
