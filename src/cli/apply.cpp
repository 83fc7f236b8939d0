// plumb apply: stream rows through a map artifact, appending the calibrated
// probability to every row (or writing it in place of the score with
// --replace) and passing every other input column through unchanged.
#include <algorithm>
#include <charconv>
#include <cstdio>
#include <string>
#include <thread>

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "plumb/io/apply_stream.hpp"
#include "plumb/io/artifact.hpp"
#include "plumb/io/class_apply_stream.hpp"
#include "plumb/io/class_artifact.hpp"
#include "plumb/map_registry.hpp"
#include "plumb/io/csv.hpp"
#include "plumb/error.hpp"
#include "plumb/io/labelled_input.hpp"
#include "plumb/io/output.hpp"

namespace plumb::cli {
namespace {

// The command's usage as --help prints it: the summary under the command's
// name, and the text after the options (what it does, examples).
constexpr const char* kUsageSummary =
    "Append calibrated probabilities to every row of a score file, streaming, in input order";
constexpr const char* kUsageFooter =
    "Every input column is passed through byte for byte; the calibrated probability is appended as a new\n"
    "last column (with --replace, written in place of the score column, which keeps its name unless --as\n"
    "gives one), in the shortest digits that read back to the same double unless --digits says how many.\n"
    "With -o the output appears only when the whole input has been read without error; a name ending in\n"
    ".gz is written as gzip.\n\n"
    "A multi-class map (fitted with --scores) reads the K score columns it was fitted on (or those --scores\n"
    "names, in the map's class order) and appends K columns NAME_calibrated, one per score column, whose\n"
    "values sum to 1 on each row; --argmax NAME adds a column with the most probable class.\n\n"
    "Examples:\n"
    "  plumb apply late.map.json tonight.csv -o tonight.calibrated.csv\n"
    "  plumb apply late.map.json big.csv.gz --as p_late | next-step\n"
    "  plumb apply outcome.map.json parcels.csv --argmax likely_outcome -o parcels.calibrated.csv";

struct ApplyOptions {
  std::string artifact;
  std::string file = "-";
  std::string score;  // empty: the artifact's score column
  std::string as;     // empty: <score column>_calibrated
  std::string output = "-";
  std::string missing = "refuse";
  std::string separator = "auto";
  unsigned threads = 0;
  int digits = 0;  // 0: shortest round trip
  bool replace = false;
  bool quiet = false;
  std::string argmax;               // multi-class: name of the most-probable-class column
  std::vector<std::string> scores;  // multi-class: the score columns, in the map's class order
  std::vector<std::string> given;   // binary-only options given
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

int run_apply_classes(const ApplyOptions& o, const ClassArtifact& artifact) {
  const ClassCalibrationMap& map = *artifact.map;
  for (const std::string& g : o.given)
    throw Error(ErrorKind::usage, g + " does not apply to a multi-class map", {}, {},
                "--scores COLS to name the score columns, --argmax NAME for the most probable class");
  io::CsvOptions csv;
  csv.delimiter = parse_separator(o.separator);
  csv.keep_sha256 = false;
  io::CsvReader reader(o.file, csv);
  if (!o.scores.empty() && o.scores.size() != map.k())
    throw Error(ErrorKind::usage, "--scores names " + std::to_string(o.scores.size()) + " columns for a map of " +
                                      std::to_string(map.k()) + " classes",
                {}, {}, "one column per class, in the map's class order");
  io::ClassApplyOptions stream;
  std::vector<std::string> new_names;
  for (std::size_t j = 0; j < map.k(); ++j) {
    const std::string spec = o.scores.empty() ? artifact.score_columns[j] : o.scores[j];
    std::size_t c = 0;
    try {
      c = reader.column(spec, "score");
    } catch (const Error& e) {
      if (!o.scores.empty() || e.kind() != ErrorKind::input) throw;
      throw Error(e.kind(), e.message() + " (the map was fitted on column '" + spec + "' for class '" +
                                map.classes()[j] + "')",
                  e.where(), e.value(), e.expected() + "; or name the columns with --scores");
    }
    stream.score_columns.push_back(c);
    new_names.push_back(reader.header()[c] + "_calibrated");
  }
  if (!o.argmax.empty()) new_names.push_back(o.argmax);
  for (std::size_t i = 0; i < new_names.size(); ++i) {
    bool taken = std::find(new_names.begin(), new_names.begin() + static_cast<std::ptrdiff_t>(i), new_names[i]) !=
                 new_names.begin() + static_cast<std::ptrdiff_t>(i);
    for (const std::string& h : reader.header()) taken = taken || h == new_names[i];
    if (taken) {
      Location loc;
      loc.file = reader.name();
      loc.line = 1;
      throw Error(ErrorKind::usage, "the input already has a column named '" + new_names[i] + "'", loc, {},
                  o.argmax == new_names[i] ? "another name given with --argmax"
                                           : "score columns whose NAME_calibrated is free (rename them and use --scores)");
    }
  }
  const char delim = reader.delimiter();
  io::OutputFile out(o.output);
  out.write(reader.header_record().raw);
  for (const std::string& n : new_names) {
    out.put(delim);
    out.write(quoted_if_needed(n, delim));
  }
  out.write(reader.header_record().line_end);
  stream.missing = parse_missing(o.missing);
  stream.digits = o.digits;
  stream.argmax = !o.argmax.empty();
  stream.threads = o.threads == 0 ? std::max(1u, std::thread::hardware_concurrency()) : o.threads;
  if (artifact.fit_options.contains("sum_tolerance") && artifact.fit_options["sum_tolerance"].is_number())
    stream.sum_tolerance = artifact.fit_options["sum_tolerance"].get<double>();
  Progress progress("plumb apply", o.quiet);
  const io::ClassApplyCounts counts =
      io::class_apply_stream(reader, map, out, stream, [&](std::uint64_t rows, std::uint64_t bytes, auto total) {
        progress.update(rows, bytes, total);
      });
  out.commit();
  progress.finish();
  if (!o.quiet) {
    const std::string missing_part =
        stream.missing == io::MissingPolicy::skip
            ? grouped(counts.skipped) + (counts.skipped == 1 ? " row" : " rows") + " with a missing score left out"
            : grouped(counts.missing) + " rows with a missing score left empty";
    std::fprintf(stderr, "plumb apply: %s rows through a %s map on %zu classes, %s with a probability raised to %s, "
                         "%s; written to %s\n",
                 grouped(counts.rows).c_str(), std::string(map.kind()).c_str(), map.k(), grouped(counts.clipped).c_str(),
                 shortest(class_probability_floor).c_str(), missing_part.c_str(), out.name().c_str());
  }
  return 0;
}

int run_apply(const ApplyOptions& o) {
  const ArtifactFile file = read_artifact_file(o.artifact);
  if (file.multi_class) return run_apply_classes(o, class_artifact_from_text(file.text, file.name));
  if (!o.scores.empty() || !o.argmax.empty())
    throw Error(ErrorKind::usage, std::string(o.scores.empty() ? "--argmax" : "--scores") +
                                      " applies to a multi-class map only",
                {}, {}, "--score COL for a binary map");
  const Artifact artifact = artifact_from_text(file.text, file.name);
  const CalibrationMap& map = *artifact.map;

  io::CsvOptions csv;
  csv.delimiter = parse_separator(o.separator);
  csv.keep_sha256 = false;
  io::CsvReader reader(o.file, csv);
  const std::string score_spec = map_score_column(artifact, o.score);
  std::size_t score_col = 0;
  try {
    score_col = reader.column(score_spec, "score");
  } catch (const Error& e) {
    if (!o.score.empty() || e.kind() != ErrorKind::input) throw;
    throw Error(e.kind(), e.message() + " (the map was fitted on column '" + score_spec + "')", e.where(), e.value(),
                e.expected() + "; or name the column to map with --score NAME");
  }
  // With --replace the column keeps its name unless --as renames it.
  const std::string new_name =
      !o.as.empty() ? o.as : o.replace ? reader.header()[score_col] : reader.header()[score_col] + "_calibrated";
  for (std::size_t c = 0; c < reader.header().size(); ++c)
    if (reader.header()[c] == new_name && !(o.replace && c == score_col)) {
      Location loc;
      loc.file = reader.name();
      loc.line = 1;
      throw Error(ErrorKind::usage, "the input already has a column named '" + new_name + "'", loc, {},
                  "another name for the new column, given with --as");
    }
  const char delim = reader.delimiter();
  const std::string line_end(reader.header_record().line_end);

  io::OutputFile out(o.output);
  const std::string_view header = reader.header_record().raw;
  if (o.replace) {
    const auto [at, length] = io::stored_field(header, score_col, delim);
    out.write(header.substr(0, at));
    out.write(o.as.empty() ? header.substr(at, length) : std::string_view(quoted_if_needed(new_name, delim)));
    out.write(header.substr(at + length));
  } else {
    out.write(header);
    out.put(delim);
    out.write(quoted_if_needed(new_name, delim));
  }
  out.write(line_end);

  io::ApplyStreamOptions stream;
  stream.score_column = score_col;
  stream.missing = parse_missing(o.missing);
  stream.digits = o.digits;
  stream.replace = o.replace;
  stream.threads = o.threads == 0 ? std::max(1u, std::thread::hardware_concurrency()) : o.threads;
  stream.fitted_min = artifact.provenance.score_min;
  stream.fitted_max = artifact.provenance.score_max;
  // apply has no --scale: the map's scale is the one the scores must be on.
  stream.other_scales_hint =
      "this map was fitted on probabilities; for log-odds or margins, use a map fitted with plumb fit --scale logit "
      "or --scale margin";
  Progress progress("plumb apply", o.quiet);
  const io::ApplyCounts counts =
      io::apply_stream(reader, map, out, stream, [&](std::uint64_t rows, std::uint64_t bytes, auto total) {
        progress.update(rows, bytes, total);
      });
  out.commit();
  progress.finish();
  const std::uint64_t rows = counts.rows, outside = counts.outside, clamped = counts.clamped,
                      clipped = counts.clipped, missing = counts.missing, skipped = counts.skipped;
  const double fitted_min = stream.fitted_min, fitted_max = stream.fitted_max;

  if (!o.quiet) {
    const std::string missing_part =
        stream.missing == io::MissingPolicy::skip
            ? grouped(skipped) + (skipped == 1 ? " row" : " rows") + " with a missing score left out"
            : grouped(missing) + " missing scores left empty";
    // Only an isotonic or histogram map holds a score outside its fitted
    // scores at its end value; a parametric curve goes on beyond them, so
    // for it the count of held rows (always 0) would say nothing.
    const MapKind* kind = find_map_kind(map.kind());
    const std::string held_part = clamped > 0 || (kind != nullptr && kind->nonparametric)
                                      ? " (" + grouped(clamped) + " held at the map's end values)"
                                      : "";
    std::fprintf(stderr, "plumb apply: %s rows, %s outside the fitted scores [%s, %s]%s, %s clipped near 0 or 1, %s; "
                         "written to %s\n",
                 grouped(rows).c_str(), grouped(outside).c_str(), shortest(fitted_min).c_str(),
                 shortest(fitted_max).c_str(), held_part.c_str(), grouped(clipped).c_str(), missing_part.c_str(),
                 out.name().c_str());
    if (!artifact.odds_steps.empty())
      std::fprintf(stderr, "plumb apply: the map's odds are adjusted as its artifact records, %s\n",
                   odds_steps_text(artifact).c_str());
    if (rows > 0 && outside * 100 > rows)
      std::fprintf(stderr, "plumb apply: caution: more than 1%% of the scores lie outside the range the map was "
                           "fitted on; has the model or the population changed since the fit?\n");
  }
  return 0;
}

}  // namespace

Command add_apply_command(CLI::App& app) {
  auto o = std::make_shared<ApplyOptions>();
  CLI::App* cmd = app.add_subcommand("apply", kUsageSummary);
  cmd->footer(kUsageFooter);
  cmd->add_option("map", o->artifact, "Map artifact written by plumb fit")->required();
  cmd->add_option("file", o->file, "CSV or TSV file with a header row, plain or gzip; - or nothing reads standard input")
      ->default_str("-");
  cmd->add_option("--score", o->score, "Column holding the raw score (default: the column the map was fitted on)");
  cmd->add_option("--as", o->as,
                  "Name of the new column (default: the score column's name + _calibrated; with --replace, the "
                  "score column's own name)");
  cmd->add_flag("--replace", o->replace,
                "Write the probability in place of the score, in the score column's position, instead of appending "
                "a column");
  cmd->add_option("--digits", o->digits,
                  "Significant digits of the probability, 1 to 17 (default: the shortest text that reads back to "
                  "the same double)")
      ->check(CLI::Range(1, 17));
  cmd->add_option("-o,--output", o->output, "Where to write the rows (- for standard output; a name ending in .gz "
                  "is written as gzip)")->default_str("-");
  add_missing_option(*cmd, o->missing, true);
  cmd->add_option("--threads", o->threads,
                  "Threads parsing and mapping rows (0: one per core); the output is the same for any count")
      ->check(CLI::Range(0, 1024))
      ->default_str("0");
  cmd->add_option("--scores", o->scores,
                  "Multi-class map: the K score columns, comma separated, in the map's class order (default: the "
                  "columns it was fitted on)")
      ->delimiter(',')
      ->option_text("COLS");
  cmd->add_option("--argmax", o->argmax,
                  "Multi-class map: also write the most probable class (the first of equals) in a column of this name");
  add_separator_option(*cmd, o->separator);
  add_quiet_option(*cmd, o->quiet);
  return [o, cmd] {
    for (const char* name : {"--score", "--as", "--replace"})
      if (cmd->count(name) > 0) o->given.push_back(name);
    return run_apply(*o);
  };
}

}  // namespace plumb::cli
