// Reading one CSV cell as a number, and the set of missing-value markers.
//
// The missing markers (compared case-insensitively after trimming blanks):
//   (empty cell)  NA  N/A  #N/A  NULL  None  -  .  ?
// and every spelling that std::from_chars reads as NaN (NaN, nan, -nan, nan(...)).
// A missing cell becomes NaN in the numeric buffer.
//
// Numbers: std::from_chars (general format) on the cell with surrounding spaces
// and tabs removed; one leading '+' is accepted. Plain decimals of at most 15
// digits take an exact shortcut that gives the same double (tested against
// std::from_chars). "inf", "-inf", "infinity" are
// numbers (non-finite; the caller decides what to do with them), not missing.
// A finite literal beyond the double range reads as +-inf, one below the
// smallest subnormal as +-0, as strtod would.
// With decimal comma, ',' is the decimal mark and a '.' anywhere in a number
// makes the cell unreadable: "1.234,5" could be a thousands separator, and a
// silent factor of 1000 is worse than an error.
#pragma once

#include <string_view>

namespace ellipsa::cli {

enum class CellValue { number, missing, invalid };

/// Removes leading and trailing spaces and tabs.
std::string_view trim_blanks(std::string_view text) noexcept;

/// True when `trimmed` is one of the missing markers listed above (not NaN spellings).
bool is_missing_marker(std::string_view trimmed) noexcept;

/// Reads `cell` with decimal mark `decimal` ('.' or ','). On `number` the value
/// is in `out`; on `missing` out is NaN; on `invalid` out is unchanged.
CellValue parse_cell(std::string_view cell, char decimal, double& out) noexcept;

}  // namespace ellipsa::cli
