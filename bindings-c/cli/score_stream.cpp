#include "score_stream.hpp"

#include <condition_variable>
#include <deque>
#include <exception>
#include <limits>
#include <sstream>
#include <mutex>
#include <string>
#include <system_error>
#include <thread>

namespace ellipsa::cli {
namespace {

// One chunk's rows formatted with their scores, and its part of the tally.
void format_chunk(CsvWriter& w, const CsvChunk& chunk, const ScoreBlock& block, const ScoreColumns& cols,
                  ScoreTally& tally) {
  const auto p = static_cast<std::size_t>(cols.p);
  for (std::size_t r = 0; r < chunk.rows(); ++r) {
    w.raw(chunk.row_text(r));
    if (cols.kind == ELLIPSA_KIND_MIXTURE) {
      w.integer(block.component[r] + 1);
      for (int32_t k = 0; k < cols.components; ++k)
        w.number(block.membership[r * static_cast<std::size_t>(cols.components) + static_cast<std::size_t>(k)]);
      w.number(block.log_density[r]).integer(block.low_density[r]);
    }
    w.number(block.d2[r]).number(block.p_value[r]).integer(block.flag[r]).integer(block.observed[r]);
    for (std::size_t j = 0; j < p; ++j) w.number(block.contribution[r * p + j]);
    w.end_row();
    const bool is_flagged = block.flag[r] == 1 || (cols.kind == ELLIPSA_KIND_MIXTURE && block.low_density[r] == 1);
    if (is_flagged) {
      ++tally.flagged;
      if (tally.first_flags.size() < 20) {
        std::ostringstream entry;
        entry << "  line " << chunk.line(r) << ": squared distance " << block.d2[r] << "; most from "
              << top_contributors(block, cols, r, 3) << "\n";
        tally.first_flags.push_back(entry.str());
      }
    }
    if (block.flag[r] == -1) ++tally.unscorable;
  }
  tally.rows += static_cast<int64_t>(chunk.rows());
}

ellipsa_matrix view_of(const CsvChunk& chunk) {
  return ellipsa_matrix_row_major(chunk.data(), static_cast<int64_t>(chunk.rows()), static_cast<int64_t>(chunk.cols()));
}

// Calls settings.write_behind once the writer has passed on another
// kWriteBehindBytes since the last call (checked after every chunk).
class WriteBehind {
 public:
  WriteBehind(CsvWriter& writer, const ScoreStreamSettings& s) : writer_(writer), s_(s) {}
  void check() {
    if (!s_.write_behind || writer_.bytes_passed() - mark_ < kWriteBehindBytes) return;
    writer_.flush();
    mark_ = writer_.bytes_passed();
    s_.write_behind();
  }

 private:
  CsvWriter& writer_;
  const ScoreStreamSettings& s_;
  std::uint64_t mark_ = 0;
};

void score_serially(CsvReader& reader, CsvWriter& writer, const ellipsa_model* model, const ScoreColumns& cols,
                    const ScoreStreamSettings& s, Progress& progress, ScoreTally& tally) {
  CsvChunk chunk;
  ScoreBlock block;
  WriteBehind behind(writer, s);
  while (reader.next_chunk(chunk, s.chunk_rows)) {
    refuse_infinite_cells(reader, chunk);
    block.score(model, cols, view_of(chunk), s.level, s.reference, s.threads);
    format_chunk(writer, chunk, block, cols, tally);
    behind.check();
    progress.rows("scoring", tally.rows);
  }
}

// A chunk on its way through the stages.
struct Job {
  std::int64_t index = 0;
  CsvChunk chunk;
  ScoreBlock block;
  std::string text;  // the chunk's rows formatted with their scores
  ScoreTally tally;  // the chunk's own counts
};

// The stages' shared state. Jobs move free -> parsed -> scored -> free.
class Stages {
 public:
  explicit Stages(int jobs) : jobs_(static_cast<std::size_t>(jobs)) {
    for (auto& j : jobs_) free_.push_back(&j);
  }

  // Stage 1 (calling thread): a free job, or nullptr once a stage failed.
  Job* take_free() {
    std::unique_lock<std::mutex> lock(mutex_);
    changed_.wait(lock, [&] { return !free_.empty() || failed(); });
    if (failed()) return nullptr;
    Job* j = free_.front();
    free_.pop_front();
    return j;
  }
  void give_back(Job* j) { push(free_, j); }
  void parsed(Job* j) { push(parsed_, j); }
  void scored(Job* j) { push(scored_, j); }
  // The next job of a queue, or nullptr when the stage before it has ended
  // and the queue is empty.
  Job* next_parsed() { return pop(parsed_, reading_done_); }
  Job* next_scored() { return pop(scored_, scoring_done_); }
  void end_reading() { end(reading_done_); }
  void end_scoring() { end(scoring_done_); }

