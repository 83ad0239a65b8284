// An output file that appears complete or not at all.
//
// AtomicOutput out(path) writes to a new temporary file in the target's folder,
//   .<name>.tmp-<pid>-<16 hex digits>
// and commit() flushes, fsyncs and renames it over the target (then fsyncs the
// folder), so readers see either the old file or the whole new one. Without
// commit() (an exception, an early return) the destructor removes the temporary
// file and the old target is untouched. Path "-" writes to standard output
// directly (no atomicity possible; commit() flushes and checks for errors).
//
// Signals: on first use, handlers for SIGINT, SIGTERM and SIGHUP are installed
// where the disposition is still the default; they remove every temporary file
// still open, then let the signal take its default effect (the exit status
// still says which signal). An atexit hook does the same for std::exit().
// SIGKILL (and power loss) cannot be caught: the target is still intact, but
// the temporary file may remain; remove leftovers matching `.<name>.tmp-*`.
//
// A symbolic link at the target is followed: the file it points to is replaced
// and the link stays. An existing target's permission bits are kept.
#pragma once

#include <cstdio>
#include <stdexcept>
#include <string>

namespace ellipsa::cli {

/// Failure to create, write or commit an output (disk full, permissions, ...).
class OutputError : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
};

class AtomicOutput {
 public:
  /// Creates the temporary file (or selects stdout for "-"). Throws OutputError.
  explicit AtomicOutput(const std::string& path);
  ~AtomicOutput();
  AtomicOutput(const AtomicOutput&) = delete;
  AtomicOutput& operator=(const AtomicOutput&) = delete;

  /// Where to write (the temporary file, or stdout). Null after commit/discard.
  std::FILE* stream() noexcept { return file_; }
  /// Makes the output visible under its name. Throws OutputError (and removes
  /// the temporary file) when any step fails; the old target is then untouched.
  void commit();
  /// Drops the output now (what the destructor does without commit()).
  void discard() noexcept;
  /// Asks the system to start writing to the disk what the stream has passed
  /// on so far (Linux sync_file_range), without waiting, so that commit()'s
  /// fsync waits for less. Call after flushing the writer; no effect for
  /// stdout or after commit/discard. Errors show at commit().
  void write_behind() noexcept;

  const std::string& path() const noexcept { return path_; }
  /// Empty for stdout.
  const std::string& temp_path() const noexcept { return temp_path_; }
  bool to_stdout() const noexcept { return to_stdout_; }
  bool committed() const noexcept { return committed_; }

 private:
  std::string path_;
  std::string target_;  ///< path_ with a final symbolic link resolved
  std::string temp_path_;
  std::FILE* file_ = nullptr;
  int slot_ = -1;  ///< entry in the signal-cleanup registry
  bool to_stdout_ = false;
  bool committed_ = false;
};

}  // namespace ellipsa::cli
