// plumb cross-fit: out-of-fold calibration with leakage-safe splits, the
// evidence for each candidate map, and an artifact that carries it.
#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <limits>
#include <memory>
#include <string>
#if defined(__GLIBC__)
#include <malloc.h>
#endif

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "plumb/io/apply_stream.hpp"
#include "plumb/io/artifact.hpp"
#include "plumb/cross_fit.hpp"
#include "plumb/class_cross_fit.hpp"
#include "plumb/io/class_artifact.hpp"
#include "plumb/io/class_input.hpp"
#include "plumb/version.hpp"
#include "plumb/io/csv.hpp"
#include "plumb/error.hpp"
#include "plumb/map_registry.hpp"
#include "plumb/maps/class_fold_average_map.hpp"
#include "plumb/maps/fold_average_map.hpp"
#include "plumb/io/output.hpp"
#include "plumb/tally.hpp"

namespace plumb::cli {
namespace {

// The command's usage as --help prints it: the summary under the command's
// name, and the text after the options (what it does, examples). The list of
// kinds, simplest first, comes from the map registry.
std::string kinds_by_complexity();  // below: the registry's kinds, simplest first

constexpr const char* kUsageSummary =
    "Out-of-fold calibration: compare candidate maps on rows they were not fitted on, choose one, "
    "and write it with the evidence";
std::string usage_footer() {
  return "Splits (--split):\n"
         "  stratified      positives and negatives dealt evenly over the folds (default)\n"
         "  group=COLUMN    every row with one value of COLUMN (a customer, a route) lands in the same fold\n"
         "  time=COLUMN     forward chaining: each fold's map is fitted on earlier times only, and fold 1 is\n"
         "                  never scored; COLUMN holds numbers or ISO 8601 dates/date-times, one form throughout\n"
         "  column=COLUMN   the folds are COLUMN's values, made elsewhere (say, by the model's own cross-validation)\n\n"
         "With --map auto every kind that accepts the scale is a candidate, except venn_abers and\n"
         "cross_venn_abers (name them in a --map list: they are isotonic fits with an interval, which the\n"
         "out-of-fold log loss does not weigh). The choice is the simplest map\n"
         "(" + kinds_by_complexity() + ") whose out-of-fold log loss is within one standard\n"
         "error of the best (a paired per-row comparison). The evidence table goes to stderr; --json writes it.\n\n"
         "Downsampled negatives: when the rows kept only a fraction RATE of the negative rows, --negative-rate RATE\n"
         "fits every map on the rows as they are, then judges them on the population the rows were drawn from:\n"
         "each out-of-fold probability (the evidence and the --oof columns) has its odds multiplied by RATE, and\n"
         "each negative row counts 1/RATE times in every figure, the paired comparison and so the choice (the raw\n"
         "score's row is weighed so too, its probabilities as given). The artifact records odds x RATE, as\n"
         "fit --negative-rate does, and the evidence its negative_rate.\n\n"
         "Multi-class (--scores): the stratified split is stratified by class (group=, time= and column= as above);\n"
         "--map auto compares temperature, vector, dirichlet at each L2 of --l2-grid and one_vs_rest (--per-class)\n"
         "by out-of-fold log loss with the same one-standard-error rule (a larger L2 counts as simpler), shows\n"
         "each one's out-of-fold multi-class Brier score (0 to 2) beside it, and ships the choice refitted on all\n"
         "rows (--final folds: the mean of its fold maps' probabilities). --oof writes oof_fold and the chosen map's out-of-fold probabilities,\n"
         "one column NAME_calibrated per score column, as apply names them.\n\n"
         "Examples:\n"
         "  plumb cross-fit --scores 'p_*' --label outcome --folds 5 -o outcome.map.json parcels.csv\n"
         "  plumb cross-fit --scores 'p_*' --label outcome --split group=route --oof outcome.oof.csv.gz \\\n"
         "      -o outcome.map.json parcels.csv\n"
         "  plumb cross-fit --map isotonic,platt,beta --score risk --label missed --split group=parcel_route \\\n"
         "      --oof oof.csv -o late.map.json holdout.csv\n"
         "  plumb cross-fit --score risk --label missed --split time=night --final folds holdout.csv > late.map.json";
}

struct CrossFitOptions {
  InputOptions input;
  std::string maps = "auto";
  std::size_t folds = 5;
  std::string split = "stratified";
  std::uint64_t seed = 1;
  std::string oof;
  int oof_digits = 0;  // 0: the shortest text that reads back to the same double
  std::string output = "-";
  std::string json_path;
  std::string final_kind = "refit";
  MapChoices choices;
  bool no_timestamp = false;
  double negative_rate = 1.0;  // --negative-rate, when negative_rate_given
  bool negative_rate_given = false;
  ClassOptions classes;                  // --scores, --classes, --sum-tolerance
  std::vector<double> l2_grid = default_l2_grid();  // --l2-grid
  std::string per_class = "isotonic";    // --per-class
  std::vector<std::string> given;        // options that do not go with --scores, as given
};

struct Split {
  SplitKind kind = SplitKind::stratified;
  std::string column;  // group, time or fold column
};

Split parse_split(const std::string& text) {
  Split s;
  const auto eq = text.find('=');
  const std::string name = text.substr(0, eq);
  if (name == "stratified" && eq == std::string::npos) return s;
  if (eq != std::string::npos && eq + 1 < text.size()) {
    s.column = text.substr(eq + 1);
    if (name == "group") s.kind = SplitKind::group;
    else if (name == "time") s.kind = SplitKind::time;
    // `given` is the first release's spelling of `column`, kept for one release.
    else if (name == "column" || name == "given") s.kind = SplitKind::column;
    else s.column.clear();
    if (!s.column.empty()) return s;
  }
  throw Error(ErrorKind::usage, "unknown --split", {}, text, "stratified, group=COLUMN, time=COLUMN or column=COLUMN");
}

std::vector<std::string> parse_kinds(const std::string& text, Scale scale) {
  std::vector<std::string> kinds;
  if (text == "auto") {
    // The Venn-Abers kinds are left out (name them in a list): their
    // probability is a merge of two isotonic fits, so it competes with
    // isotonic's and, ranked last by the one-standard-error rule, would
    // rarely be chosen, while the cross form costs K fits per fold; what they
    // add, the interval, is not what the out-of-fold log loss weighs.
    for (std::string_view k : map_kinds())
      if (accepts_scale(k, scale) && find_map_kind(k)->in_auto) kinds.emplace_back(k);
    return kinds;
  }
  std::size_t start = 0;
  while (start <= text.size()) {
    const auto comma = text.find(',', start);
    const std::string k = text.substr(start, comma == std::string::npos ? std::string::npos : comma - start);
    const MapKind* known = find_map_kind(k);
    if (known == nullptr || !known->fittable)
      throw Error(ErrorKind::usage, "unknown map kind in --map", {}, k, "auto, or a comma list of " + map_kind_list());
    if (!known->accepts(scale)) throw scale_refusal(*known, scale, "another --map list");
    if (std::find(kinds.begin(), kinds.end(), k) == kinds.end()) kinds.push_back(k);
    if (comma == std::string::npos) break;
    start = comma + 1;
  }
  return kinds;
}

// Refusals of a time value point at the first row holding it.
TimeLocator time_locator(const io::LabelledRows& rows) {
  return [&rows](std::size_t v) {
    Location loc;
    loc.file = rows.source;
    loc.line = rows.segment_lines[v];
    loc.column = rows.segment_column_number;
    loc.column_name = rows.segment_column;
    return loc;
  };
}

// The fittable kinds, simplest first ("temperature, platt, ...").
std::string kinds_by_complexity() {
  std::vector<const MapKind*> kinds;
  for (const MapKind& k : map_registry())
    if (k.fittable) kinds.push_back(&k);
  std::sort(kinds.begin(), kinds.end(), [](const MapKind* a, const MapKind* b) { return a->complexity < b->complexity; });
  std::string out;
  for (const MapKind* k : kinds) out += (out.empty() ? "" : ", ") + std::string(k->name);
  return out;
}

void print_evidence(const CrossFitResult& r, const std::string& skipped) {
  std::fprintf(stderr, "plumb cross-fit: %zu folds (%s), %s rows scored out of fold%s\n", r.folds.count,
               std::string(to_string(r.folds.kind)).c_str(), grouped(r.scored_rows).c_str(), skipped.c_str());
  std::fprintf(stderr, "  %-19s %9s %9s %8s %8s %8s %9s  %s\n", "map", "log loss", "Brier", "ECE", "MCB", "AUC",
               "fold sd", "vs best (se)");
  auto row = [](const char* name, const OutOfFoldFigures& f, const std::string& versus) {
    std::fprintf(stderr, "  %-19s %9.5f %9.5f %8.5f %8.5f %8.5f %9.5f  %s\n", name, f.log_loss, f.brier, f.ece, f.mcb,
                 f.auc, f.fold_log_loss_sd, versus.c_str());
  };
  if (r.has_raw) row("(raw score)", r.raw, "");
  for (std::size_t k = 0; k < r.candidates.size(); ++k) {
    const Candidate& c = r.candidates[k];
    char versus[64];
    if (k == r.best) std::snprintf(versus, sizeof versus, "best");
    else std::snprintf(versus, sizeof versus, "%+.5f (%.5f)", c.diff_vs_best, c.diff_se);
    const std::string name = (k == r.chosen ? "* " : "  ") + c.kind;
    row(name.c_str(), c.figures, versus);
  }
  std::fprintf(stderr, "  chosen: %s. %s.\n", r.candidates[r.chosen].kind.c_str(), r.reason.c_str());
}

void write_oof(const CrossFitOptions& o, const io::LabelledRows& rows, const CrossFitResult& r, char separator) {
  io::CsvOptions csv;
  csv.delimiter = separator;
  io::CsvReader reader(o.input.file, csv);
  const char d = reader.delimiter();
  const std::string line_end(reader.header_record().line_end);
  for (const std::string& h : reader.header())
    if (h.rfind("oof_", 0) == 0)
      throw Error(ErrorKind::usage, "the input already has a column named '" + h + "'", {}, {},
                  "input without 'oof_*' columns when writing --oof");
  io::OutputFile out(o.oof);
  out.write(reader.header_record().raw);
  out.put(d);
  out.write("oof_fold");
  for (const Candidate& c : r.candidates) {
    out.put(d);
    out.write("oof_" + c.kind);
  }
  out.write(line_end);
  io::Record record;
  std::size_t i = 0, skipped = 0;
  char number[32];
  while (reader.next(record)) {
    // Rows left out under --missing skip are left out here too.
    if (skipped < rows.skipped_lines.size() && rows.skipped_lines[skipped] == record.line) {
      ++skipped;
      continue;
    }
    if (i >= rows.rows) throw Error(ErrorKind::io, "the input changed while cross-fit was reading it");
    // A row's probabilities sit in its cell, and input order visits the
    // cells at random: ask for those of a row some way ahead, so the wait
    // for memory overlaps the writing of the rows between.
    if (constexpr std::size_t ahead = 32; i + ahead < r.cell_of_row.size())
      for (const Candidate& c : r.candidates) __builtin_prefetch(&c.oof[r.cell_of_row[i + ahead]]);
    out.write(record.raw);
    out.put(d);
    // Folds read from a column keep its values; made folds are numbered from 1.
    if (r.folds.kind == SplitKind::column) out.write(rows.segment_names[rows.segment[i]]);
    else out.write(std::to_string(r.folds.fold_of_row[i] + 1));
    for (std::size_t c = 0; c < r.candidates.size(); ++c) {
      out.put(d);
      const double p = r.oof(c, i);
      if (std::isfinite(p)) {
        const char* end = io::probability_text(number, number + sizeof number, p, o.oof_digits);
        out.write(std::string_view(number, static_cast<std::size_t>(end - number)));
      }
    }
    out.write(line_end);
    ++i;
  }
  if (i != rows.rows) throw Error(ErrorKind::io, "the input changed while cross-fit was reading it");
  out.commit();
}

// --oof with --scores: every input row as read, its fold (oof_fold: made
// folds numbered from 1, a fold column's own values) and the chosen map's K
// out-of-fold probabilities, named as apply names its columns
// (NAME_calibrated, in class order); empty for a row no fold scores.
// The caller commits `out`, with the command's other outputs.
void write_class_oof(io::OutputFile& out, const CrossFitOptions& o, const io::ClassRows& rows, const Folds& folds,
                     const ClassCrossFitResult& r, char separator) {
  io::CsvOptions csv;
  csv.delimiter = separator;
  io::CsvReader reader(o.input.file, csv);
  const char d = reader.delimiter();
  const std::string line_end(reader.header_record().line_end);
  std::vector<std::string> names{"oof_fold"};
  for (const std::string& c : rows.score_columns) names.push_back(c + "_calibrated");
  for (std::size_t c = 0; c < reader.header().size(); ++c)
    for (const std::string& n : names)
      if (reader.header()[c] == n) {
        Location loc;
        loc.file = reader.name();
        loc.line = 1;
        loc.column = c + 1;
        loc.column_name = n;
        throw Error(ErrorKind::usage, "the input already has a column named '" + n + "', which --oof writes", loc, n,
                    "input without the columns oof_fold and NAME_calibrated of its --scores columns when writing "
                    "--oof");
      }
  out.write(reader.header_record().raw);
  for (const std::string& n : names) {
    out.put(d);
    out.write(n);
  }
  out.write(line_end);
  const std::size_t k = rows.data.k();
  io::Record record;
  std::size_t i = 0, skipped = 0;
  char number[32];
  while (reader.next(record)) {
    // Rows left out under --missing skip are left out here too.
    if (skipped < rows.skipped_lines.size() && rows.skipped_lines[skipped] == record.line) {
      ++skipped;
      continue;
    }
    if (i >= rows.data.rows || rows.lines[i] != record.line)
      throw Error(ErrorKind::io, "the input changed while cross-fit was reading it");
    out.write(record.raw);
    out.put(d);
    if (folds.kind == SplitKind::column) out.write(rows.segment_names[rows.segment[i]]);
    else out.write(std::to_string(folds.fold_of_row[i] + 1));
    for (std::size_t c = 0; c < k; ++c) {
      out.put(d);
      const double p = r.oof[i * k + c];
      if (std::isfinite(p)) {
        const char* end = io::probability_text(number, number + sizeof number, p, o.oof_digits);
        out.write(std::string_view(number, static_cast<std::size_t>(end - number)));
      }
    }
    out.write(line_end);
    ++i;
  }
  if (i != rows.data.rows) throw Error(ErrorKind::io, "the input changed while cross-fit was reading it");
}

// The multi-class cross-fit: stratified by class unless --split says
// otherwise (the binary split code: grouped, by time, from a column),
// candidates from the multi-class registry (dirichlet once per L2 of the
// grid), the choice refitted on all rows and written with its evidence.
int run_class_cross_fit(const CrossFitOptions& o) {
  for (const std::string& g : o.given)
    throw Error(ErrorKind::usage, g + " does not apply with --scores", {}, {},
                "--scores COLS --label COL with --map, --folds, --split, --seed, --l2-grid, --per-class, --oof, "
                "--digits, --json, -o");
  const MapKind* per = find_map_kind(o.per_class);
  if (!per || !per->fittable || !per->accepts(Scale::probability))
    throw Error(ErrorKind::usage, "--per-class names no binary kind on probabilities", {}, o.per_class,
                map_kind_list());
  for (double l2 : o.l2_grid)
    if (!(l2 >= 0.0 && std::isfinite(l2)))
      throw Error(ErrorKind::usage, "--l2-grid holds a negative or infinite weight", {}, shortest(l2),
                  "L2 weights >= 0, comma separated");
  std::vector<ClassCandidateSpec> candidates;
  if (o.maps == "auto") {
    candidates = auto_class_candidates(o.l2_grid, o.per_class);
  } else {
    std::string rest = o.maps;
    while (!rest.empty()) {
      const std::size_t comma = rest.find(',');
      const std::string kind = rest.substr(0, comma);
      rest = comma == std::string::npos ? "" : rest.substr(comma + 1);
      if (!find_class_map_kind(kind))
        throw Error(ErrorKind::usage, "--map names no multi-class kind", {}, kind,
                    "auto, or a comma list of " + class_map_kind_list());
      if (kind == "dirichlet") {
        for (double l2 : o.l2_grid) {
          ClassCandidateSpec s{kind, {}};
          s.options.l2 = l2;
          candidates.push_back(s);
        }
      } else {
        ClassCandidateSpec s{kind, {}};
        s.options.per_class = o.per_class;
        candidates.push_back(s);
      }
    }
  }
  const Split split = parse_split(o.split);
  if (!o.oof.empty() && (o.input.file.empty() || o.input.file == "-"))
    throw Error(ErrorKind::usage, "--oof needs the input as a file", {}, {},
                "a file name (the rows are read a second time to write them out)");
  const char separator = parse_separator(o.input.separator);
  io::ClassColumns columns = class_columns(o.input, o.classes);
  columns.segment = split.column;
  columns.segment_role = "split";
  columns.max_segment_values = std::numeric_limits<std::uint32_t>::max();  // one group or time per row is fine
  const io::ClassRows rows = io::read_class_scores(o.input.file, columns, separator);
  Folds folds;
  switch (split.kind) {
    case SplitKind::stratified: folds = class_stratified_folds(rows.data.label, rows.data.k(), o.folds, o.seed); break;
    case SplitKind::group: folds = group_folds(rows.segment, rows.segment_names.size(), o.folds, o.seed); break;
    case SplitKind::time: {
      const TimeLocator where = [&rows](std::size_t v) {
        Location loc;
        loc.file = rows.source;
        loc.line = rows.segment_lines[v];
        loc.column = rows.segment_column_number;
        loc.column_name = rows.segment_column;
        return loc;
      };
      folds = time_folds(time_ranks(rows.segment_names, rows.segment, where), o.folds);
      break;
    }
    case SplitKind::column: folds = column_folds(rows.segment, rows.segment_names.size()); break;
  }
  ClassCrossFitResult result;
  Location loc;
  loc.file = rows.source;
  try {
    result = class_cross_fit(rows.data, folds, candidates);
  } catch (const Error& e) {
    if (e.kind() != ErrorKind::fit || !e.where().file.empty()) throw;
    throw Error(e.kind(), e.message(), loc, e.value(), e.expected());
  }
  const ClassCandidate& chosen = result.candidates[result.chosen];
  nlohmann::json list = nlohmann::json::array();
  for (const ClassCandidate& c : result.candidates)
    list.push_back({{"kind", c.spec.kind},
                    {"name", c.name},
                    {"l2", c.spec.kind == "dirichlet" ? nlohmann::json(c.spec.options.l2) : nlohmann::json(nullptr)},
                    {"log_loss", c.log_loss},
                    {"fold_log_loss", c.fold_log_loss},
                    {"brier", c.brier},
                    {"brier_se", c.brier_se},
                    {"log_loss_minus_best", c.diff_vs_best},
                    {"log_loss_minus_best_se", c.diff_se}});
  nlohmann::json split_json = {{"kind", std::string(to_string(split.kind))}};
  if (split.kind == SplitKind::stratified) split_json["by"] = "class";
  else split_json["column"] = rows.segment_column;
  const nlohmann::json evidence = {{"folds", folds.count},
                                   {"split", split_json},
                                   {"seed", o.seed},
                                   {"final", o.final_kind},
                                   {"scored_rows", result.scored_rows},
                                   {"candidates", list},
                                   {"chosen", chosen.name},
                                   {"reason", result.reason}};
  ClassArtifact artifact;
  try {
    ClassMapOptions options = chosen.spec.options;
    options.binary = o.choices.map_options();
    if (o.final_kind == "folds") {
      // The fold maps as they were scored, averaged: each row's K
      // probabilities are the mean of K-vectors that each sum to 1.
      std::vector<std::shared_ptr<const ClassCalibrationMap>> maps;
      for (const auto& m : chosen.fold_maps)
        if (m) maps.push_back(m);
      const std::size_t fold_maps = maps.size();
      artifact.map = std::make_unique<ClassFoldAverageMap>(rows.data.classes, rows.data.scale, std::move(maps));
      FitDiagnostics d;
      d.log_loss = class_log_loss(*artifact.map, rows.data);
      d.notes.push_back("the mean of " + std::to_string(fold_maps) + " fold maps of kind " + chosen.name);
      artifact.map->restore_diagnostics(std::move(d));
    } else {
      artifact.map = fit_class_map(chosen.spec.kind, rows.data, options);
    }
    if (chosen.spec.kind == "dirichlet") artifact.fit_options["l2"] = options.l2;
    if (chosen.spec.kind == "one_vs_rest") {
      artifact.fit_options["per_class"] = options.per_class;
      artifact.fit_options["per_class_options"] = o.choices.recorded(options.per_class);
    }
  } catch (const Error& e) {
    if (e.kind() != ErrorKind::fit || !e.where().file.empty()) throw;
    throw Error(e.kind(), e.message(), loc, e.value(), e.expected());
  }
  if (columns.scale == ClassScale::probability) artifact.fit_options["sum_tolerance"] = columns.sum_tolerance;
  artifact.score_columns = rows.score_columns;
  artifact.cross_fit = evidence;
  artifact.provenance = class_provenance(rows, columns.missing, o.no_timestamp);

  // Every output is written before any is committed, so that a failure
  // (an input column --oof would write, an unwritable directory) leaves
  // none of them behind.
  std::unique_ptr<io::OutputFile> oof_out, json_out;
  if (!o.oof.empty()) {
    oof_out = std::make_unique<io::OutputFile>(o.oof);
    write_class_oof(*oof_out, o, rows, folds, result, separator);
  }
  if (!o.json_path.empty()) {
    json_out = std::make_unique<io::OutputFile>(o.json_path);
    json_out->write(evidence_to_text(evidence));
  }
  io::OutputFile out(o.output);
  out.write(class_artifact_to_text(artifact));
  if (oof_out) oof_out->commit();
  if (json_out) json_out->commit();
  out.commit();
  if (!o.input.quiet) {
    std::size_t width = 10;
    for (const ClassCandidate& c : result.candidates) width = std::max(width, c.name.size());
    std::string how;
    switch (split.kind) {
      case SplitKind::stratified: how = "stratified by class, seed " + std::to_string(o.seed); break;
      case SplitKind::group: how = "grouped by " + rows.segment_column + ", seed " + std::to_string(o.seed); break;
      case SplitKind::time: how = "forward in time by " + rows.segment_column; break;
      case SplitKind::column: how = "from the column " + rows.segment_column; break;
    }
    std::fprintf(stderr, "plumb cross-fit: %zu folds %s, %s rows scored out of fold\n", folds.count, how.c_str(),
                 grouped(result.scored_rows).c_str());
    std::fprintf(stderr, "  %-*s %12s %24s %22s\n", static_cast<int>(width), "candidate", "oof log loss",
                 "minus best (se)", "oof Brier (se)");
    for (std::size_t i = 0; i < result.candidates.size(); ++i) {
      const ClassCandidate& c = result.candidates[i];
      const std::string versus = i == result.best
                                     ? std::string("best")
                                     : fixed_text(c.diff_vs_best, 6) + " (" + fixed_text(c.diff_se, 6) + ")";
      std::fprintf(stderr, "  %-*s %12s %24s %22s\n", static_cast<int>(width), c.name.c_str(),
                   fixed_text(c.log_loss, 6).c_str(), versus.c_str(),
                   (fixed_text(c.brier, 6) + " (" + fixed_text(c.brier_se, 6) + ")").c_str());
    }
    std::fprintf(stderr, "plumb cross-fit: chose %s: %s\n", chosen.name.c_str(), result.reason.c_str());
    if (split.kind == SplitKind::time)
      std::fprintf(stderr, "plumb cross-fit: note: the earliest time block (fold 1) is never scored: no earlier "
                           "rows exist to fit its map on\n");
    std::fprintf(stderr, "plumb cross-fit: %s map (%s) written to %s\n", chosen.name.c_str(),
                 o.final_kind == "folds" ? "the fold maps, averaged" : "refitted on all rows", out.name().c_str());
  }
  return 0;
}

int run_cross_fit(const CrossFitOptions& o) {
  if (o.oof_digits != 0 && o.oof.empty())
    throw Error(ErrorKind::usage, "--digits sets the digits of the --oof file, and no --oof was given", {},
                std::to_string(o.oof_digits), "--oof FILE with --digits");
  if (!o.classes.scores.empty()) return run_class_cross_fit(o);
#if defined(__GLIBC__)
  // Blocks of 4 MB and more straight from the system and back to it when
  // freed. glibc otherwise raises its threshold to the size of the first
  // large block freed (the reader's), then serves the folds' fits and the
  // figures' short-lived buffers from a heap they leave fragmented: about
  // 100 MB more peak memory on 10^7 rows, for half a second less of system
  // time (docs/benchmarks.md). Memory only: no number changes.
  mallopt(M_MMAP_THRESHOLD, 4 << 20);
#endif
  (void)o.choices.map_options();  // refuses a bad --between-blocks before any reading
  if (o.negative_rate_given && !(o.negative_rate > 0.0 && o.negative_rate <= 1.0))
    throw Error(ErrorKind::usage, "--negative-rate lies outside (0, 1]", {}, shortest(o.negative_rate),
                "the rate at which negative rows were kept when the rows were drawn, such as 0.1 for one in ten "
                "(1: all kept)");
  const Scale scale = parse_scale_option(o.input.scale);
  const std::vector<std::string> kinds = parse_kinds(o.maps, scale);
  const Split split = parse_split(o.split);
  if (!o.oof.empty() && (o.input.file.empty() || o.input.file == "-"))
    throw Error(ErrorKind::usage, "--oof needs the input as a file", {}, {},
                "a file name (the rows are read a second time to write them out)");
  const char separator = parse_separator(o.input.separator);

  io::LabelledColumns columns{{{o.input.score, scale}}, o.input.label, o.input.weight, split.column};
  columns.max_segment_values = std::numeric_limits<std::uint32_t>::max();  // one group or time per row is fine
  columns.other_scales_hint = scale_option_hint();
  io::LabelledRows rows = read_rows_with_progress("plumb cross-fit: reading", o.input, columns);

  Folds folds;
  switch (split.kind) {
    case SplitKind::stratified: folds = stratified_folds(rows.label, o.folds, o.seed); break;
    case SplitKind::group: folds = group_folds(rows.segment, rows.segment_names.size(), o.folds, o.seed); break;
    case SplitKind::time: folds = time_folds(time_ranks(rows.segment_names, rows.segment, time_locator(rows)), o.folds);
      break;
    case SplitKind::column: folds = column_folds(rows.segment, rows.segment_names.size()); break;
  }
  const FitData data{rows.scores[0], rows.label, rows.weight, scale};
  const MapOptions map_options = o.choices.map_options();
  // The refit reads the sums cross_fit keeps, so the scores and labels can
  // go once cross_fit has taken what it needs from them (--final folds
  // still scores every row with the averaged map).
  const bool keep_rows = o.final_kind == "folds";
  CrossFitResult result = cross_fit(data, std::move(folds), kinds, map_options, [&] {
    if (keep_rows) return;
    std::vector<double>().swap(rows.scores[0]);
    std::vector<double>().swap(rows.label);
  }, o.negative_rate_given ? o.negative_rate : 1.0);
  Candidate& chosen = result.candidates[result.chosen];

  Artifact artifact;
  if (o.final_kind == "folds") {
    std::vector<std::unique_ptr<CalibrationMap>> maps;
    for (auto& m : chosen.fold_maps)
      if (m) maps.push_back(std::move(m));
    artifact.map = std::make_unique<FoldAverageMap>(scale, std::move(maps));
    FitDiagnostics d;
    d.iterations = 0;
    d.log_loss = mean_log_loss(*artifact.map, data);
    d.notes.push_back("the mean of " + std::to_string(result.folds.count) + " fold maps of kind " + chosen.kind);
    artifact.map->restore_diagnostics(std::move(d));
  } else {
    // The sums of every row, kept by cross_fit: the map fit_map gives on the
    // rows, without sorting them again.
    artifact.map = fit_map_on_tally(chosen.kind, result.all_rows, map_options);
  }
  artifact.score_column = rows.score_columns[0];
  artifact.fit_options = o.choices.recorded(chosen.kind);
  artifact.cross_fit = cross_fit_evidence(result, split.kind, split.column, o.seed, o.final_kind);
  if (o.negative_rate_given) {
    // The map fitted on the sample gives the sample's odds; the artifact
    // records the correction to the population, as fit --negative-rate does.
    OddsStep step;
    step.reason = OddsStep::Reason::negative_sampling;
    step.negative_rate = o.negative_rate;
    add_odds_step(artifact, step);
    artifact.cross_fit["negative_rate"] = o.negative_rate;
  }
  artifact.provenance = provenance_of(rows, o.input, o.no_timestamp);
  // The chosen map's reference for plumb drift: every row's sums, unweighted only.
  // Scores spanning more grid cells than a reference holds get none.
  if (rows.weight.empty()) {
    try {
      artifact.reference = reference_from_tally(result.all_rows, default_reference_grid);
    } catch (const Error& e) {
      if (e.kind() != ErrorKind::input) throw;
    }
  }

  if (!o.oof.empty()) write_oof(o, rows, result, separator);
  if (!o.json_path.empty()) {
    io::OutputFile js(o.json_path);
    js.write(evidence_to_text(artifact.cross_fit));
    js.commit();
  }
  io::OutputFile out(o.output);
  out.write(artifact_to_text(artifact));
  out.commit();

  if (!o.input.quiet) {
    std::string note = skipped_note(o.input, rows.skipped);
    if (o.negative_rate_given)
      note += "; negatives kept at rate " + shortest(o.negative_rate) + ": each negative row weighs " +
              significant(1.0 / o.negative_rate, 6) + " and each map's probability has odds x " +
              shortest(o.negative_rate);
    print_evidence(result, note);
    if (split.kind == SplitKind::time)
      std::fprintf(stderr, "plumb cross-fit: note: the earliest time block (fold 1) is never scored: no earlier "
                           "rows exist to fit its map on\n");
    if (find_map_kind(chosen.kind)->nonparametric && rows.weight_total < few_rows_for_nonparametric) {
      char amount[64];
      if (rows.weight.empty()) std::snprintf(amount, sizeof amount, "only %s rows", grouped(rows.rows).c_str());
      else std::snprintf(amount, sizeof amount, "a total weight of only %s", weight_text(rows.weight_total).c_str());
      std::fprintf(stderr,
                   "plumb cross-fit: caution: %s was chosen on %s; a nonparametric map usually needs about "
                   "%s rows or more (common practice)%s\n",
                   chosen.kind.c_str(), amount, grouped(static_cast<std::uint64_t>(few_rows_for_nonparametric)).c_str(),
                   result.candidates.size() == 1
                       ? ". It was the only candidate: compare it with the other kinds, --map auto."
                       : ", and its out-of-fold lead may not hold on new rows.");
    }
    std::fprintf(stderr, "plumb cross-fit: %s map (%s%s) written to %s\n", chosen.kind.c_str(),
                 o.final_kind == "folds" ? "the fold maps, averaged" : "refitted on all rows",
                 o.negative_rate_given ? (", odds x " + shortest(o.negative_rate)).c_str() : "", out.name().c_str());
  }
  return 0;
}

}  // namespace

Command add_cross_fit_command(CLI::App& app) {
  auto o = std::make_shared<CrossFitOptions>();
  CLI::App* cmd = app.add_subcommand("cross-fit", kUsageSummary);
  cmd->footer(usage_footer());
  add_input_options(*cmd, o->input, true);
  // Checked when the command runs, so that --tally gets its own message.
  cmd->get_option("--score")->required(false)->description("Column holding the raw score (name or 1-based index); required");
  cmd->get_option("--label")->required(false)->description("Column holding the observed outcome (name or 1-based index); required");
  auto tally = std::make_shared<std::string>();
  cmd->add_option("--tally", *tally,
                  "Not accepted: folds split rows and a tally has merged them (see the message it gives)");
  cmd->add_option("--map", o->maps, "Candidates: auto, or a comma list such as isotonic,platt,beta")
      ->default_str("auto");
  cmd->add_option("--folds", o->folds, "Number of folds (with --split column=COLUMN, the column decides)")
      ->check(CLI::Range(2, 1000))
      ->default_str("5");
  cmd->add_option("--split", o->split, "stratified, group=COLUMN, time=COLUMN or column=COLUMN")
      ->default_str("stratified");
  cmd->add_option("--seed", o->seed, "Seed of the stratified and grouped splits")->default_str("1");
  cmd->add_option("--oof", o->oof,
                  "Write every input row with its fold (oof_fold) and each candidate's out-of-fold probability (oof_KIND); "
                  "with --scores, the chosen map's K out-of-fold probabilities (NAME_calibrated)");
  cmd->add_option("--digits", o->oof_digits,
                  "Significant digits of the --oof probabilities, 1 to 17 (default: the shortest text that reads "
                  "back to the same double), as apply's --digits")
      ->check(CLI::Range(1, 17));
  cmd->add_option("-o,--output", o->output, "Where to write the chosen map's artifact (- for standard output)")
      ->default_str("-");
  cmd->add_option("--json", o->json_path, "Also write the evidence as JSON");
  cmd->add_option("--final", o->final_kind,
                  "The shipped map: refit the chosen kind on all rows, or keep its fold maps and average them")
      ->check(CLI::IsMember({"refit", "folds"}))
      ->default_str("refit");
  add_map_options(*cmd, o->choices);
  cmd->add_option("--negative-rate", o->negative_rate,
                  "The rows kept each negative row at this rate, in (0, 1] (downsampling): the out-of-fold evidence "
                  "is judged on the full population (odds x RATE, negatives weighing 1/RATE) and the artifact "
                  "records odds x RATE")
      ->option_text("RATE");
  cmd->add_flag("--no-timestamp", o->no_timestamp, "Leave the creation time out of the artifact");
  add_class_options(*cmd, o->classes);
  cmd->add_option("--l2-grid", o->l2_grid,
                  "With --scores: the L2 weights at which dirichlet is a candidate, comma separated")
      ->delimiter(',')
      ->default_str("1,0.1,0.01,0.001")
      ->option_text("L2S");
  cmd->add_option("--per-class", o->per_class, "With --scores: one_vs_rest's binary kind for each class")
      ->check(CLI::IsMember(std::vector<std::string>(map_kinds().begin(), map_kinds().end())))
      ->default_str("isotonic")
      ->option_text("KIND");
  return [o, tally, cmd] {
    o->negative_rate_given = cmd->count("--negative-rate") > 0;
    if (!o->classes.scores.empty()) {
      for (const char* name : {"--score", "--positive", "--negative", "--tally", "--negative-rate"})
        if (cmd->count(name) > 0) o->given.push_back(name);
      if (o->input.label.empty())
        throw Error(ErrorKind::usage, "cross-fit --scores needs --label", {}, {}, "--scores COLS --label COL FILE");
      return run_cross_fit(*o);
    }
    if (!tally->empty())
      throw Error(ErrorKind::usage,
                  "cross-fit cannot read a tally: its folds split the rows, and a tally has merged rows of equal "
                  "score across every fold",
                  {}, *tally,
                  "cross-fit on the rows (or a sample of them), then plumb fit --map KIND --tally FILE for the "
                  "chosen kind");
    if (o->input.score.empty() || o->input.label.empty())
      throw Error(ErrorKind::usage, "cross-fit needs --score and --label", {}, {}, "--score COL --label COL FILE");
    return run_cross_fit(*o);
  };
}

}  // namespace plumb::cli
