// Everything the driver sends between ranks, in one place: a fixed binomial
// merge tree for byte-serialised statistics, broadcasts, gathers and the
// agreement on whether every rank succeeded. Every wait has a deadline, so a
// rank that was killed or hangs ends the job with a message instead of a hang.
#pragma once
#include <mpi.h>

#include <cstdint>
#include <functional>
#include <stdexcept>
#include <string>
#include <vector>

namespace ellipsa::mpi {

// Thrown on every rank once the ranks agreed that some rank failed; each
// failing rank has printed its own message.
struct JobStopped {
  int exit_code;
};

class Comm {
 public:
  Comm(MPI_Comm comm, double timeout_seconds);
  int rank() const { return rank_; }
  int size() const { return size_; }

  // Every rank calls this at the same point with its own outcome (empty
  // message = success, exit_code > 0 = failure). If any rank failed, each
  // failing rank prints "ellipsa-mpi: rank R: message", rank 0 says that the
  // job stops, and every rank throws JobStopped with the largest exit code.
  void agree(const std::string& message, int exit_code);

  // Merges every rank's bytes into rank 0 along a fixed binomial tree: at step
  // s = 1, 2, 4, ... rank r with r % 2s == 0 receives the bytes of r + s (if
  // any) and calls merge(own, received), own being the lower ranks' part; the
  // others send theirs to r - s and are done. The order of the merges is
  // therefore a function of the number of ranks only. Returns the merged bytes
  // on rank 0 and an empty string elsewhere.
  using Merge = std::function<void(std::string& into, const std::string& from)>;
  std::string tree_reduce(std::string local, const Merge& merge, const char* what);

  // Rank 0's bytes on every rank.
  std::string broadcast(std::string bytes, const char* what);
  // Every rank's bytes, in rank order, on rank 0 (empty elsewhere).
  std::vector<std::string> gather(const std::string& local, const char* what);
  // Sum of a value over the ranks, on every rank.
  double sum(double local, const char* what);
  int64_t sum(int64_t local, const char* what);
  double max(double local, const char* what);
  // Element-wise sums of counts over the ranks, on every rank (integer sums:
  // the result does not depend on the order MPI adds them in). Counted in
  // bytes_sent() as one contribution of this rank.
  std::vector<int64_t> sum(const std::vector<int64_t>& local, const char* what);

  // Bytes this rank sent of statistics (tree_reduce, broadcast and gather
  // payloads with their length words); not the status agreements.
  int64_t bytes_sent() const { return bytes_sent_; }

 private:
  void wait(MPI_Request* requests, int count, const char* what);
  void allreduce(const void* in, void* out, MPI_Datatype type, MPI_Op op, const char* what);
  void send(const std::string& bytes, int to, int tag, const char* what);
  std::string receive(int from, int tag, const char* what);

  MPI_Comm comm_;
  int rank_ = 0, size_ = 1;
  double timeout_;
  int64_t bytes_sent_ = 0;
};

}  // namespace ellipsa::mpi
