// The model file: JSON text in both directions. Loading trusts nothing: every
// field is type-, shape- and value-checked, and a hostile file (deep nesting,
// huge sizes, non-finite or indefinite matrices) is refused with a message.
#include <cmath>
#include <cstring>
#include <nlohmann/json.hpp>
#include <string>

#include "boundary.hpp"
#include "core/error.hpp"
#include "model.hpp"
#include "options.hpp"
#include "score_reference.hpp"

using ellipsa::capi::guard;
using ellipsa::capi::Misuse;
using ellipsa::capi::require_not_null;
using nlohmann::json;

namespace ellipsa::capi {
const char* method_name(ellipsa_method m);
bool method_from_name(const char* name, ellipsa_method* out);

namespace {

// Format 2 adds the scoring reference and the small-sample factors; format 1
// files still load (scored against the chi-square, as they were written for).
constexpr int kFormatVersion = 2;
constexpr int64_t kMaxBytes = int64_t{1} << 30;
constexpr int kMaxDepth = 16;
constexpr int64_t kMaxDimension = 100000;
// Row numbers and counts: far beyond any table, far from overflow in sums.
constexpr int64_t kRowLimit = INT64_MAX / 2;

int32_t structure_from_name(const std::string& s) { return ellipsa::capi::structure_from_name(s, false); }
using ellipsa::capi::structure_name;

json vector_json(const Eigen::VectorXd& v) {
  json a = json::array();
  for (Eigen::Index i = 0; i < v.size(); ++i) a.push_back(v(i));
  return a;
}

json matrix_json(const Eigen::MatrixXd& m) {
  json a = json::array();
  for (Eigen::Index i = 0; i < m.rows(); ++i) {
    json row = json::array();
    for (Eigen::Index j = 0; j < m.cols(); ++j) row.push_back(m(i, j));
    a.push_back(std::move(row));
  }
  return a;
}

json rows_json(const std::vector<int64_t>& rows) {
  json a = json::array();
  for (int64_t r : rows) a.push_back(r + 1);  // files use 1-based data rows
  return a;
}

json number_or_null(double v) { return std::isfinite(v) ? json(v) : json(nullptr); }

// ---- reading ------------------------------------------------------------

[[noreturn]] void format_error(const std::string& message) { throw core::Error(core::ErrorKind::Format, message); }

const json& field(const json& obj, const char* key) {
  auto it = obj.find(key);
  if (it == obj.end()) format_error(std::string("missing field \"") + key + "\"");
  return *it;
}

double number(const json& v, const std::string& where) {
  if (!v.is_number()) format_error(where + " must be a number");
  const double d = v.get<double>();
  if (!std::isfinite(d)) format_error(where + " must be finite");
  return d;
}

int64_t integer(const json& v, const std::string& where, int64_t lo, int64_t hi) {
  if (!v.is_number_integer()) format_error(where + " must be an integer");
  const int64_t i = v.is_number_unsigned()
                        ? static_cast<int64_t>(std::min<uint64_t>(v.get<uint64_t>(), uint64_t{INT64_MAX}))
                        : v.get<int64_t>();
  if (i < lo || i > hi) format_error(where + " must lie in [" + std::to_string(lo) + ", " + std::to_string(hi) + "]");
  return i;
}

Eigen::VectorXd read_vector(const json& v, int64_t p, const std::string& where) {
  if (!v.is_array() || static_cast<int64_t>(v.size()) != p)
    format_error(where + " must be an array of " + std::to_string(p) + " numbers");
  Eigen::VectorXd out(p);
  for (int64_t i = 0; i < p; ++i) out(i) = number(v[i], where + "[" + std::to_string(i) + "]");
  return out;
}

Eigen::MatrixXd read_scatter(const json& v, int64_t p, const std::string& where) {
  if (!v.is_array() || static_cast<int64_t>(v.size()) != p)
    format_error(where + " must be an array of " + std::to_string(p) + " rows");
  Eigen::MatrixXd m(p, p);
  for (int64_t i = 0; i < p; ++i) m.row(i) = read_vector(v[i], p, where + "[" + std::to_string(i) + "]").transpose();
  const double scale = m.cwiseAbs().maxCoeff();
  for (int64_t i = 0; i < p; ++i)
    for (int64_t j = 0; j < i; ++j)
      if (std::abs(m(i, j) - m(j, i)) > 1e-12 * scale)
        format_error(where + " is not symmetric (entries " + std::to_string(i + 1) + "," + std::to_string(j + 1) + ")");
  // Symmetric to the last bit, as every fit leaves it: the tolerance above
  // admits rounding in hand-edited files; keep their average (found by fuzzing:
  // the model kept the asymmetry and saved it back).
  for (int64_t i = 0; i < p; ++i)
    for (int64_t j = 0; j < i; ++j)
      if (m(i, j) != m(j, i)) m(i, j) = m(j, i) = 0.5 * m(i, j) + 0.5 * m(j, i);
  core::CholeskyFactor f;
  if (!f.compute(m)) format_error(where + " is not positive definite");
  return m;
}

std::vector<int64_t> read_rows(const json& v, int64_t limit, const std::string& where) {
  if (!v.is_array()) format_error(where + " must be an array of row numbers");
  std::vector<int64_t> rows;
  rows.reserve(v.size());
  for (size_t i = 0; i < v.size(); ++i) {
    const int64_t r = integer(v[i], where + "[" + std::to_string(i) + "]", 1, limit);
    if (!rows.empty() && r - 1 <= rows.back()) format_error(where + " must be strictly ascending");
    rows.push_back(r - 1);
  }
  return rows;
}

// Format 2, Gaussian models: {"kind": "chi2" | "new-rows" | "fitting-rows",
// "rows": m of the new-rows distribution, "fitting_rows": m of the
// fitting-rows one}; both positive and at most 1000 n_rows_used (effective
// counts may exceed the rows), and the recorded kind must be usable.
void read_reference(const json& j, ellipsa_model& m) {
  const auto& r = field(j, "scoring_reference");
  if (!r.is_object()) format_error("\"scoring_reference\" must be an object");
  const auto& kind = field(r, "kind");
  int32_t ref = 0;
  if (!kind.is_string() || !reference_from_name(kind.get<std::string>().c_str(), &ref) ||
      ref == ELLIPSA_REFERENCE_MODEL)
    format_error("scoring_reference.kind must be \"chi2\", \"new-rows\" or \"fitting-rows\"");
  m.reference = ref;
  m.reference_rows = number(field(r, "rows"), "scoring_reference.rows");
  m.fitting_reference_rows = number(field(r, "fitting_rows"), "scoring_reference.fitting_rows");
  const double limit = 1000.0 * static_cast<double>(m.rows_used);
  for (double v : {m.reference_rows, m.fitting_reference_rows})
    if (!(v > 0.0) || v > limit) format_error("scoring_reference rows must lie in (0, 1000 n_rows_used]");
  try {
    score_reference(m, ref);
  } catch (const Misuse&) {
    format_error("scoring_reference.rows is too small for the reference and the number of columns");
  }
}

}  // namespace

std::string model_to_json(const ellipsa_model& m) {
  // Created as an object, not turned into one by the first operator[]: that
  // conversion (nlohmann 3.11) marks the value an object before allocating it,
  // so an allocation failure there left a null object that the destructor
  // then read (found by tests/alloc).
  json j = json::object();
  j["format"] = "ellipsa-model";
  j["format_version"] = kFormatVersion;
  j["kind"] = m.kind == ELLIPSA_KIND_MIXTURE ? "mixture" : "gaussian";
  j["method"] = method_name(m.method);
  j["columns"] = m.columns;
  j["n_rows_used"] = m.rows_used;
  j["n_rows_dropped"] = m.rows_dropped;
  j["dropped_rows"] = rows_json(m.dropped_rows);
  if (m.kind == ELLIPSA_KIND_GAUSSIAN) {
    const auto& c = m.components.front();
    j["location"] = vector_json(c.location);
    j["scatter"] = matrix_json(c.scatter);
    if (m.method == ELLIPSA_METHOD_CLASSICAL) j["normalisation"] = m.divisor == ELLIPSA_DIVISOR_N ? "n" : "n-1";
    if (m.shrinkage_intensity) j["shrinkage_intensity"] = *m.shrinkage_intensity;
    j["scoring_reference"] = {
        {"kind", reference_name(m.reference)}, {"rows", m.reference_rows}, {"fitting_rows", m.fitting_reference_rows}};
    if (m.robust) {
      const auto& r = *m.robust;
      j["h"] = r.h;
      j["raw_location"] = vector_json(r.raw_location);
      j["raw_scatter"] = matrix_json(r.raw_scatter);
      j["h_subset_rows"] = rows_json(r.h_subset_rows);
      j["outlier_rows"] = rows_json(r.outlier_rows);
      j["consistency_factor"] = r.consistency_factor;
      // Written only for the median rule, so files of the default rule stay as they were.
      if (r.consistency_rule == ELLIPSA_CONSISTENCY_MEDIAN) j["consistency_rule"] = "median";
      j["reweight_factor"] = r.reweight_factor;
      if (m.method == ELLIPSA_METHOD_MCD || m.method == ELLIPSA_METHOD_DETMCD)
        j["small_sample_factors"] = {{"raw", r.small_sample_raw}, {"reweighted", r.small_sample_reweighted}};
      j["raw_log_det"] = r.raw_log_det;
      if (r.regularisation) j["regularisation"] = {{"rho", *r.regularisation}, {"target", r.regularisation_target}};
    }
  } else {
    const auto& x = *m.mixture;
    j["structure"] = structure_name(x.structure);
    json comps = json::array();
    for (const auto& c : m.components)
      comps.push_back(
          {{"weight", c.weight}, {"location", vector_json(c.location)}, {"scatter", matrix_json(c.scatter)}});
    j["components"] = std::move(comps);
    j["log_likelihood"] = x.log_likelihood;
    j["parameters"] = x.parameters;
    j["bic"] = x.bic;
    j["icl"] = x.icl;
    j["converged"] = x.converged;
    j["iterations"] = x.iterations;
    j["log_density_cutoff"] = x.log_density_cutoff;
    j["cutoff_level"] = x.cutoff_level;
    if (!x.selection.empty()) {
      json table = json::array();
      for (const auto& c : x.selection)
        table.push_back({{"components", c.components},
                         {"structure", structure_name(c.structure)},
                         {"log_likelihood", number_or_null(c.log_likelihood)},
                         {"parameters", c.parameters},
                         {"bic", number_or_null(c.bic)},
                         {"icl", number_or_null(c.icl)},
                         {"converged", c.converged},
                         {"chosen", c.chosen}});
      // Optional: only a candidate that could not be fitted has a reason.
      for (size_t i = 0; i < x.selection.size(); ++i)
        if (!x.selection[i].reason.empty()) table[i]["reason"] = x.selection[i].reason;
      j["selection"] = std::move(table);
    }
  }
  // nlohmann writes each double in the shortest form that reads back to the
  // same value (at most 17 significant digits): the file round-trips exactly.
  return j.dump(1) + "\n";
}

namespace {

// Parses the text with the depth guard and checks the format and version:
// the JSON object, or a format error.
json parse_model_text(const char* text, int64_t length, int64_t* version) {
  json j;
  try {
    // Refuse deep nesting before it can exhaust the stack.
    auto depth_guard = [](int depth, json::parse_event_t, json&) {
      if (depth > kMaxDepth) throw core::Error(core::ErrorKind::Format, "nesting deeper than 16 levels");
      return true;
    };
    j = json::parse(text, text + length, depth_guard);
  } catch (const json::exception& e) {
    // parse_error, and out_of_range for numbers beyond double (1e999).
    format_error(std::string("not valid JSON: ") + e.what());
  }
  if (!j.is_object()) format_error("the top level must be a JSON object");
  if (!field(j, "format").is_string() || field(j, "format").get<std::string>() != "ellipsa-model")
    format_error("\"format\" must be \"ellipsa-model\"");
  *version = integer(field(j, "format_version"), "format_version", 1, 1000000);
  if (*version < 1 || *version > kFormatVersion)
    format_error("format_version " + std::to_string(*version) + " is not supported (this library reads 1 to " +
                 std::to_string(kFormatVersion) + ")");
  return j;
}

// What every model has: kind, method, columns, the rows used and dropped.
void read_identity(const json& j, ellipsa_model& m) {
  const auto& kind = field(j, "kind");
  if (!kind.is_string()) format_error("\"kind\" must be a string");
  if (kind == "gaussian") m.kind = ELLIPSA_KIND_GAUSSIAN;
  else if (kind == "mixture") m.kind = ELLIPSA_KIND_MIXTURE;
  else format_error("unknown kind \"" + kind.get<std::string>() + "\"");

  const auto& method = field(j, "method");
  if (!method.is_string() || !method_from_name(method.get<std::string>().c_str(), &m.method))
    format_error("unknown method");
  if ((m.method == ELLIPSA_METHOD_MIXTURE) != (m.kind == ELLIPSA_KIND_MIXTURE))
    format_error("method and kind disagree");

  const auto& cols = field(j, "columns");
  if (!cols.is_array() || cols.empty() || static_cast<int64_t>(cols.size()) > kMaxDimension)
    format_error("\"columns\" must be a non-empty array of names");
  for (const auto& c : cols) {
    if (!c.is_string()) format_error("every column name must be a string");
    m.columns.push_back(c.get<std::string>());
  }
  m.rows_used = integer(field(j, "n_rows_used"), "n_rows_used", 1, kRowLimit);
  if (j.contains("dropped_rows")) m.dropped_rows = read_rows(j["dropped_rows"], kRowLimit, "dropped_rows");
  m.rows_dropped = j.contains("n_rows_dropped") ? integer(j["n_rows_dropped"], "n_rows_dropped", 0, kRowLimit)
                                                : static_cast<int64_t>(m.dropped_rows.size());
  if (m.rows_dropped < static_cast<int64_t>(m.dropped_rows.size()))
    format_error("n_rows_dropped is smaller than the number of dropped_rows");
}

// The robust part of an MCD-family model: h, the raw estimate, the subsets,
// the factors and (MRCD) the regularisation.
RobustPart read_robust_part(const json& j, int64_t version, ellipsa_model& m) {
  const int64_t p = m.dimension();
  RobustPart r;
  r.h = integer(field(j, "h"), "h", 1, kRowLimit);
  r.raw_location = read_vector(field(j, "raw_location"), p, "raw_location");
  r.raw_scatter = read_scatter(field(j, "raw_scatter"), p, "raw_scatter");
  r.h_subset_rows = read_rows(field(j, "h_subset_rows"), kRowLimit, "h_subset_rows");
  r.outlier_rows = read_rows(field(j, "outlier_rows"), kRowLimit, "outlier_rows");
  r.consistency_factor = number(field(j, "consistency_factor"), "consistency_factor");
  if (j.contains("consistency_rule")) {
    const auto& rule = j["consistency_rule"];
    if (!rule.is_string() || (rule.get<std::string>() != "median" && rule.get<std::string>() != "normal"))
      format_error("\"consistency_rule\" must be \"normal\" or \"median\"");
    r.consistency_rule = rule.get<std::string>() == "median" ? ELLIPSA_CONSISTENCY_MEDIAN : ELLIPSA_CONSISTENCY_NORMAL;
  }
  r.reweight_factor = number(field(j, "reweight_factor"), "reweight_factor");
  r.raw_log_det = number(field(j, "raw_log_det"), "raw_log_det");
  if (version >= 2 && (m.method == ELLIPSA_METHOD_MCD || m.method == ELLIPSA_METHOD_DETMCD)) {
    const auto& f = field(j, "small_sample_factors");
    if (!f.is_object()) format_error("\"small_sample_factors\" must be an object");
    r.small_sample_raw = number(field(f, "raw"), "small_sample_factors.raw");
    r.small_sample_reweighted = number(field(f, "reweighted"), "small_sample_factors.reweighted");
    if (!(r.small_sample_raw > 0.0) || !(r.small_sample_reweighted > 0.0))
      format_error("small_sample_factors must be positive");
  }
  if (j.contains("regularisation")) {
    const auto& reg = j["regularisation"];
    if (!reg.is_object()) format_error("\"regularisation\" must be an object");
    r.regularisation = number(field(reg, "rho"), "regularisation.rho");
    if (!field(reg, "target").is_string()) format_error("regularisation.target must be a string");
    r.regularisation_target = reg["target"].get<std::string>();
    m.shrinkage_intensity = r.regularisation;
  }
  return r;
}

// The single-Gaussian part: location, scatter, what each method adds, and the
// scoring reference.
void read_gaussian_part(const json& j, int64_t version, ellipsa_model& m) {
  const int64_t p = m.dimension();
  ellipsa::capi::Component c;
  c.location = read_vector(field(j, "location"), p, "location");
  c.scatter = read_scatter(field(j, "scatter"), p, "scatter");
  m.components.push_back(std::move(c));
  if (m.method == ELLIPSA_METHOD_CLASSICAL) {
    const auto& norm = field(j, "normalisation");
    if (norm == "n") m.divisor = ELLIPSA_DIVISOR_N;
    else if (norm == "n-1") m.divisor = ELLIPSA_DIVISOR_N_MINUS_1;
    else format_error("\"normalisation\" must be \"n\" or \"n-1\"");
  }
  if (m.method == ELLIPSA_METHOD_LEDOIT_WOLF || m.method == ELLIPSA_METHOD_OAS) {
    const double s = number(field(j, "shrinkage_intensity"), "shrinkage_intensity");
    if (s < 0.0 || s > 1.0) format_error("shrinkage_intensity must lie in [0, 1]");
    m.shrinkage_intensity = s;
  }
  if (m.method == ELLIPSA_METHOD_MCD || m.method == ELLIPSA_METHOD_DETMCD || m.method == ELLIPSA_METHOD_MRCD)
    m.robust = read_robust_part(j, version, m);
  if (version >= 2) {
    read_reference(j, m);
  } else {  // format 1: chi-square, other references on request
    const ReferenceRows rows = reference_rows_of(m);
    m.reference_rows = rows.new_rows;
    m.fitting_reference_rows = rows.fitting_rows;
  }
}

// A mixture model's selection table: one entry per candidate (K, structure).
std::vector<Candidate> read_selection(const json& table) {
  if (!table.is_array() || table.size() > 10000) format_error("\"selection\" must be an array");
  std::vector<Candidate> out;
  for (size_t i = 0; i < table.size(); ++i) {
    const std::string where = "selection[" + std::to_string(i) + "]";
    const auto& e = table[i];
    if (!e.is_object()) format_error(where + " must be an object");
    Candidate c;
    c.components = static_cast<int32_t>(integer(field(e, "components"), where + ".components", 1, 100));
    c.structure = field(e, "structure").is_string() ? structure_from_name(e["structure"].get<std::string>()) : 0;
    if (c.structure == 0) format_error(where + ".structure is unknown");
    auto opt = [&](const char* key) {
      const auto& v = field(e, key);
      return v.is_null() ? std::nan("") : number(v, where + "." + key);
    };
    c.log_likelihood = opt("log_likelihood");
    c.parameters = integer(field(e, "parameters"), where + ".parameters", 1, kRowLimit);
    c.bic = opt("bic");
    c.icl = opt("icl");
    if (!field(e, "converged").is_boolean() || !field(e, "chosen").is_boolean())
      format_error(where + ": converged and chosen must be true or false");
    c.converged = e["converged"].get<bool>();
    c.chosen = e["chosen"].get<bool>();
    if (e.contains("reason")) {  // optional (files before it was stored have none)
      if (!e["reason"].is_string()) format_error(where + ".reason must be a string");
      c.reason = e["reason"].get<std::string>();
      if (c.reason.size() > 4096) format_error(where + ".reason is longer than 4096 bytes");
    }
    out.push_back(c);
  }
  return out;
}

// The mixture part: structure, components, the fit's summary and selection.
void read_mixture_part(const json& j, ellipsa_model& m) {
  const int64_t p = m.dimension();
  ellipsa::capi::MixturePart x;
  const auto& st = field(j, "structure");
  x.structure = st.is_string() ? structure_from_name(st.get<std::string>()) : 0;
  if (x.structure == 0) format_error("unknown \"structure\"");
  const auto& comps = field(j, "components");
  if (!comps.is_array() || comps.empty() || comps.size() > 100)
    format_error("\"components\" must be an array of 1 to 100 components");
  double total = 0.0;
  for (size_t k = 0; k < comps.size(); ++k) {
    const std::string where = "components[" + std::to_string(k) + "]";
    if (!comps[k].is_object()) format_error(where + " must be an object");
    ellipsa::capi::Component c;
    c.weight = number(field(comps[k], "weight"), where + ".weight");
    if (!(c.weight > 0.0 && c.weight <= 1.0)) format_error(where + ".weight must lie in (0, 1]");
    total += c.weight;
    c.location = read_vector(field(comps[k], "location"), p, where + ".location");
    c.scatter = read_scatter(field(comps[k], "scatter"), p, where + ".scatter");
    m.components.push_back(std::move(c));
  }
  if (std::abs(total - 1.0) > 1e-9) format_error("component weights must sum to 1");
  x.log_likelihood = number(field(j, "log_likelihood"), "log_likelihood");
  x.parameters = integer(field(j, "parameters"), "parameters", 1, kRowLimit);
  x.bic = number(field(j, "bic"), "bic");
  x.icl = number(field(j, "icl"), "icl");
  if (!field(j, "converged").is_boolean()) format_error("\"converged\" must be true or false");
  x.converged = j["converged"].get<bool>();
  x.iterations = integer(field(j, "iterations"), "iterations", 0, kRowLimit);
  x.log_density_cutoff = number(field(j, "log_density_cutoff"), "log_density_cutoff");
  x.cutoff_level = number(field(j, "cutoff_level"), "cutoff_level");
  if (!(x.cutoff_level > 0.0 && x.cutoff_level < 1.0)) format_error("cutoff_level must lie in (0, 1)");
  if (j.contains("selection")) x.selection = read_selection(j["selection"]);
  m.mixture = std::move(x);
}

}  // namespace

ellipsa_model model_from_json(const char* text, int64_t length) {
  int64_t version = 0;
  const json j = parse_model_text(text, length, &version);
  ellipsa_model m;
  read_identity(j, m);
  if (m.kind == ELLIPSA_KIND_GAUSSIAN) read_gaussian_part(j, version, m);
  else read_mixture_part(j, m);
  finalise(m);
  return m;
}

}  // namespace ellipsa::capi

