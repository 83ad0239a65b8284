// Contract tests of the sheet-function catalog: the descriptions, the lookup,
// versioned structs, and every argument of every function validated with a
// message that names it. Through ellipsa.h only.
#include <gtest/gtest.h>

#include <cstring>
#include <set>
#include <string>
#include <vector>

#include "capi_test_util.hpp"
#include "ellipsa.h"
#include "sheet_test_util.hpp"

using namespace sheet_test;

namespace {

int32_t count() {
  int32_t n = 0;
  EXPECT_EQ(ellipsa_sheet_function_count(&n), ELLIPSA_OK);
  return n;
}

ellipsa_sheet_function_info info(int32_t f) {
  ellipsa_sheet_function_info i{};
  i.struct_size = sizeof i;
  EXPECT_EQ(ellipsa_sheet_function_describe(&i, f), ELLIPSA_OK);
  return i;
}

ellipsa_sheet_argument_info argument(int32_t f, int32_t a) {
  ellipsa_sheet_argument_info i{};
  i.struct_size = sizeof i;
  EXPECT_EQ(ellipsa_sheet_argument_describe(&i, f, a), ELLIPSA_OK);
  return i;
}

// A valid value for an argument kind (used to fill the arguments before the
// one under test). Data: 40 x 3 correlated rows.
const std::vector<double>& data() {
  static const std::vector<double> x = capi_test::correlated_rows(40, 3, 11);
  return x;
}

ellipsa_sheet_value valid(const ellipsa_sheet_argument_info& a) {
  const std::string name = a.name;
  switch (a.kind) {
    case ELLIPSA_SHEET_ARG_RANGE: return range(data().data(), 40, 3);
    case ELLIPSA_SHEET_ARG_FLAG: return flag(false);
    case ELLIPSA_SHEET_ARG_TEXT:
      if (name == "method") return text("classical");
      if (name == "components") return text("2");
      if (name == "structure") return text("full");
      if (name == "limit") return text("chi2");
      return text("x");
    default:
      if (name == "probability" || name == "level" || name == "x") return number(0.9);
      if (name == "alpha") return number(0.75);
      if (name == "phase") return number(2);
      if (name == "m") return number(40);
      if (name == "p") return number(3);
      return number(3);  // seed, df, df1, df2, a, b
  }
}

}  // namespace

TEST(SheetCatalog, EveryFunctionIsDescribedCompletely) {
  const int32_t n = count();
  ASSERT_GE(n, 19);
  std::set<std::string> names;
  for (int32_t f = 0; f < n; ++f) {
    const auto i = info(f);
    SCOPED_TRACE(i.name);
    EXPECT_EQ(std::string(i.name).rfind("ELL.", 0), 0u);
    EXPECT_TRUE(names.insert(i.name).second) << "duplicate name";
    EXPECT_GT(std::strlen(i.help), 20u);
    EXPECT_GT(std::strlen(i.category), 0u);
    EXPECT_GE(i.result_shape, ELLIPSA_SHEET_SHAPE_SCALAR);
    EXPECT_LE(i.result_shape, ELLIPSA_SHEET_SHAPE_TABLE);
    ASSERT_GE(i.argument_count, 0);
    int32_t required = 0;
    bool seen_optional = false;
    for (int32_t a = 0; a < i.argument_count; ++a) {
      const auto arg = argument(f, a);
      EXPECT_GT(std::strlen(arg.name), 0u);
      EXPECT_GT(std::strlen(arg.help), 5u);
      EXPECT_GE(arg.kind, ELLIPSA_SHEET_ARG_RANGE);
      EXPECT_LE(arg.kind, ELLIPSA_SHEET_ARG_FLAG);
      if (arg.optional) {
        seen_optional = true;
        EXPECT_GT(std::strlen(arg.default_text), 0u) << arg.name;
      } else {
        EXPECT_FALSE(seen_optional) << "required argument after an optional one: " << arg.name;
        EXPECT_STREQ(arg.default_text, "");
        ++required;
      }
    }
    EXPECT_EQ(required, i.required_count);
    int32_t found = -1;
    std::string lower = i.name;
    for (auto& ch : lower) ch = static_cast<char>(std::tolower(static_cast<unsigned char>(ch)));
    EXPECT_EQ(ellipsa_sheet_function_find(&found, lower.c_str()), ELLIPSA_OK);
    EXPECT_EQ(found, f);
  }
}

