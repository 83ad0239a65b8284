// A one-line progress display on stderr, shown only when stderr is a terminal
// (a scheduled job's log stays clean) and --quiet is not given.
#pragma once
#include <cstdint>
#include <string>

namespace ellipsa::cli {

class Progress {
 public:
  explicit Progress(bool enabled);
  ~Progress();
  bool enabled() const { return enabled_; }
  // Stage and fraction of the whole in [0, 1].
  void update(const char* stage, double fraction);
  // Rows processed so far, when the total is unknown (streaming).
  void rows(const char* stage, std::int64_t done);
  void finish();
  // The C interface's callback: user is a Progress*.
  static int callback(const char* stage, double fraction, void* user);

 private:
  bool enabled_;
  bool drawn_ = false;
  std::string last_;
};

// True when progress should be drawn: stderr is a terminal and not quiet.
bool progress_wanted(bool quiet);

}  // namespace ellipsa::cli
