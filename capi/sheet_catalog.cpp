// The catalog table and the exported functions that describe it.
#include "sheet_catalog.hpp"

#include <algorithm>
#include <cctype>
#include <string>

#include "boundary.hpp"
#include "result_struct.hpp"

namespace ellipsa::capi::sheet {
namespace {

constexpr int32_t kRange = ELLIPSA_SHEET_ARG_RANGE;
constexpr int32_t kNumber = ELLIPSA_SHEET_ARG_NUMBER;
constexpr int32_t kText = ELLIPSA_SHEET_ARG_TEXT;
constexpr int32_t kFlag = ELLIPSA_SHEET_ARG_FLAG;

// Arguments shared by several functions, spelled once.
const ArgumentSpec kRows{"rows", "the readings: one row per record, one column per variable; blanks are missing",
                         kRange, false, ""};
const ArgumentSpec kReference{"reference",
                              "clean reference rows to fit the profile on (same columns); left out: fit on rows itself",
                              kRange, true, "rows"};
const ArgumentSpec kRobustMethod{"method", "classical, ledoit-wolf, oas, mcd, detmcd or mrcd", kText, true, "mcd"};
const ArgumentSpec kAlpha{"alpha", "MCD family: fraction of rows the fit must cover, 0.5 to 1", kNumber, true,
                          "0.5 (mrcd: 0.75)"};
const ArgumentSpec kSeed{"seed", "seed of the random starts (mcd, mixtures), a whole number >= 0", kNumber, true, "0"};
const ArgumentSpec kLevel{"level", "flagging level: a row is flagged above this chi-square quantile", kNumber, true,
                          "0.975"};
const ArgumentSpec kComponents{"components", "number of regimes K, or a range such as 1-4 chosen by BIC", kText, true,
                               "1-4"};
const ArgumentSpec kStructure{"structure", "covariance of each regime: full, diagonal, tied, spherical or all", kText,
                              true, "full"};

const ArgumentSpec kLimit{"limit", "distribution of the p-value and flag: new-rows, fitting-rows or chi2", kText, true,
                          "fitting-rows without a reference, new-rows with one"};

const char* const kScreening = "ellipsa: screening";
const char* const kProfile = "ellipsa: profile";
const char* const kRegimes = "ellipsa: regimes";
const char* const kLimits = "ellipsa: limits and distributions";

std::vector<FunctionSpec> build() {
  std::vector<FunctionSpec> c;
  c.push_back({"ELL.DIST2",
               kScreening,
               "Squared Mahalanobis distance of each row from a robust profile (observed cells only)",
               {kRows, kReference, kRobustMethod, kAlpha, kSeed},
               ELLIPSA_SHEET_SHAPE_PER_ROW,
               shape_per_row,
               eval_distance});
  c.push_back({"ELL.PVALUE",
               kScreening,
               "Chance of a distance at least this large for a row that fits the profile",
               {kRows, kReference, kRobustMethod, kAlpha, kSeed, kLimit},
               ELLIPSA_SHEET_SHAPE_PER_ROW,
               shape_per_row,
               eval_p_value});
  c.push_back({"ELL.FLAG",
               kScreening,
               "1 when a row lies beyond the flagging level of the profile, else 0",
               {kRows, kReference, kLevel, kRobustMethod, kAlpha, kSeed, kLimit},
               ELLIPSA_SHEET_SHAPE_PER_ROW,
               shape_per_row,
               eval_flag});
  c.push_back({"ELL.DRIVER",
               kScreening,
               "Column number (1 = first column of rows) that adds most to each row's distance",
               {kRows, kReference, kRobustMethod, kAlpha, kSeed},
               ELLIPSA_SHEET_SHAPE_PER_ROW,
               shape_per_row,
               eval_driver});
  c.push_back(
      {"ELL.CONTRIB",
       kScreening,
       "Each variable's share of each row's squared distance (the shares sum to it)",
       {kRows,
        kReference,
        {"conditional", "TRUE: the drop in distance when the variable is left out instead", kFlag, true, "FALSE"},
        kRobustMethod,
        kAlpha,
        kSeed},
       ELLIPSA_SHEET_SHAPE_ROW_BLOCK,
       shape_row_block_p,
       eval_contributions});
  c.push_back({"ELL.CENTER",
               kProfile,
               "Location of the profile: one value per column",
               {kRows, kRobustMethod, kAlpha, kSeed},
               ELLIPSA_SHEET_SHAPE_PER_COLUMN,
               shape_per_column,
               eval_center});
  c.push_back({"ELL.SCATTER",
               kProfile,
               "Scatter (covariance) matrix of the profile, p x p",
               {kRows, kRobustMethod, kAlpha, kSeed},
               ELLIPSA_SHEET_SHAPE_SQUARE,
               shape_square,
               eval_scatter});
  c.push_back({"ELL.SHRINKAGE",
               kProfile,
               "Shrinkage intensity towards a scaled identity (0 = none, 1 = full)",
               {kRows, {"method", "ledoit-wolf, oas or mrcd", kText, true, "ledoit-wolf"}, kAlpha, kSeed},
               ELLIPSA_SHEET_SHAPE_SCALAR,
               shape_scalar,
               eval_shrinkage});
  c.push_back({"ELL.REGIME",
               kRegimes,
               "Most probable regime of each row (1 = first) under a Gaussian mixture",
               {kRows, kReference, kComponents, kStructure, kSeed},
               ELLIPSA_SHEET_SHAPE_PER_ROW,
               shape_per_row,
               eval_regime});
  c.push_back({"ELL.MEMBERSHIP",
               kRegimes,
               "Probability of each regime for each row (one column per regime; rows sum to 1)",
               {kRows, kReference, kComponents, kStructure, kSeed},
               ELLIPSA_SHEET_SHAPE_ROW_BLOCK,
               shape_memberships,
               eval_membership});
  c.push_back({"ELL.REGIMETABLE",
               kRegimes,
               "Every mixture tried, with log-likelihood, BIC and ICL (lower is better); a title row first",
               {kRows, kComponents, {"structure", "full, diagonal, tied, spherical or all", kText, true, "all"}, kSeed},
               ELLIPSA_SHEET_SHAPE_TABLE,
               shape_selection_table,
               eval_selection_table});
  c.push_back({"ELL.T2LIMIT",
               kLimits,
               "Upper control limit of Hotelling T^2 for individual rows (Tracy, Young & Mason 1992)",
               {{"m", "reference rows the mean and covariance come from", kNumber, false, ""},
                {"p", "number of variables", kNumber, false, ""},
                kLevel,
                {"phase", "1: rows that were in the fit; 2: new rows", kNumber, true, "2"}},
               ELLIPSA_SHEET_SHAPE_SCALAR,
               shape_scalar,
               eval_t2_limit});
  c.push_back(
      {"ELL.CHI2INV",
       kLimits,
       "Chi-square quantile: the x with P(X <= x) = probability",
       {{"probability", "in [0, 1)", kNumber, false, ""}, {"df", "degrees of freedom, > 0", kNumber, false, ""}},
       ELLIPSA_SHEET_SHAPE_SCALAR,
       shape_scalar,
       eval_chi2_quantile});
  c.push_back({"ELL.CHI2TAIL",
               kLimits,
               "Chi-square upper tail P(X > x), accurate far into the tail",
               {{"x", "the value", kNumber, false, ""}, {"df", "degrees of freedom, > 0", kNumber, false, ""}},
               ELLIPSA_SHEET_SHAPE_SCALAR,
               shape_scalar,
               eval_chi2_tail});
  c.push_back({"ELL.FINV",
               kLimits,
               "F quantile: the x with P(X <= x) = probability",
               {{"probability", "in [0, 1)", kNumber, false, ""},
                {"df1", "numerator degrees of freedom, in [1e-100, 1e12]", kNumber, false, ""},
                {"df2", "denominator degrees of freedom, in [1e-100, 1e12]", kNumber, false, ""}},
               ELLIPSA_SHEET_SHAPE_SCALAR,
               shape_scalar,
               eval_f_quantile});
  c.push_back({"ELL.FTAIL",
               kLimits,
               "F upper tail P(X > x)",
               {{"x", "the value", kNumber, false, ""},
                {"df1", "numerator degrees of freedom, in [1e-100, 1e12]", kNumber, false, ""},
                {"df2", "denominator degrees of freedom, in [1e-100, 1e12]", kNumber, false, ""}},
               ELLIPSA_SHEET_SHAPE_SCALAR,
               shape_scalar,
               eval_f_tail});
  c.push_back({"ELL.BETAINV",
               kLimits,
               "Beta quantile: the x with P(X <= x) = probability",
               {{"probability", "in [0, 1]", kNumber, false, ""},
                {"a", "first shape, in [1e-100, 1e12]", kNumber, false, ""},
                {"b", "second shape, in [1e-100, 1e12]", kNumber, false, ""}},
               ELLIPSA_SHEET_SHAPE_SCALAR,
               shape_scalar,
               eval_beta_quantile});
  c.push_back({"ELL.BETATAIL",
               kLimits,
               "Beta upper tail P(X > x)",
               {{"x", "the value", kNumber, false, ""},
                {"a", "first shape, in [1e-100, 1e12]", kNumber, false, ""},
                {"b", "second shape, in [1e-100, 1e12]", kNumber, false, ""}},
               ELLIPSA_SHEET_SHAPE_SCALAR,
               shape_scalar,
               eval_beta_tail});
  c.push_back({"ELL.VERSION",
               kLimits,
               "Version of the ellipsa library the sheet uses: a quick check that the functions are installed",
               {},
               ELLIPSA_SHEET_SHAPE_SCALAR,
               shape_scalar,
               eval_version});
  return c;
}

}  // namespace

const std::vector<FunctionSpec>& catalog() {
  static const std::vector<FunctionSpec> c = build();
  return c;
}

const FunctionSpec& function_at(int32_t index) {
  const auto& c = catalog();
  if (index < 0 || static_cast<size_t>(index) >= c.size())
    throw Misuse{ELLIPSA_ERR_ARGUMENT, "no sheet function with index " + std::to_string(index) + " (there are " +
                                           std::to_string(c.size()) + ")"};
  return c[static_cast<size_t>(index)];
}

}  // namespace ellipsa::capi::sheet