  // A stage's error at chunk `index`; the earliest chunk's is kept.
  void fail(std::int64_t index, std::exception_ptr e) {
    {
      std::lock_guard<std::mutex> lock(mutex_);
      if (index < fail_index_) {
        fail_index_ = index;
        error_ = std::move(e);
      }
    }
    changed_.notify_all();
  }
  // True when chunk `index` comes after a failed one (its work is not needed).
  bool skip(std::int64_t index) {
    std::lock_guard<std::mutex> lock(mutex_);
    return index > fail_index_;
  }
  void rethrow() const {
    if (error_) std::rethrow_exception(error_);
  }

 private:
  bool failed() const { return fail_index_ != std::numeric_limits<std::int64_t>::max(); }
  void push(std::deque<Job*>& q, Job* j) {
    {
      std::lock_guard<std::mutex> lock(mutex_);
      q.push_back(j);
    }
    changed_.notify_all();
  }
  Job* pop(std::deque<Job*>& q, const bool& done) {
    std::unique_lock<std::mutex> lock(mutex_);
    changed_.wait(lock, [&] { return !q.empty() || done; });
    if (q.empty()) return nullptr;
    Job* j = q.front();
    q.pop_front();
    return j;
  }
  void end(bool& flag) {
    {
      std::lock_guard<std::mutex> lock(mutex_);
      flag = true;
    }
    changed_.notify_all();
  }

  std::deque<Job> jobs_;
  std::deque<Job*> free_, parsed_, scored_;
  std::mutex mutex_;
  std::condition_variable changed_;
  bool reading_done_ = false, scoring_done_ = false;
  std::int64_t fail_index_ = std::numeric_limits<std::int64_t>::max();
  std::exception_ptr error_;
};

void score_overlapped(CsvReader& reader, CsvWriter& writer, const ellipsa_model* model, const ScoreColumns& cols,
                      const ScoreStreamSettings& s, Progress& progress, ScoreTally& tally) {
  Stages st(kStreamChunksInFlight);
  // The library scores on the threads the stages leave (one at least).
  const int32_t score_threads = s.threads > 3 ? s.threads - 2 : 1;
  auto scoring = [&] {
    while (Job* j = st.next_parsed()) {
      if (!st.skip(j->index)) {
        try {
          j->block.score(model, cols, view_of(j->chunk), s.level, s.reference, score_threads);
          j->text.clear();
          j->tally = ScoreTally{};
          CsvWriter rows(&j->text, writer.options());
          format_chunk(rows, j->chunk, j->block, cols, j->tally);
          rows.flush();
          st.scored(j);
          continue;
        } catch (...) {
          st.fail(j->index, std::current_exception());
        }
      }
      st.give_back(j);
    }
    st.end_scoring();
  };
  auto writing = [&] {
    WriteBehind behind(writer, s);
    while (Job* j = st.next_scored()) {
      if (!st.skip(j->index)) {
        try {
          writer.rows(j->text);
          behind.check();
          tally.rows += j->tally.rows;
          tally.flagged += j->tally.flagged;
          tally.unscorable += j->tally.unscorable;
          // The first 20 flagged rows of the file: this chunk's until 20 are listed.
          for (std::string& entry : j->tally.first_flags) {
            if (tally.first_flags.size() >= 20) break;
            tally.first_flags.push_back(std::move(entry));
          }
          progress.rows("scoring", tally.rows);
        } catch (...) {
          st.fail(j->index, std::current_exception());
        }
      }
      st.give_back(j);
    }
  };
  std::thread scorer, writer_thread;
  try {
    scorer = std::thread(scoring);
    writer_thread = std::thread(writing);
  } catch (...) {  // nothing is read yet: end the thread that started, then one thread or the error
    const std::exception_ptr e = std::current_exception();
    st.end_reading();
    if (scorer.joinable()) scorer.join();
    try {
      std::rethrow_exception(e);
    } catch (const std::system_error&) {  // the system refused a thread
      score_serially(reader, writer, model, cols, s, progress, tally);
      return;
    }
  }
  // Whatever leaves the reading loop, the two threads end before the stages go.
  struct JoinAtExit {
    Stages& st;
    std::thread& a;
    std::thread& b;
    ~JoinAtExit() {
      st.end_reading();
      if (a.joinable()) a.join();
      if (b.joinable()) b.join();
    }
  } join_at_exit{st, scorer, writer_thread};
  for (std::int64_t index = 0;; ++index) {
    Job* j = st.take_free();
    if (j == nullptr) break;  // a later stage failed: stop reading
    try {
      j->index = index;
      if (!reader.next_chunk(j->chunk, s.chunk_rows)) {
        st.give_back(j);
        break;
      }
      refuse_infinite_cells(reader, j->chunk);
      st.parsed(j);
    } catch (...) {
      st.fail(index, std::current_exception());
      st.give_back(j);
      break;
    }
  }
  st.end_reading();
  scorer.join();
  writer_thread.join();
  st.rethrow();
}

}  // namespace

void score_stream(CsvReader& reader, CsvWriter& writer, const ellipsa_model* model, const ScoreColumns& cols,
                  const ScoreStreamSettings& settings, Progress& progress, ScoreTally& tally) {
  if (settings.threads <= 1) score_serially(reader, writer, model, cols, settings, progress, tally);
  else score_overlapped(reader, writer, model, cols, settings, progress, tally);
}

}  // namespace ellipsa::cli
