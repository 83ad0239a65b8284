#include "csv_source.hpp"

#include <fcntl.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <cstring>
#include <utility>

namespace ellipsa::cli {
namespace {

std::string located_message(const std::string& file, std::int64_t line, std::int64_t column,
                            const std::string& column_name, const std::string& message) {
  std::string text = file.empty() ? std::string("<input>") : file;
  if (line > 0) text += ":" + std::to_string(line);
  text += ": ";
  if (column > 0) text += "column " + std::to_string(column) + " (\"" + column_name + "\"): ";
  return text + message;
}

}  // namespace

CsvError::CsvError(std::string file, std::int64_t line, std::int64_t column, std::string column_name,
                   std::string message)
    : std::runtime_error(located_message(file, line, column, column_name, message)),
      file_(std::move(file)),
      line_(line),
      column_(column),
      column_name_(std::move(column_name)),
      message_(std::move(message)) {}

CsvSource CsvSource::open(const std::string& path) {
  if (path == "-") {
    CsvSource source(Kind::descriptor, "<stdin>");
    source.fd_ = STDIN_FILENO;
    return source;
  }
  CsvSource source(Kind::descriptor, path);
  source.fd_ = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (source.fd_ < 0) throw CsvError(path, 0, 0, "", std::string("cannot open: ") + std::strerror(errno));
  source.owns_fd_ = true;
  return source;
}

CsvSource CsvSource::from_memory(std::string bytes, std::string display_name) {
  CsvSource source(Kind::memory, std::move(display_name));
  source.memory_ = std::move(bytes);
  return source;
}

CsvSource::CsvSource(CsvSource&& other) noexcept
    : kind_(other.kind_),
      name_(std::move(other.name_)),
      fd_(std::exchange(other.fd_, -1)),
      owns_fd_(std::exchange(other.owns_fd_, false)),
      memory_(std::move(other.memory_)),
      memory_pos_(other.memory_pos_) {}

CsvSource& CsvSource::operator=(CsvSource&& other) noexcept {
  if (this != &other) {
    close();
    kind_ = other.kind_;
    name_ = std::move(other.name_);
    fd_ = std::exchange(other.fd_, -1);
    owns_fd_ = std::exchange(other.owns_fd_, false);
    memory_ = std::move(other.memory_);
    memory_pos_ = other.memory_pos_;
  }
  return *this;
}

CsvSource::~CsvSource() { close(); }

void CsvSource::close() noexcept {
  if (owns_fd_ && fd_ >= 0) ::close(fd_);
  fd_ = -1;
  owns_fd_ = false;
}

std::size_t CsvSource::read(char* destination, std::size_t capacity) {
  switch (kind_) {
    case Kind::memory: {
      const std::size_t n = std::min(capacity, memory_.size() - memory_pos_);
      std::memcpy(destination, memory_.data() + memory_pos_, n);
      memory_pos_ += n;
      return n;
    }
    case Kind::descriptor:
      for (;;) {
        const ssize_t n = ::read(fd_, destination, capacity);
        if (n >= 0) return static_cast<std::size_t>(n);
        if (errno != EINTR) throw CsvError(name_, 0, 0, "", std::string("read error: ") + std::strerror(errno));
      }
  }
  return 0;
}

}  // namespace ellipsa::cli