extern "C" {

ELLIPSA_API ellipsa_status ellipsa_model_save(char** text, int64_t* length, const ellipsa_model* model) {
  return guard("ellipsa_model_save", [&] {
    require_not_null(text, "text");
    require_not_null(model, "model");
    const std::string s = ellipsa::capi::model_to_json(*model);
    char* buffer = new char[s.size() + 1];
    std::memcpy(buffer, s.c_str(), s.size() + 1);
    *text = buffer;
    if (length != nullptr) *length = static_cast<int64_t>(s.size());
    return ELLIPSA_OK;
  });
}

ELLIPSA_API void ellipsa_text_free(char* text) { delete[] text; }

ELLIPSA_API ellipsa_status ellipsa_model_load(ellipsa_model** out, const char* text, int64_t length) {
  if (out != nullptr) *out = nullptr;
  return guard("ellipsa_model_load", [&] {
    require_not_null(out, "out");
    require_not_null(text, "text");
    if (length <= 0 || length > ellipsa::capi::kMaxBytes)
      throw Misuse{ELLIPSA_ERR_ARGUMENT, "length must lie in (0, 1 GiB]"};
    *out = new ellipsa_model(ellipsa::capi::model_from_json(text, length));
    return ELLIPSA_OK;
  });
}

}  // extern "C"
