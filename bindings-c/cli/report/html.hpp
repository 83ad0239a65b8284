// The screening report as one self-contained HTML page: everything the page
// shows, already computed (cmd_report.cpp fills it through the C interface),
// and the function that lays it out. Nothing here calls the library.
#pragma once
#include <cstdint>
#include <string>
#include <utility>
#include <vector>

namespace ellipsa::cli {

struct ReportRow {
  std::int64_t line = 0;  // 1-based line of the data file
  std::string id;         // first text field of the row, "" if none
  double d2 = 0.0;        // squared distance under the model (NaN: nothing observed)
  double p_value = 1.0;
  double classical_d2 = 0.0;   // under a classical fit of the same rows (NaN if none)
  std::int32_t observed = 0;   // coordinates observed
  std::int32_t component = 0;  // mixtures: most probable component (0-based)
  bool flagged = false;        // over_limit, or (mixtures) low_density
  bool over_limit = false;     // squared distance above the chi-square limit
  bool low_density = false;    // mixtures: density below the model's calibrated cutoff
  bool scorable = true;        // at least one coordinate observed
  std::string top;             // top contributors, "name (share%)", for the table
};

struct ReportComponent {
  std::vector<double> location;  // p
  std::vector<double> scatter;   // p x p row-major
  double weight = 1.0;
};

struct ReportCandidate {
  std::int32_t components = 1;
  std::string structure;  // "full", "diagonal", ...
  double bic = 0.0, icl = 0.0;
  bool chosen = false;
};

// One point of the distance Q-Q plot: chi-square quantile and observed squared distance.
struct QuantilePoint {
  double expected = 0.0, observed = 0.0;
  std::size_t row = 0;
};

struct ReportInput {
  std::string title;
  std::string model_file, data_file, version;
  std::string method;  // as the library names it
  bool mixture = false;
  std::int64_t p = 0;
  std::vector<std::string> columns;  // the model's variables, in order
  double level = 0.975;
  double cutoff = 0.0;                                     // chi2 quantile (df p) at level: the squared-distance cutoff
  double cutoff_2d = 0.0;                                  // chi2 quantile (df 2) at level: the pairwise ellipses
  std::vector<std::pair<std::string, std::string>> facts;  // model facts for the summary

  std::vector<double> values;        // rows x p row-major, NaN for missing cells
  std::vector<double> contribution;  // rows x p row-major, as the library returns them
  std::vector<ReportRow> rows;

  bool have_classical = false;
  std::string classical_note;  // why there is no classical fit, when there is none

  std::vector<ReportComponent> components;
  std::vector<ReportCandidate> candidates;
  std::vector<QuantilePoint> quantiles;     // fully observed rows, ascending
  std::vector<std::size_t> matrix_columns;  // variables asked for the scatter-plot matrix (empty: choose)
};

// Pieces shared by the pages: the style sheet, a p-value as HTML or plain text, a
// formatted number, and an
// at-a-glance tile (key, value, note; alert colours the value).
const char* report_style();
std::string report_p_value(double p);
std::string report_p_value_plain(double p);  // the same as plain text ("NA", "< 1e-300", "0.012", "3.1e-05")
std::string report_number(const char* format, double v);  // one printf-formatted number
std::string report_tile(const std::string& key, const std::string& value, const std::string& note, bool alert);

// The whole page. Deterministic: the same input gives the same bytes.
std::string render_report(const ReportInput& in);

}  // namespace ellipsa::cli
