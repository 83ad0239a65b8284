#include "progress.hpp"

#include <unistd.h>

#include <cmath>
#include <cstdio>

namespace ellipsa::cli {

bool progress_wanted(bool quiet) { return !quiet && isatty(STDERR_FILENO) == 1; }

Progress::Progress(bool enabled) : enabled_(enabled) {}
Progress::~Progress() { finish(); }

void Progress::update(const char* stage, double fraction) {
  if (!enabled_) return;
  const int width = 30;
  const double f = std::isfinite(fraction) ? std::fmin(1.0, std::fmax(0.0, fraction)) : 0.0;
  const int filled = static_cast<int>(f * width);
  char line[160];
  std::snprintf(line, sizeof line, "\r  %-24.24s [%-*.*s] %3.0f%%", stage, width, filled,
                "##############################", 100.0 * f);
  if (last_ == line) return;
  last_ = line;
  std::fputs(line, stderr);
  std::fflush(stderr);
  drawn_ = true;
}

void Progress::rows(const char* stage, std::int64_t done) {
  if (!enabled_) return;
  char line[160];
  std::snprintf(line, sizeof line, "\r  %-24.24s %lld rows", stage, static_cast<long long>(done));
  std::fputs(line, stderr);
  std::fflush(stderr);
  drawn_ = true;
}

void Progress::finish() {
  if (enabled_ && drawn_) std::fputs("\r\033[K", stderr);  // clear the line
  drawn_ = false;
}

int Progress::callback(const char* stage, double fraction, void* user) {
  static_cast<Progress*>(user)->update(stage, fraction);
  return 0;
}

}  // namespace ellipsa::cli
