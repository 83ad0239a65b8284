#include "mpi_comm.hpp"

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <thread>

namespace ellipsa::mpi {

namespace {
constexpr int kTagLength = 101;
constexpr int kTagBytes = 102;
}  // namespace

Comm::Comm(MPI_Comm comm, double timeout_seconds) : comm_(comm), timeout_(timeout_seconds) {
  MPI_Comm_rank(comm_, &rank_);
  MPI_Comm_size(comm_, &size_);
}

// Polls with a growing pause (50 us to 5 ms): the job shares its cores with
// the computing ranks, and a blocking wait would have no deadline.
void Comm::wait(MPI_Request* requests, int count, const char* what) {
  const auto deadline = std::chrono::steady_clock::now() + std::chrono::duration<double>(timeout_);
  auto pause = std::chrono::microseconds(50);
  for (;;) {
    int done = 0;
    MPI_Testall(count, requests, &done, MPI_STATUSES_IGNORE);
    if (done) return;
    if (std::chrono::steady_clock::now() > deadline) {
      std::fprintf(stderr,
                   "ellipsa-mpi: rank %d: no answer within %g s while %s (a rank was killed, stopped or hangs); "
                   "ending the job, nothing written\n",
                   rank_, timeout_, what);
      std::fflush(stderr);
      MPI_Abort(MPI_COMM_WORLD, 3);
    }
    std::this_thread::sleep_for(pause);
    pause = std::min(pause * 2, std::chrono::microseconds(5000));
  }
}

void Comm::agree(const std::string& message, int exit_code) {
  int mine = message.empty() ? 0 : std::max(exit_code, 1), worst = 0;
  MPI_Request r;
  MPI_Iallreduce(&mine, &worst, 1, MPI_INT, MPI_MAX, comm_, &r);
  wait(&r, 1, "agreeing on the outcome");
  if (worst == 0) return;
  if (mine != 0) std::fprintf(stderr, "ellipsa-mpi: rank %d: %s\n", rank_, message.c_str());
  if (rank_ == 0) std::fprintf(stderr, "ellipsa-mpi: the job stops (a rank failed); nothing was written\n");
  std::fflush(stderr);
  throw JobStopped{worst};
}

void Comm::send(const std::string& bytes, int to, int tag, const char* what) {
  int64_t length = static_cast<int64_t>(bytes.size());
  if (length > INT32_MAX) throw std::runtime_error(std::string(what) + ": more than 2 GiB in one message");
  MPI_Request r[2];
  MPI_Isend(&length, 1, MPI_INT64_T, to, kTagLength + 2 * tag, comm_, &r[0]);
  MPI_Isend(bytes.data(), static_cast<int>(length), MPI_BYTE, to, kTagBytes + 2 * tag, comm_, &r[1]);
  wait(r, 2, what);
  bytes_sent_ += 8 + length;
}

std::string Comm::receive(int from, int tag, const char* what) {
  int64_t length = 0;
  MPI_Request r;
  MPI_Irecv(&length, 1, MPI_INT64_T, from, kTagLength + 2 * tag, comm_, &r);
  wait(&r, 1, what);
  std::string bytes(static_cast<std::size_t>(length), '\0');
  MPI_Irecv(bytes.data(), static_cast<int>(length), MPI_BYTE, from, kTagBytes + 2 * tag, comm_, &r);
  wait(&r, 1, what);
  return bytes;
}

std::string Comm::tree_reduce(std::string local, const Merge& merge, const char* what) {
  for (int step = 1; step < size_; step *= 2) {
    if (rank_ % (2 * step) == 0) {
      if (rank_ + step < size_) merge(local, receive(rank_ + step, 0, what));
    } else {
      send(local, rank_ - step, 0, what);
      return {};
    }
  }
  return local;
}

std::string Comm::broadcast(std::string bytes, const char* what) {
  int64_t length = static_cast<int64_t>(bytes.size());
  MPI_Request r;
  MPI_Ibcast(&length, 1, MPI_INT64_T, 0, comm_, &r);
  wait(&r, 1, what);
  if (length > INT32_MAX) throw std::runtime_error(std::string(what) + ": more than 2 GiB in one message");
  bytes.resize(static_cast<std::size_t>(length));
  MPI_Ibcast(bytes.data(), static_cast<int>(length), MPI_BYTE, 0, comm_, &r);
  wait(&r, 1, what);
  if (rank_ == 0) bytes_sent_ += static_cast<int64_t>(size_ - 1) * (8 + length);  // as if sent to each
  return bytes;
}

std::vector<std::string> Comm::gather(const std::string& local, const char* what) {
  std::vector<std::string> all;
  if (rank_ != 0) {
    send(local, 0, 1, what);
    return all;
  }
  all.push_back(local);
  for (int from = 1; from < size_; ++from) all.push_back(receive(from, 1, what));
  return all;
}

void Comm::allreduce(const void* in, void* out, MPI_Datatype type, MPI_Op op, const char* what) {
  MPI_Request r;
  MPI_Iallreduce(in, out, 1, type, op, comm_, &r);
  wait(&r, 1, what);
}

double Comm::sum(double local, const char* what) {
  double total = 0.0;
  allreduce(&local, &total, MPI_DOUBLE, MPI_SUM, what);
  return total;
}

int64_t Comm::sum(int64_t local, const char* what) {
  int64_t total = 0;
  allreduce(&local, &total, MPI_INT64_T, MPI_SUM, what);
  return total;
}

std::vector<int64_t> Comm::sum(const std::vector<int64_t>& local, const char* what) {
  std::vector<int64_t> total(local.size(), 0);
  MPI_Request r;
  MPI_Iallreduce(local.data(), total.data(), static_cast<int>(local.size()), MPI_INT64_T, MPI_SUM, comm_, &r);
  wait(&r, 1, what);
  bytes_sent_ += static_cast<int64_t>(local.size()) * 8;
  return total;
}

double Comm::max(double local, const char* what) {
  double m = 0.0;
  allreduce(&local, &m, MPI_DOUBLE, MPI_MAX, what);
  return m;
}

}  // namespace ellipsa::mpi