TEST(SheetCatalog, LookupAndDescribeRefuseBadArguments) {
  int32_t found = 7;
  EXPECT_EQ(ellipsa_sheet_function_find(&found, "ELL.NOPE"), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(found, 7);
  EXPECT_NE(std::string(ellipsa_last_error()).find("ELL.NOPE"), std::string::npos);
  EXPECT_EQ(ellipsa_sheet_function_find(&found, "ELL.DIST"), ELLIPSA_ERR_ARGUMENT);  // a prefix is not a name
  EXPECT_EQ(ellipsa_sheet_function_find(nullptr, "ELL.DIST2"), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_sheet_function_find(&found, nullptr), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_sheet_function_count(nullptr), ELLIPSA_ERR_NULL);
  ellipsa_sheet_function_info i{};
  i.struct_size = sizeof i;
  EXPECT_EQ(ellipsa_sheet_function_describe(&i, -1), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_sheet_function_describe(&i, count()), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_sheet_function_describe(nullptr, 0), ELLIPSA_ERR_NULL);
  ellipsa_sheet_argument_info a{};
  a.struct_size = sizeof a;
  EXPECT_EQ(ellipsa_sheet_argument_describe(&a, 0, -1), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_sheet_argument_describe(&a, 0, 99), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_sheet_argument_describe(&a, -1, 0), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_sheet_argument_describe(nullptr, 0, 0), ELLIPSA_ERR_NULL);
}

TEST(SheetCatalog, InfoStructsAreWalkedWithTheCallersSize) {
  // A caller compiled against a later, longer struct: the extra tail is untouched.
  struct Longer {
    ellipsa_sheet_function_info info;
    int64_t future;
  } longer{};
  longer.info.struct_size = sizeof longer;
  longer.future = 12345;
  ASSERT_EQ(ellipsa_sheet_function_describe(&longer.info, 0), ELLIPSA_OK);
  EXPECT_EQ(longer.future, 12345);
  EXPECT_EQ(longer.info.struct_size, static_cast<int64_t>(sizeof(ellipsa_sheet_function_info)));  // what was written
  EXPECT_STREQ(longer.info.name, info(0).name);
  // A struct_size below the first version is refused.
  ellipsa_sheet_function_info small{};
  small.struct_size = 8;
  EXPECT_EQ(ellipsa_sheet_function_describe(&small, 0), ELLIPSA_ERR_SHAPE);
  ellipsa_sheet_argument_info small_arg{};
  small_arg.struct_size = 8;
  EXPECT_EQ(ellipsa_sheet_argument_describe(&small_arg, 0, 0), ELLIPSA_ERR_SHAPE);
}

// Every argument of every function: a value of a kind it cannot take is refused
// with ELLIPSA_ERR_ARGUMENT and a message naming the argument; a required
// argument left out is refused the same way.
TEST(SheetCatalog, EveryArgumentIsValidatedByName) {
  for (int32_t f = 0; f < count(); ++f) {
    const auto fi = info(f);
    std::vector<ellipsa_sheet_value> args;
    for (int32_t a = 0; a < fi.argument_count; ++a) args.push_back(valid(argument(f, a)));
    for (int32_t a = 0; a < fi.argument_count; ++a) {
      const auto ai = argument(f, a);
      SCOPED_TRACE(std::string(fi.name) + " argument " + ai.name);
      auto wrong = args;
      const double one = 1.0;
      switch (ai.kind) {
        case ELLIPSA_SHEET_ARG_RANGE: wrong[static_cast<size_t>(a)] = text("abc"); break;
        case ELLIPSA_SHEET_ARG_NUMBER: wrong[static_cast<size_t>(a)] = text("abc"); break;
        case ELLIPSA_SHEET_ARG_TEXT: wrong[static_cast<size_t>(a)] = range(&one, 1, 1); break;
        case ELLIPSA_SHEET_ARG_FLAG: wrong[static_cast<size_t>(a)] = text("maybe"); break;
      }
      int64_t r = 0, c = 0;
      EXPECT_EQ(ellipsa_sheet_result_shape(&r, &c, f, wrong.data(), fi.argument_count), ELLIPSA_ERR_ARGUMENT);
      EXPECT_NE(std::string(ellipsa_last_error()).find(ai.name), std::string::npos) << ellipsa_last_error();
      if (!ai.optional) {
        wrong[static_cast<size_t>(a)] = absent();
        EXPECT_EQ(ellipsa_sheet_result_shape(&r, &c, f, wrong.data(), fi.argument_count), ELLIPSA_ERR_ARGUMENT);
        EXPECT_NE(std::string(ellipsa_last_error()).find("required"), std::string::npos);
      }
    }
    // Too many values.
    args.push_back(number(1));
    int64_t r = 0, c = 0;
    EXPECT_EQ(ellipsa_sheet_result_shape(&r, &c, f, args.data(), fi.argument_count + 1), ELLIPSA_ERR_ARGUMENT);
  }
}

TEST(SheetCatalog, OptionsOutOfRangeOrMisspeltNameTheOption) {
  const auto& x = data();
  const auto rows = range(x.data(), 40, 3);
  struct Case {
    const char* function;
    std::vector<ellipsa_sheet_value> args;
    const char* named;
  };
  const std::vector<Case> cases = {
      {"ELL.DIST2", {rows, absent(), text("mcdd")}, "method"},
      {"ELL.DIST2", {rows, absent(), text("mixture")}, "method"},
      {"ELL.FLAG", {rows, absent(), number(1.5)}, "level"},
      {"ELL.FLAG", {rows, absent(), number(0.0)}, "level"},
      {"ELL.FLAG", {rows, absent(), absent(), absent(), absent(), absent(), text("chi3")}, "limit"},
      {"ELL.DIST2", {rows, absent(), text("mcd"), number(0.3)}, "alpha"},
      {"ELL.DIST2", {rows, absent(), text("classical"), number(0.75)}, "alpha"},
      {"ELL.DIST2", {rows, absent(), text("mcd"), absent(), number(-1)}, "seed"},
      {"ELL.DIST2", {rows, absent(), text("mcd"), absent(), number(2.5)}, "seed"},
      {"ELL.REGIME", {rows, absent(), text("0")}, "components"},
      {"ELL.REGIME", {rows, absent(), text("4-2")}, "components"},
      {"ELL.REGIME", {rows, absent(), text("two")}, "components"},
      {"ELL.REGIME", {rows, absent(), text("2"), text("fulll")}, "structure"},
      {"ELL.SHRINKAGE", {rows, text("mcd")}, "method"},
      {"ELL.T2LIMIT", {number(40), number(3), number(0.99), number(3)}, "phase"},
      {"ELL.T2LIMIT", {number(40.5), number(3)}, "m"},
  };
  for (const auto& c : cases) {
    SCOPED_TRACE(std::string(c.function) + " / " + c.named);
    const Result r = evaluate(c.function, c.args);
    EXPECT_EQ(r.status, ELLIPSA_ERR_ARGUMENT);
    EXPECT_NE(r.message.find(c.named), std::string::npos) << r.message;
  }
}

TEST(SheetCatalog, ShapesThatMustAgreeAndBadStructs) {
  const auto& x = data();
  const int32_t dist = index_of("ELL.DIST2");
  int64_t r = 0, c = 0;
  // reference with other columns than rows
  std::vector<ellipsa_sheet_value> args = {range(x.data(), 40, 3), range(x.data(), 20, 2)};
  EXPECT_EQ(ellipsa_sheet_result_shape(&r, &c, dist, args.data(), 2), ELLIPSA_ERR_SHAPE);
  EXPECT_NE(std::string(ellipsa_last_error()).find("reference"), std::string::npos);
  // an empty range
  args = {range(x.data(), 0, 3)};
  EXPECT_EQ(ellipsa_sheet_result_shape(&r, &c, dist, args.data(), 1), ELLIPSA_ERR_SHAPE);
  // a struct_size below the first version, and one that differs between values
  args = {range(x.data(), 40, 3), absent()};
  args[0].struct_size = 8;
  EXPECT_EQ(ellipsa_sheet_result_shape(&r, &c, dist, args.data(), 1), ELLIPSA_ERR_SHAPE);
  args[0].struct_size = sizeof(ellipsa_sheet_value);
  args[1].struct_size = sizeof(ellipsa_sheet_value) + 8;
  EXPECT_EQ(ellipsa_sheet_result_shape(&r, &c, dist, args.data(), 2), ELLIPSA_ERR_SHAPE);
  // a cell_kind byte that is not an ELLIPSA_SHEET_INPUT_ value
  std::vector<uint8_t> kinds(120, 0);
  kinds[7] = 9;
  args = {range(x.data(), 40, 3, kinds.data())};
  EXPECT_EQ(ellipsa_sheet_result_shape(&r, &c, dist, args.data(), 1), ELLIPSA_ERR_ARGUMENT);
  // NULL pointers and a negative count
  args = {range(x.data(), 40, 3)};
  EXPECT_EQ(ellipsa_sheet_result_shape(nullptr, &c, dist, args.data(), 1), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_sheet_result_shape(&r, &c, dist, nullptr, 1), ELLIPSA_ERR_NULL);
  EXPECT_EQ(ellipsa_sheet_result_shape(&r, &c, dist, args.data(), -1), ELLIPSA_ERR_ARGUMENT);
  EXPECT_EQ(ellipsa_sheet_result_shape(&r, &c, 9999, args.data(), 1), ELLIPSA_ERR_ARGUMENT);
  // cells smaller than the result; rows x cols that overflow
  std::vector<ellipsa_sheet_cell> cells(39);
  EXPECT_EQ(ellipsa_sheet_evaluate(cells.data(), 39, 1, nullptr, dist, args.data(), 1), ELLIPSA_ERR_SHAPE);
  EXPECT_EQ(ellipsa_sheet_evaluate(cells.data(), INT64_MAX, 2, nullptr, dist, args.data(), 1), ELLIPSA_ERR_SHAPE);
  EXPECT_EQ(ellipsa_sheet_evaluate(nullptr, 40, 1, nullptr, dist, args.data(), 1), ELLIPSA_ERR_NULL);
}

TEST(SheetCatalog, ShapesFollowTheCatalog) {
  const auto& x = data();
  const auto rows = range(x.data(), 40, 3);
  const struct {
    const char* name;
    std::vector<ellipsa_sheet_value> args;
    int64_t rows, cols;
  } cases[] = {
      {"ELL.DIST2", {rows}, 40, 1},
      {"ELL.CONTRIB", {rows}, 40, 3},
      {"ELL.CENTER", {rows}, 1, 3},
      {"ELL.SCATTER", {rows}, 3, 3},
      {"ELL.SHRINKAGE", {rows}, 1, 1},
      {"ELL.MEMBERSHIP", {rows, absent(), text("1-3")}, 40, 3},
      {"ELL.REGIMETABLE", {rows, text("1-3"), text("all")}, 13, 8},
      {"ELL.REGIMETABLE", {rows, text("2"), text("tied")}, 2, 8},
      {"ELL.CHI2INV", {number(0.5), number(2)}, 1, 1},
  };
  for (const auto& c : cases) {
    SCOPED_TRACE(c.name);
    int64_t r = 0, k = 0;
    ASSERT_EQ(ellipsa_sheet_result_shape(&r, &k, index_of(c.name), c.args.data(), static_cast<int32_t>(c.args.size())),
              ELLIPSA_OK)
        << ellipsa_last_error();
    EXPECT_EQ(r, c.rows);
    EXPECT_EQ(k, c.cols);
  }
}
