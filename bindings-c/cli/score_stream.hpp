// The score command's stream: chunks of a CSV file read, scored against a
// model and written with their scores, in file order. On one thread each chunk
// is read, scored and written in turn. On more, three stages overlap: the
// calling thread reads and parses chunk k + 2, a second thread scores and
// formats chunk k + 1, a third writes chunk k (the output is 2.5 times the
// input at the default columns, and writing it costs about as much as reading).
// At most kStreamChunksInFlight chunks exist at once, so memory stays bounded
// whatever the file's length. The output and every message are the same
// whatever the threads: chunks keep their order, and when stages fail the
// error of the earliest chunk is the one raised, as on one thread.
#pragma once
#include <cstdint>
#include <functional>
#include <string>
#include <vector>

#include "commands.hpp"
#include "csv_reader.hpp"
#include "csv_writer.hpp"
#include "progress.hpp"

namespace ellipsa::cli {

inline constexpr int kStreamChunksInFlight = 4;

// What the stream saw: rows, flagged rows, rows with nothing observed, and the
// first 20 flagged rows described one per line.
struct ScoreTally {
  int64_t rows = 0, flagged = 0, unscorable = 0;
  std::vector<std::string> first_flags;  // one entry per row (a variable's name may hold a line break)
};

struct ScoreStreamSettings {
  double level = 0.975;
  int32_t reference = 0;  // an ELLIPSA_REFERENCE_ value
  int32_t threads = 1;    // resolved (ellipsa_threads_resolve); 1: one thread, no overlap
  std::size_t chunk_rows = 8192;
  // Called on the writing thread after every kWriteBehindBytes of output, the
  // writer flushed (e.g. AtomicOutput::write_behind); may be empty.
  std::function<void()> write_behind;
};

// Output between two write_behind calls: the disk writes while the stream goes
// on, and the final fsync waits for the last piece only (measured: a 678 MB
// scored file took 0.5 s to fsync at the end).
inline constexpr std::size_t kWriteBehindBytes = std::size_t{64} << 20;

// Reads every chunk of `reader`, scores it against `model` and writes the rows
// with their scores to `writer` (whose header is written). Throws what a
// stage threw (CliError, OutputError, ...), for the earliest chunk.
void score_stream(CsvReader& reader, CsvWriter& writer, const ellipsa_model* model, const ScoreColumns& cols,
                  const ScoreStreamSettings& settings, Progress& progress, ScoreTally& tally);

}  // namespace ellipsa::cli