using ellipsa::capi::guard;
using ellipsa::capi::Misuse;
using ellipsa::capi::require_not_null;
namespace sheet = ellipsa::capi::sheet;

extern "C" {

ELLIPSA_API ellipsa_status ellipsa_sheet_function_count(int32_t* count) {
  return guard("ellipsa_sheet_function_count", [&] {
    require_not_null(count, "count");
    *count = static_cast<int32_t>(sheet::catalog().size());
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_sheet_function_describe(ellipsa_sheet_function_info* out, int32_t index) {
  return guard("ellipsa_sheet_function_describe", [&] {
    require_not_null(out, "out");
    const auto& f = sheet::function_at(index);
    ellipsa_sheet_function_info full{};
    full.struct_size = sizeof(full);
    full.name = f.name;
    full.category = f.category;
    full.help = f.help;
    full.argument_count = static_cast<int32_t>(f.arguments.size());
    full.required_count = static_cast<int32_t>(
        std::count_if(f.arguments.begin(), f.arguments.end(), [](const auto& a) { return !a.optional; }));
    full.result_shape = f.shape;
    ellipsa::capi::write_sized(out, full, sizeof(ellipsa_sheet_function_info), "ellipsa_sheet_function_info");
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_sheet_argument_describe(ellipsa_sheet_argument_info* out, int32_t index,
                                                           int32_t argument) {
  return guard("ellipsa_sheet_argument_describe", [&] {
    require_not_null(out, "out");
    const auto& f = sheet::function_at(index);
    if (argument < 0 || static_cast<size_t>(argument) >= f.arguments.size())
      throw Misuse{ELLIPSA_ERR_ARGUMENT, std::string(f.name) + " has no argument " + std::to_string(argument)};
    const auto& a = f.arguments[static_cast<size_t>(argument)];
    ellipsa_sheet_argument_info full{};
    full.struct_size = sizeof(full);
    full.name = a.name;
    full.help = a.help;
    full.kind = a.kind;
    full.optional = a.optional ? 1 : 0;
    full.default_text = a.default_text;
    ellipsa::capi::write_sized(out, full, sizeof(ellipsa_sheet_argument_info), "ellipsa_sheet_argument_info");
    return ELLIPSA_OK;
  });
}

ELLIPSA_API ellipsa_status ellipsa_sheet_function_find(int32_t* index, const char* name) {
  return guard("ellipsa_sheet_function_find", [&] {
    require_not_null(index, "index");
    require_not_null(name, "name");
    const auto& c = sheet::catalog();
    const auto same = [](const char* a, const char* b) {
      for (; *a && *b; ++a, ++b)
        if (std::toupper(static_cast<unsigned char>(*a)) != std::toupper(static_cast<unsigned char>(*b))) return false;
      return *a == *b;
    };
    for (size_t i = 0; i < c.size(); ++i)
      if (same(c[i].name, name)) {
        *index = static_cast<int32_t>(i);
        return ELLIPSA_OK;
      }
    throw Misuse{ELLIPSA_ERR_ARGUMENT, std::string("no sheet function named '") + name + "'"};
  });
}

}  // extern "C"
