#include "sheet_args.hpp"

#include <cerrno>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <limits>

#include "boundary.hpp"
#include "matrix_view.hpp"

namespace ellipsa::capi::sheet {
namespace {

[[noreturn]] void bad(const char* argument, const std::string& what, ellipsa_status s = ELLIPSA_ERR_ARGUMENT) {
  throw Misuse{s, std::string(argument) + ": " + what};
}

const char* kind_name(int32_t kind) {
  switch (kind) {
    case ELLIPSA_SHEET_ARG_RANGE: return "a range";
    case ELLIPSA_SHEET_ARG_NUMBER: return "a number";
    case ELLIPSA_SHEET_ARG_TEXT: return "a text";
    case ELLIPSA_SHEET_ARG_FLAG: return "TRUE or FALSE";
    default: return "an unknown kind";
  }
}

// The whole text read as a number (surrounding blanks allowed), or nothing.
std::optional<double> parse_number(const std::string& t) {
  const char* s = t.c_str();
  char* end = nullptr;
  errno = 0;
  const double v = std::strtod(s, &end);
  if (end == s) return std::nullopt;
  while (*end == ' ' || *end == '\t') ++end;
  if (*end != '\0' || errno == ERANGE || !std::isfinite(v)) return std::nullopt;
  return v;
}

SheetRange copy_range(const ellipsa_sheet_value& v, const char* name) {
  const core::DataView x = checked_view(&v.range, name);
  const int64_t n = v.range.rows, p = v.range.cols;
  if (n == 0 || p == 0) bad(name, "empty range", ELLIPSA_ERR_SHAPE);
  SheetRange r;
  r.values.resize(n, p);
  r.rows.assign(static_cast<size_t>(n), RowState::Blank);
  const double nan = std::numeric_limits<double>::quiet_NaN();
  for (int64_t i = 0; i < n; ++i) {
    bool any_number = false, any_bad = false;
    for (int64_t j = 0; j < p; ++j) {
      const uint8_t kind = v.cell_kind ? v.cell_kind[i * p + j] : uint8_t{ELLIPSA_SHEET_INPUT_NUMBER};
      if (kind > ELLIPSA_SHEET_INPUT_ERROR)
        bad(name, "cell_kind " + std::to_string(kind) + " at row " + std::to_string(i + 1) +
                      " is not an "
                      "ELLIPSA_SHEET_INPUT_ value");
      double value = x(i, j);
      if (kind != ELLIPSA_SHEET_INPUT_NUMBER) {
        any_bad = true;
        value = nan;
      } else if (std::isnan(value)) {
        value = nan;  // one NaN pattern, so cached fits compare bit for bit
      } else {
        any_number = true;
      }
      r.values(i, j) = value;
    }
    r.rows[static_cast<size_t>(i)] = any_bad ? RowState::Bad : any_number ? RowState::Usable : RowState::Blank;
  }
  return r;
}

}  // namespace

ellipsa_matrix SheetRange::view() const {
  return ellipsa_matrix_col_major(values.data(), values.rows(), values.cols());
}

Arguments::Arguments(const FunctionSpec& function, const ellipsa_sheet_value* values, int32_t count)
    : function_(&function) {
  const auto& specs = function.arguments;
  if (count < 0) throw Misuse{ELLIPSA_ERR_ARGUMENT, "count must be >= 0"};
  if (count > 0) require_not_null(values, "args");
  if (static_cast<size_t>(count) > specs.size())
    throw Misuse{ELLIPSA_ERR_ARGUMENT, std::string(function.name) + " takes at most " + std::to_string(specs.size()) +
                                           " arguments, " + std::to_string(count) + " given"};
  int64_t stride = sizeof(ellipsa_sheet_value);
  if (count > 0) {
    stride = values[0].struct_size;
    if (stride < static_cast<int64_t>(sizeof(ellipsa_sheet_value)))
      throw Misuse{ELLIPSA_ERR_SHAPE,
                   "ellipsa_sheet_value.struct_size too small: initialise with "
                   "ELLIPSA_SHEET_VALUE_INIT"};
  }
  slots_.resize(specs.size());
  for (size_t a = 0; a < specs.size(); ++a) {
    const ArgumentSpec& spec = specs[a];
    Resolved& r = slots_[a];
    const auto* base = reinterpret_cast<const unsigned char*>(values);
    const ellipsa_sheet_value* v =
        a < static_cast<size_t>(count)
            ? reinterpret_cast<const ellipsa_sheet_value*>(base + static_cast<int64_t>(a) * stride)
            : nullptr;
    if (v && v->struct_size != stride)
      throw Misuse{ELLIPSA_ERR_SHAPE, std::string(spec.name) + ": struct_size differs from the first value's"};
    int32_t kind = v ? v->kind : ELLIPSA_SHEET_VALUE_ABSENT;
    if (kind == ELLIPSA_SHEET_ARG_TEXT) {
      require_not_null(v->text, (std::string(spec.name) + " text").c_str());
      if (v->text[0] == '\0') kind = ELLIPSA_SHEET_VALUE_ABSENT;  // "" keeps the default
    }
    if (kind == ELLIPSA_SHEET_VALUE_ABSENT) {
      if (!spec.optional) bad(spec.name, "required");
      continue;
    }
    if (kind != ELLIPSA_SHEET_ARG_RANGE && kind != ELLIPSA_SHEET_ARG_NUMBER && kind != ELLIPSA_SHEET_ARG_TEXT &&
        kind != ELLIPSA_SHEET_ARG_FLAG)
      bad(spec.name, "unknown value kind " + std::to_string(kind));
    r.given = true;
    r.kind = spec.kind;
    switch (spec.kind) {
      case ELLIPSA_SHEET_ARG_RANGE:
        if (kind == ELLIPSA_SHEET_ARG_RANGE) {
          r.range = copy_range(*v, spec.name);
        } else if (kind == ELLIPSA_SHEET_ARG_NUMBER) {
          r.range.values = Eigen::MatrixXd::Constant(1, 1, v->number);
          r.range.rows.assign(1, std::isnan(v->number) ? RowState::Blank : RowState::Usable);
        } else {
          bad(spec.name, std::string("expected a range, got ") + kind_name(kind));
        }
        break;
      case ELLIPSA_SHEET_ARG_NUMBER:
        if (kind == ELLIPSA_SHEET_ARG_NUMBER || kind == ELLIPSA_SHEET_ARG_FLAG) {
          r.number = v->number;
        } else if (kind == ELLIPSA_SHEET_ARG_TEXT) {
          const auto parsed = parse_number(v->text);
          if (!parsed) bad(spec.name, std::string("expected a number, got the text '") + v->text + "'");
          r.number = *parsed;
        } else if (kind == ELLIPSA_SHEET_ARG_RANGE && v->range.rows == 1 && v->range.cols == 1 &&
                   v->range.data != nullptr && (!v->cell_kind || v->cell_kind[0] == ELLIPSA_SHEET_INPUT_NUMBER)) {
          r.number = v->range.data[0];
        } else {
          bad(spec.name, std::string("expected a number, got ") + kind_name(kind));
        }
        if (std::isnan(r.number)) bad(spec.name, "expected a number, got a blank or NaN");
        break;
      case ELLIPSA_SHEET_ARG_TEXT:
        if (kind == ELLIPSA_SHEET_ARG_TEXT) {
          r.text = v->text;
        } else if (kind == ELLIPSA_SHEET_ARG_NUMBER) {
          char buf[32];
          std::snprintf(buf, sizeof buf, "%.17g", v->number);
          r.text = buf;
        } else {
          bad(spec.name, std::string("expected a text, got ") + kind_name(kind));
        }
        break;
      case ELLIPSA_SHEET_ARG_FLAG:
        if (kind == ELLIPSA_SHEET_ARG_FLAG || kind == ELLIPSA_SHEET_ARG_NUMBER) {
          if (std::isnan(v->number)) bad(spec.name, "expected TRUE or FALSE, got NaN");
          r.number = v->number != 0.0 ? 1.0 : 0.0;
        } else if (kind == ELLIPSA_SHEET_ARG_TEXT) {
          std::string t(v->text);
          for (auto& ch : t) ch = static_cast<char>(std::toupper(static_cast<unsigned char>(ch)));
          if (t == "TRUE" || t == "1") r.number = 1.0;
          else if (t == "FALSE" || t == "0") r.number = 0.0;
          else bad(spec.name, std::string("expected TRUE or FALSE, got the text '") + v->text + "'");
        } else {
          bad(spec.name, std::string("expected TRUE or FALSE, got ") + kind_name(kind));
        }
        break;
      default: throw Misuse{ELLIPSA_ERR_INTERNAL, "catalog argument of unknown kind"};
    }
  }
}

const Arguments::Resolved& Arguments::slot(const char* name) const {
  for (size_t a = 0; a < function_->arguments.size(); ++a)
    if (std::strcmp(function_->arguments[a].name, name) == 0) return slots_[a];
  throw Misuse{ELLIPSA_ERR_INTERNAL, std::string(function_->name) + " has no argument '" + name + "'"};
}

bool Arguments::given(const char* name) const { return slot(name).given; }

const SheetRange& Arguments::range(const char* name) const {
  const Resolved& r = slot(name);
  if (!r.given) bad(name, "required");
  return r.range;
}

const SheetRange* Arguments::range_if_given(const char* name) const {
  const Resolved& r = slot(name);
  return r.given ? &r.range : nullptr;
}

std::optional<double> Arguments::number(const char* name) const {
  const Resolved& r = slot(name);
  if (!r.given) return std::nullopt;
  return r.number;
}

double Arguments::number_or(const char* name, double fallback) const { return number(name).value_or(fallback); }

std::optional<int64_t> Arguments::whole_number(const char* name, int64_t lo, int64_t hi) const {
  const auto v = number(name);
  if (!v) return std::nullopt;
  if (!(*v >= static_cast<double>(lo) && *v <= static_cast<double>(hi)) || std::floor(*v) != *v)
    bad(name, "expected a whole number from " + std::to_string(lo) + " to " + std::to_string(hi));
  return static_cast<int64_t>(*v);
}

std::optional<std::string> Arguments::text(const char* name) const {
  const Resolved& r = slot(name);
  if (!r.given) return std::nullopt;
  return r.text;
}

bool Arguments::flag_or(const char* name, bool fallback) const {
  const Resolved& r = slot(name);
  return r.given ? r.number != 0.0 : fallback;
}

const SheetRange& Arguments::fitting_range() const {
  const SheetRange& rows = range("rows");
  const SheetRange* ref = range_if_given("reference");
  if (!ref) return rows;
  if (ref->col_count() != rows.col_count())
    throw Misuse{ELLIPSA_ERR_SHAPE, "reference has " + std::to_string(ref->col_count()) + " columns but rows has " +
                                        std::to_string(rows.col_count()) + ": they must hold the same variables"};
  return *ref;
}

Grid::Grid(ellipsa_sheet_cell* cells, int64_t rows, int64_t cols) : cells_(cells), rows_(rows), cols_(cols) {
  for (int64_t k = 0; k < rows * cols; ++k) cells_[k] = ellipsa_sheet_cell{ELLIPSA_SHEET_CELL_EMPTY, 0, 0.0, nullptr};
}

ellipsa_sheet_cell& Grid::at(int64_t i, int64_t j) {
  if (i < 0 || j < 0 || i >= rows_ || j >= cols_)
    throw Misuse{ELLIPSA_ERR_INTERNAL, "sheet result written outside its shape"};
  return cells_[i * cols_ + j];
}

void Grid::number(int64_t i, int64_t j, double v) {
  if (!std::isfinite(v)) return error(i, j, ELLIPSA_SHEET_ERROR_NUM);
  at(i, j) = ellipsa_sheet_cell{ELLIPSA_SHEET_CELL_NUMBER, 0, v, nullptr};
}
void Grid::text(int64_t i, int64_t j, const char* t) {
  at(i, j) = ellipsa_sheet_cell{ELLIPSA_SHEET_CELL_TEXT, 0, 0.0, t};
}
void Grid::error(int64_t i, int64_t j, int32_t code) {
  at(i, j) = ellipsa_sheet_cell{ELLIPSA_SHEET_CELL_ERROR, code, 0.0, nullptr};
}
void Grid::empty(int64_t i, int64_t j) { at(i, j) = ellipsa_sheet_cell{ELLIPSA_SHEET_CELL_EMPTY, 0, 0.0, nullptr}; }

}  // namespace ellipsa::capi::sheet
