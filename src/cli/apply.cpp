// plumb apply: stream rows through a map artifact, appending the calibrated
// probability to every row and passing every input column through unchanged.
#include <charconv>
#include <cstdio>
#include <string>

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "plumb/artifact.hpp"
#include "plumb/csv.hpp"
#include "plumb/error.hpp"
#include "plumb/labelled_input.hpp"
#include "plumb/output.hpp"

namespace plumb::cli {
namespace {

struct ApplyOptions {
  std::string artifact;
  std::string file = "-";
  std::string score;  // empty: the artifact's score column
  std::string as;     // empty: <score column>_calibrated
  std::string output = "-";
  std::string missing = "stop";
  std::string separator = "auto";
  bool quiet = false;
};

// The field as it must be written so a CSV reader reads `text` back.
std::string quoted_if_needed(const std::string& text, char delimiter) {
  if (text.find_first_of(std::string{delimiter, '"', '\n', '\r'}) == std::string::npos) return text;
  std::string out = "\"";
  for (char c : text) {
    if (c == '"') out += '"';
    out += c;
  }
  return out + "\"";
}

bool blank(std::string_view t) {
  return t.find_first_not_of(" \t") == std::string_view::npos;
}

int run_apply(const ApplyOptions& o) {
  const Artifact artifact = load_artifact(o.artifact);
  const CalibrationMap& map = *artifact.map;
  const Scale scale = map.scale();

  io::CsvOptions csv;
  csv.delimiter = parse_separator(o.separator);
  io::CsvReader reader(o.file, csv);
  const std::string score_spec = o.score.empty() ? artifact.score_column : o.score;
  const std::size_t score_col = reader.column(score_spec, "score");
  const std::string new_name = o.as.empty() ? reader.header()[score_col] + "_calibrated" : o.as;
  for (const std::string& h : reader.header())
    if (h == new_name) {
      Location loc;
      loc.file = reader.name();
      loc.line = 1;
      throw Error(ErrorKind::usage, "the input already has a column named '" + new_name + "'", loc, {},
                  "another name for the new column, given with --as");
    }
  const char delim = reader.delimiter();
  const std::string line_end(reader.header_record().line_end);

  io::OutputFile out(o.output);
  out.write(reader.header_record().raw);
  out.put(delim);
  out.write(quoted_if_needed(new_name, delim));
  out.write(line_end);

  Progress progress("plumb apply", o.quiet);
  const bool missing_is_empty = o.missing == "empty";
  std::uint64_t rows = 0, outside = 0, clamped = 0, clipped = 0, missing = 0;
  const double fitted_min = artifact.provenance.score_min, fitted_max = artifact.provenance.score_max;
  io::Record record;
  char number[32];
  while (reader.next(record)) {
    ++rows;
    const std::string_view s = record.fields[score_col];
    out.write(record.raw);
    out.put(delim);
    const std::optional<double> score = io::parse_number(s);
    if (score && valid_on_scale(*score, scale)) {
      const Mapped m = map.map(*score);
      outside += (*score < fitted_min || *score > fitted_max) ? 1 : 0;
      clamped += m.outside_fit_range ? 1 : 0;
      clipped += m.clipped ? 1 : 0;
      const auto [end, ec] = std::to_chars(number, number + sizeof number, m.probability);
      out.write(std::string_view(number, static_cast<std::size_t>(end - number)));
    } else if (missing_is_empty && blank(s)) {
      ++missing;
    } else {
      Location loc;
      loc.file = reader.name();
      loc.line = record.line;
      loc.column = score_col + 1;
      loc.column_name = reader.header()[score_col];
      if (blank(s))
        throw Error(ErrorKind::input, "the score is missing", loc, std::string(s),
                    "a score (or --missing empty to write an empty probability and go on)");
      const io::ScoreProblem why = io::score_problem(s, scale);
      throw Error(ErrorKind::input, why.message + " (the map was fitted on the " + std::string(to_string(scale)) +
                                        " scale)",
                  loc, std::string(s), why.expected);
    }
    out.write(line_end);
    if ((rows & 0xFFFF) == 0) progress.update(rows, reader.bytes_read(), reader.total_bytes());
  }
  out.commit();
  progress.finish();

  if (!o.quiet) {
    std::fprintf(stderr, "plumb apply: %s rows, %s outside the fitted scores [%s, %s] (%s held at the map's end "
                         "values), %s clipped near 0 or 1, %s missing scores left empty; written to %s\n",
                 grouped(rows).c_str(), grouped(outside).c_str(), shortest(fitted_min).c_str(),
                 shortest(fitted_max).c_str(), grouped(clamped).c_str(), grouped(clipped).c_str(),
                 grouped(missing).c_str(), out.name().c_str());
    if (rows > 0 && outside * 100 > rows)
      std::fprintf(stderr, "plumb apply: caution: more than 1%% of the scores lie outside the range the map was "
                           "fitted on; has the model or the population changed since the fit?\n");
  }
  return 0;
}

}  // namespace

Command add_apply_command(CLI::App& app) {
  auto o = std::make_shared<ApplyOptions>();
  CLI::App* cmd = app.add_subcommand(
      "apply", "Append calibrated probabilities to every row of a score file, streaming, in input order");
  cmd->footer(
      "Every input column is passed through byte for byte; the calibrated probability is appended as a new\n"
      "last column, written with the shortest digits that read back to the same double. With -o the output\n"
      "appears only when the whole input has been read without error.\n\n"
      "Examples:\n"
      "  plumb apply late.map.json tonight.csv -o tonight.calibrated.csv\n"
      "  plumb apply late.map.json big.csv.gz --as p_late | next-step");
  cmd->add_option("map", o->artifact, "Map artifact written by plumb fit")->required();
  cmd->add_option("file", o->file, "CSV or TSV file with a header row, plain or gzip; - or nothing reads standard input")
      ->default_str("-");
  cmd->add_option("--score", o->score, "Column holding the raw score (default: the column the map was fitted on)");
  cmd->add_option("--as", o->as, "Name of the new column (default: the score column's name + _calibrated)");
  cmd->add_option("-o,--output", o->output, "Where to write the rows (- for standard output)")->default_str("-");
  cmd->add_option("--missing", o->missing,
                  "A blank score: stop with an error, or write an empty probability and count the row")
      ->check(CLI::IsMember({"stop", "empty"}))
      ->default_str("stop");
  add_separator_option(*cmd, o->separator);
  add_quiet_option(*cmd, o->quiet);
  return [o] { return run_apply(*o); };
}

}  // namespace plumb::cli
