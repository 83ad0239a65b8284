// ellipsa-mpi score: rank 0 reads the model file and sends its text to every
// rank; each rank scores its rows into OUTPUT_DIR/scores-rank-R.csv (the
// columns of `ellipsa score`), through a temporary file that is renamed only
// once every rank has scored without error; rank 0 then writes summary.json.
#include <cstdio>
#include <fstream>
#include <sstream>

#include "atomic_output.hpp"
#include "csv_writer.hpp"
#include "driver.hpp"

namespace ellipsa::mpi {

namespace {

std::string read_file(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw cli::CliError(cli::kExitData, path + ": cannot open the model file");
  std::ostringstream ss;
  ss << in.rdbuf();
  if (ss.str().empty()) throw cli::CliError(cli::kExitData, path + ": the model file is empty");
  return ss.str();
}

struct RankScores {
  int64_t rows = 0, flagged = 0, unscorable = 0;
};

}  // namespace

int run_score(Comm& comm, const ScoreArgs& a) {
  const auto start = std::chrono::steady_clock::now();
  int digits = 0;
  int32_t reference = 0;
  std::string text;
  step(comm, [&] {
    digits = cli::parse_digits(a.digits);
    reference = cli::parse_reference(a.reference);
    if (!(a.level > 0.0 && a.level < 1.0)) throw cli::CliError(cli::kExitUsage, "--level must lie in (0, 1)");
    if (a.common.split_rows && a.common.files.size() != 1)
      throw cli::CliError(cli::kExitUsage, "--split-rows takes exactly one file");
    if (comm.rank() == 0) text = read_file(a.model);
  });
  text = comm.broadcast(text, "sending the model");
  cli::ModelPtr model;
  cli::ScoreColumns cols;
  std::vector<std::string> columns;
  step(comm, [&] {
    ellipsa_model* m = nullptr;
    cli::check(ellipsa_model_load(&m, text.data(), static_cast<int64_t>(text.size())), a.model);
    model.reset(m);
    cols = cli::score_columns(model.get());
    columns = cli::model_columns(model.get());
  });

  const std::string path = a.output_dir + "/scores-rank-" + std::to_string(comm.rank()) + ".csv";
  std::unique_ptr<cli::AtomicOutput> out;
  std::unique_ptr<cli::CsvWriter> writer;
  RankScores s;
  Part part = part_of_rank(a.common.files, a.common.split_rows, comm.rank(), comm.size());
  step(comm, [&] {
    cli::CsvOptions options = part_options(a.common, columns);
    options.keep_row_text = true;
    std::vector<std::string> first_header;
    std::string first_file;
    cli::ScoreBlock block;
    read_part(
        part, options, comm.rank(), comm.size(),
        [&](const cli::CsvChunk& chunk, std::size_t first, std::size_t count, const std::string& file,
            cli::CsvReader& reader) {
          if (!writer) {
            first_header = reader.header();
            first_file = file;
            std::vector<std::string> header = first_header;
            header.insert(header.end(), cols.names.begin(), cols.names.end());
            out = std::make_unique<cli::AtomicOutput>(path);
            cli::CsvWriteOptions wo;
            wo.separator = reader.separator();
            wo.decimal = options.decimal;
            wo.digits = digits;
            writer = std::make_unique<cli::CsvWriter>(out->stream(), wo);
            writer->header(header);
          } else if (reader.header() != first_header) {
            throw cli::CliError(cli::kExitData, file + ": its header differs from that of " + first_file +
                                                    " (one output per rank needs one header)");
          }
          const auto x =
              ellipsa_matrix_row_major(chunk.data() + first * chunk.cols(), static_cast<int64_t>(count), cols.p);
          block.score(model.get(), cols, x, a.level, reference);
          const auto p = static_cast<std::size_t>(cols.p);
          for (std::size_t r = 0; r < count; ++r) {
            writer->raw(chunk.row_text(first + r));
            if (cols.kind == ELLIPSA_KIND_MIXTURE) {
              writer->integer(block.component[r] + 1);
              for (int32_t k = 0; k < cols.components; ++k)
                writer->number(
                    block.membership[r * static_cast<std::size_t>(cols.components) + static_cast<std::size_t>(k)]);
              writer->number(block.log_density[r]).integer(block.low_density[r]);
            }
            writer->number(block.d2[r]).number(block.p_value[r]).integer(block.flag[r]).integer(block.observed[r]);
            for (std::size_t j = 0; j < p; ++j) writer->number(block.contribution[r * p + j]);
            writer->end_row();
            if (block.flag[r] == 1 || (cols.kind == ELLIPSA_KIND_MIXTURE && block.low_density[r] == 1)) ++s.flagged;
            if (block.flag[r] == -1) ++s.unscorable;
          }
          s.rows += static_cast<int64_t>(count);
        });
    if (writer) writer->flush();
  });
  // Every rank scored its rows: the parts become visible.
  step(comm, [&] {
    if (out) out->commit();
  });
  nlohmann::json mine{{"rank", comm.rank()},  {"files", part.files},        {"rows", s.rows},
                      {"flagged", s.flagged}, {"unscorable", s.unscorable}, {"output", out ? path : std::string()}};
  if (part.split_rows) mine["data_rows"] = {part.first_row, part.end_row};
  const auto parts = comm.gather(mine.dump(), "gathering the summaries");
  step(comm, [&] {
    if (comm.rank() != 0) return;
    nlohmann::json summary{{"model", a.model},
                           {"level", a.level},
                           {"limit", cli::reference_description(model.get(), reference)},
                           {"ranks", comm.size()},
                           {"rows", 0},
                           {"flagged", 0},
                           {"unscorable", 0},
                           {"parts", nlohmann::json::array()}};
    for (const auto& t : parts) {
      auto j = nlohmann::json::parse(t);
      for (const char* k : {"rows", "flagged", "unscorable"})
        summary[k] = summary[k].get<int64_t>() + j[k].get<int64_t>();
      summary["parts"].push_back(j);
    }
    summary["seconds"] = seconds_since(start);
    cli::write_text_file(a.output_dir + "/summary.json", summary.dump(2) + "\n");
    std::ostringstream human;
    human << "scored " << summary["rows"] << " rows on " << comm.size() << " ranks; " << summary["flagged"]
          << " flagged at level " << a.level << "; parts and summary.json in " << a.output_dir << "\n";
    cli::emit_summary(a.common.out, human.str(), summary);
  });
  return cli::kExitOk;
}

}  // namespace ellipsa::mpi
