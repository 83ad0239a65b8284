#include "atomic_output.hpp"

#include <fcntl.h>
#include <limits.h>
#include <signal.h>
#include <sys/stat.h>
#include <unistd.h>

#include <array>
#include <atomic>
#include <cerrno>
#include <cstdlib>
#include <cstring>
#include <mutex>
#include <random>

namespace ellipsa::cli {
namespace {

// Registry of temporary files still open, readable from a signal handler: fixed
// slots, no allocation, state published with atomics. Free 0, being written 1,
// active 2. When all slots are taken the output still works, without cleanup
// on signals.
struct TempSlot {
  std::atomic<int> state{0};
  char path[PATH_MAX];
};
std::array<TempSlot, 32> g_slots;

void remove_registered_temp_files() noexcept {
  for (TempSlot& slot : g_slots)
    if (slot.state.load(std::memory_order_acquire) == 2) ::unlink(slot.path);  // async-signal-safe
}

extern "C" void ellipsa_cli_cleanup_on_signal(int signal_number) {
  const int saved_errno = errno;
  remove_registered_temp_files();
  errno = saved_errno;
  // SA_RESETHAND restored the default action; the signal is blocked while this
  // handler runs and takes its default effect as soon as it returns.
  ::raise(signal_number);
}

extern "C" void ellipsa_cli_cleanup_at_exit() { remove_registered_temp_files(); }

void install_cleanup_once() {
  static std::once_flag once;
  std::call_once(once, [] {
    std::atexit(ellipsa_cli_cleanup_at_exit);
    for (int sig : {SIGINT, SIGTERM, SIGHUP}) {
      struct sigaction current {};
      if (::sigaction(sig, nullptr, &current) != 0 || current.sa_handler != SIG_DFL) continue;
      struct sigaction action {};
      action.sa_handler = ellipsa_cli_cleanup_on_signal;
      sigemptyset(&action.sa_mask);
      action.sa_flags = SA_RESETHAND;
      ::sigaction(sig, &action, nullptr);
    }
  });
}

int register_temp(const std::string& path) noexcept {
  if (path.size() >= PATH_MAX) return -1;
  for (std::size_t i = 0; i < g_slots.size(); ++i) {
    int expected = 0;
    if (g_slots[i].state.compare_exchange_strong(expected, 1, std::memory_order_acq_rel)) {
      std::memcpy(g_slots[i].path, path.c_str(), path.size() + 1);
      g_slots[i].state.store(2, std::memory_order_release);
      return static_cast<int>(i);
    }
  }
  return -1;
}

void unregister_temp(int slot) noexcept {
  if (slot >= 0) g_slots[static_cast<std::size_t>(slot)].state.store(0, std::memory_order_release);
}

std::string error_text(const std::string& what, const std::string& path) {
  return what + " '" + path + "': " + std::strerror(errno);
}

std::string resolve_final_link(const std::string& path) {
  struct stat st {};
  if (::lstat(path.c_str(), &st) != 0 || !S_ISLNK(st.st_mode)) return path;
  char resolved[PATH_MAX];
  if (::realpath(path.c_str(), resolved) == nullptr) return path;  // dangling: replace the link
  return resolved;
}

}  // namespace

AtomicOutput::AtomicOutput(const std::string& path) : path_(path) {
  if (path == "-") {
    to_stdout_ = true;
    file_ = stdout;
    return;
  }
  if (path.empty()) throw OutputError("output path is empty");
  target_ = resolve_final_link(path);
  struct stat target_stat {};
  const bool target_exists = ::stat(target_.c_str(), &target_stat) == 0;
  if (target_exists && S_ISDIR(target_stat.st_mode)) throw OutputError("output '" + path + "' is a folder");

  const std::size_t slash = target_.find_last_of('/');
  const std::string folder = slash == std::string::npos ? std::string() : target_.substr(0, slash + 1);
  const std::string name = slash == std::string::npos ? target_ : target_.substr(slash + 1);
  if (name.empty()) throw OutputError("output path '" + path + "' names no file");

  install_cleanup_once();
  std::random_device entropy;
  int fd = -1;
  for (int attempt = 0; attempt < 16 && fd < 0; ++attempt) {
    const std::uint64_t r = (std::uint64_t{entropy()} << 32) ^ entropy();
    char suffix[64];
    std::snprintf(suffix, sizeof suffix, ".tmp-%ld-%016llx", static_cast<long>(::getpid()),
                  static_cast<unsigned long long>(r));
    temp_path_ = folder + "." + name + suffix;
    // Registered before the file exists: a signal between the open and a later
    // registration would leave the file behind (seen under AddressSanitizer,
    // whose slower start widens that window). The name holds our pid and 64
    // random bits, so the handler cannot remove anyone else's file.
    slot_ = register_temp(temp_path_);
    fd = ::open(temp_path_.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0666);
    if (fd < 0) {
      const int open_errno = errno;
      unregister_temp(slot_);
      slot_ = -1;
      errno = open_errno;
    }
    if (fd < 0 && errno != EEXIST) break;
  }
  if (fd < 0) {
    const std::string message = error_text("cannot create a temporary file for", path);
    temp_path_.clear();
    throw OutputError(message);
  }
  if (target_exists) (void)::fchmod(fd, target_stat.st_mode & 07777);
  file_ = ::fdopen(fd, "wb");
  if (file_ == nullptr) {
    const std::string message = error_text("cannot open a stream for", temp_path_);
    ::close(fd);
    discard();
    throw OutputError(message);
  }
}

AtomicOutput::~AtomicOutput() {
  if (!committed_) discard();
}

void AtomicOutput::discard() noexcept {
  if (to_stdout_) {
    file_ = nullptr;
    return;
  }
  if (file_ != nullptr) {
    std::fclose(file_);
    file_ = nullptr;
  }
  if (!temp_path_.empty() && !committed_) ::unlink(temp_path_.c_str());
  unregister_temp(slot_);
  slot_ = -1;
}

void AtomicOutput::commit() {
  if (committed_) return;
  if (file_ == nullptr) throw OutputError("output '" + path_ + "' was already discarded");
  if (to_stdout_) {
    if (std::fflush(stdout) != 0 || std::ferror(stdout)) throw OutputError(error_text("cannot write", "<stdout>"));
    committed_ = true;
    file_ = nullptr;
    return;
  }
  auto fail = [&](const char* what) {
    const std::string message = error_text(what, path_);
    discard();
    throw OutputError(message);
  };
  if (std::fflush(file_) != 0 || std::ferror(file_)) fail("cannot write");
  if (::fsync(::fileno(file_)) != 0) fail("cannot sync");
  const int close_status = std::fclose(file_);
  file_ = nullptr;
  if (close_status != 0) fail("cannot write");
  if (std::rename(temp_path_.c_str(), target_.c_str()) != 0) fail("cannot replace");
  committed_ = true;
  unregister_temp(slot_);
  slot_ = -1;
  // Make the rename itself durable. Some file systems refuse fsync on a folder;
  // the data is already safe then, so that is not an error.
  const std::size_t slash = target_.find_last_of('/');
  const std::string folder = slash == std::string::npos ? std::string(".") : target_.substr(0, slash + 1);
  const int dir = ::open(folder.c_str(), O_RDONLY | O_DIRECTORY | O_CLOEXEC);
  if (dir >= 0) {
    (void)::fsync(dir);
    ::close(dir);
  }
}

void AtomicOutput::write_behind() noexcept {
  if (to_stdout_ || file_ == nullptr) return;
  if (std::fflush(file_) != 0) return;  // commit() reports it
#ifdef SYNC_FILE_RANGE_WRITE
  (void)::sync_file_range(::fileno(file_), 0, 0, SYNC_FILE_RANGE_WRITE);
#endif
}

}  // namespace ellipsa::cli
