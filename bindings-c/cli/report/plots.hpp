// The report's figures, each one inline <svg> element built from a ReportInput.
// A figure that cannot be drawn for these data returns "" (the page then says why).
#pragma once
#include <string>
#include <vector>

#include "html.hpp"

namespace ellipsa::cli {

// Rows drawn in the point plots: every flagged row, and the others thinned
// evenly to at most `limit` so that a large file still gives a light page.
std::vector<std::size_t> plotted_rows(const ReportInput& in, std::size_t limit);

// Variables of the scatter-plot matrix: those asked for, else all when p <= 4,
// else the 4 with the largest mean share of the flagged rows' distances.
std::vector<std::size_t> matrix_variables(const ReportInput& in);

// Palette entry for mixture component k (also used by the page's table).
const char* component_colour(std::size_t k);

std::string distance_distance_plot(const ReportInput& in, const std::vector<std::size_t>& drawn);
std::string quantile_plot(const ReportInput& in);
std::string scatter_matrix(const ReportInput& in, const std::vector<std::size_t>& drawn);
std::string contribution_bars(const ReportInput& in, std::size_t how_many);
std::string model_choice_plot(const ReportInput& in);

}  // namespace ellipsa::cli
