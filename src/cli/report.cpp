// plumb report: reliability diagnostics of one or more forecast columns on
// labelled rows, for a terminal, a pipeline gate and a review page.
#include <unistd.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <map>
#include <memory>
#include <optional>
#include <string>
#include <utility>

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "io/byte_source.hpp"
#include "plumb/io/artifact.hpp"
#include "plumb/io/history.hpp"
#include "plumb/error.hpp"
#include "plumb/io/output.hpp"
#include "plumb/class_report.hpp"
#include "plumb/io/class_report_render.hpp"
#include "plumb/report.hpp"
#include "plumb/io/report_render.hpp"
#include "plumb/tally.hpp"
#include "plumb/io/tally_io.hpp"
#include "plumb/version.hpp"

namespace plumb::cli {
namespace {

// The command's usage as --help prints it: the summary under the command's
// name, and the text after the options (what it does, examples).
constexpr const char* kUsageSummary =
    "Reliability diagnostics of forecasts against outcomes: scores, decompositions, calibration "
    "error with intervals, a reliability chart, segments, pass/fail gates";
// The gates each bound takes (gate_names, from the core's table).
std::string usage_footer(const std::string& max_gates, const std::string& min_gates, const std::string& class_max,
                         const std::string& class_min) {
  return "Columns: --score names columns reported as they are; each --map is applied on the fly to the\n"
         "column it was fitted on, or to the column its --map-score names (as apply's --score does).\n\n"
         "Gates (repeatable): --max METRIC=VALUE fails when the figure is above VALUE, --min when below.\n"
         "  --max: " + max_gates + "\n"
         "  --min: " + min_gates + "\n"
         "The names are those of the JSON report (docs/report-format.md). A gate reads what was\n"
         "calibrated: the --map columns when there are maps, else every --score column. To read one\n"
         "column, name it: risk:ece=0.05 (the raw scores), late.map.json:ece=0.02 (a map's column),\n"
         "*:ece=0.02 (every column). A figure that cannot be computed fails its gate. When a gate fails\n"
         "every requested output is still written, then plumb exits with code 7.\n\n"
         "Examples:\n"
         "  plumb report --score risk --score risk_calibrated --label missed --by depot scored.csv\n"
         "  plumb report --map late.map.json --score risk --label missed holdout.csv --svg reliability.svg\n"
         "  plumb report --map late.map.json --map-score risk_v2 --label missed holdout.csv\n"
         "  plumb report --score risk_calibrated --label missed --max ece=0.02 --max mcb=0.004 -q scored.csv || page-the-on-call\n"
         "  plumb report --map late.map.json --score risk --label missed --max ece=0.02 --min auc=0.7 -q holdout.csv\n"
         "  plumb report --score risk --map late.map.json --tally all.tally.json\n"
         "  plumb report --map late.map.json --label missed --max ece=0.02 --history nightly.jsonl --html review.html "
         "tonight.csv\n"
         "  plumb report --scores 'p_*' --label outcome outcomes.csv --svg outcomes.svg\n"
         "  plumb report --scores 'p_*' --map outcome.map.json --label outcome holdout.csv --max log_loss=0.5\n\n"
         "History: --history FILE appends one JSON line per run (the date, the input's SHA-256, the rows, each\n"
         "column's map identity and every gate figure with its interval, the gates' outcomes), under a lock, in one\n"
         "write, then shows each calibrated column's figures over the nights (text, --svg, --html), with the gate\n"
         "limits and the nights the map was refitted. A torn last line (a run killed while writing) is refused with\n"
         "FILE:LINE unless --torn-history cut (docs/history-format.md).\n\n"
         "Multi-class: with --scores (K columns, one per class; the label column holds class names) the report\n"
         "gives the multi-class Brier score (summed over classes) and log loss, accuracy and the confidence gap,\n"
         "the top-label (confidence) ECE with its reliability table and chart, the class-wise ECE and a\n"
         "one-vs-rest table per class (docs/methods_metrics.md). --scale logit reads K logits per row.\n"
         "Each --map of a multi-class map (from plumb fit --scores) reads the --scores columns, which must hold\n"
         "its classes in its order on its scale, and is reported beside the scores as read (the probabilities\n"
         "plumb apply writes for that map). Multi-class gates read a model as a whole: --max " + class_max + ";\n"
         "--min " + class_min + ". With maps they read the maps' models unless named:\n"
         "'p_*:brier=0.2' (the scores as read), outcome.map.json:log_loss=0.5 (a map's model), '*:accuracy=0.8'.\n"
         "--by COL repeats each model's headline figures per segment (flagged by Spiegelhalter's Z of the\n"
         "confidence, Holm-adjusted; --min-segment). --score, --map-score, --tally, --groups, --positive,\n"
         "--negative, --history and --html do not go with --scores.\n\n"
         "With --tally the report is that of the tallied rows (the figures are sums over rows, which the\n"
         "tally keeps per score; it is read as one cell per score and label, so memory grows with the\n"
         "distinct scores, not the rows). A tally of weighted rows needs --bootstrap 0 (the bootstrap\n"
         "resamples rows, whose weights the tally has summed) and tally format version 2, which keeps the\n"
         "sums of squared weights. Segments (--by) are not supported.\n\n"
         "Cautions: a calibrated score is only as good as the data it was checked on; recalibration is not\n"
         "model validation; credit, insurance and health uses follow local rules and licensed practice.";
}

// A map whose artifact adjusts its odds is reported as adjusted; the report
// says so, since the figures describe the adjusted probabilities.
std::string odds_caution(const std::string& name, const Artifact& artifact) {
  return name + ": the map's odds are adjusted as its artifact records, " + odds_steps_text(artifact) +
         "; the figures are those of the adjusted probabilities";
}

// "a, b, c" of `names`, each in quotes.
std::string quoted_list(const std::vector<std::string>& names) {
  std::string s;
  for (const std::string& n : names) s += (s.empty() ? "'" : ", '") + n + "'";
  return s;
}
// "a,b,c" of `names`, as an option's value takes them.
std::string comma_list(const std::vector<std::string>& names) {
  std::string s;
  for (const std::string& n : names) s += (s.empty() ? "" : ",") + n;
  return s;
}

// What --scores should say to read a multi-class map's columns under its
// class names: the pattern PREFIX*SUFFIX when every column is its class
// between the same two affixes ("'p_*'"), else the list of its columns
// (then --classes cannot rename them, and the hint says so).
std::string map_scores_hint(const ClassArtifact& a) {
  const std::vector<std::string>& cols = a.score_columns;
  const std::vector<std::string>& classes = a.map->classes();
  const std::size_t at = cols.empty() ? std::string::npos : cols[0].find(classes[0]);
  if (at != std::string::npos) {
    const std::string prefix = cols[0].substr(0, at), suffix = cols[0].substr(at + classes[0].size());
    bool all = true;
    for (std::size_t k = 0; k < cols.size() && all; ++k) all = cols[k] == prefix + classes[k] + suffix;
    if (all) return "--scores '" + prefix + "*" + suffix + "'";
  }
  return "--scores naming its columns (" + comma_list(cols) + ") by a pattern whose '*' gives its class names";
}

struct ReportCliOptions {
  InputOptions input;
  std::vector<std::string> scores;
  std::vector<std::string> maps;
  std::vector<std::string> map_scores;  // the column each --map reads, in order (none: their own)
  std::string by;
  std::size_t bins = 10;
  std::string binning = "equal_width";
  std::size_t bootstrap = 200;
  std::size_t threads = 0;
  std::uint64_t seed = 1;
  double confidence = 0.95;
  std::size_t hl_groups = 10;
  double min_segment = 100;
  std::vector<std::string> max, min;
  std::string json_path, svg_path, markdown_path, html_path;
  HistoryOptions history;              // --history, --history-date, --torn-history
  bool ascii = false;
  std::string tally;               // report on this tally instead of rows
  std::vector<std::string> given;  // row-reading options given on the command line
  ClassOptions classes;            // --scores, --classes, --sum-tolerance
  bool scale_given = false;        // --scale (with --scores only)
  std::vector<std::string> given_binary;  // options given that do not go with --scores
};

// The tally named by --tally, checked against the columns asked for;
// `sha256` receives the SHA-256 of its bytes as stored, hashed as they were
// read.
Tally load_report_tally(const ReportCliOptions& o, const io::LabelledColumns& columns, std::string* sha256) {
  Tally t = load_tally(o.tally, sha256);
  Location loc;
  loc.file = o.tally;
  if (!t.weight_column.empty() && t.weight_sq.size() != t.score.size())
    throw Error(ErrorKind::artifact,
                "the tally of weighted rows lacks the sums of squared weights that the report's effective sample "
                "sizes need (format version 1, or merged with such a tally)",
                loc, t.weight_column, "a tally made or merged by plumb with tally format version 2, or plumb report on the rows");
  if (!t.unit_weights && o.bootstrap > 0)
    throw Error(ErrorKind::usage,
                "the bootstrap resamples rows, and a tally of weighted rows has summed their weights", loc,
                t.weight_column, "--bootstrap 0 with a weighted tally, or plumb report on the rows");
  for (const io::ScoreColumn& c : columns.scores) {
    if (c.column != t.score_column)
      throw Error(ErrorKind::usage, "the tally holds column '" + t.score_column + "', not the column asked for", loc,
                  c.column, "--score " + t.score_column + ", or --map-score " + t.score_column);
    if (c.scale != t.scale)
      throw Error(ErrorKind::usage,
                  "the tally holds scores on the " + std::string(to_string(t.scale)) + " scale, not the " +
                      std::string(to_string(c.scale)) + " scale asked for",
                  loc, c.column, "--score for probability tallies, --map of a map fitted on the tally's scale");
  }
  return t;
}

// The rows a tally stands for, one entry per score in score order (the
// report reads an entry's negatives, then its positives): a reordering of
// the rows it was built from, which is all the report needs (its figures
// and its bootstrap treat the rows as a set). `map` (may be null) turns
// each score into the forecast; `outside` counts the rows whose score the
// map held at an end. With `last` the tally's sums are moved, not copied
// (no later column needs them).
TallyCells cells_of_tally(Tally& t, const CalibrationMap* map, std::uint64_t* outside, bool last) {
  TallyCells cells;
  cells.unit_weights = t.unit_weights;
  if (map) {
    cells.forecast.resize(t.score.size());
    for (std::size_t i = 0; i < t.score.size(); ++i) {
      const Mapped r = map->map(t.score[i]);
      cells.forecast[i] = r.probability;
      if (r.outside_fit_range && outside) *outside += t.count[i];
    }
  }
  auto take = [last](auto& v) {
    if (last) return std::move(v);
    return std::remove_reference_t<decltype(v)>(v);
  };
  if (!map) cells.forecast = take(t.score);
  cells.negatives = take(t.negative);
  cells.positives = take(t.positive);
  if (!t.unit_weights) {
    cells.rows = take(t.count);
    cells.weight_sq = take(t.weight_sq);
  }
  return cells;
}

// Below this many scores outside the fitted range a mapped column is quiet.
constexpr double outside_share_caution = 0.01;

// The gates of the report: its metric table (plumb/report.hpp).
std::string gate_names(GateBound bound) { return ::plumb::cli::gate_names(bound, gate_metrics()); }
Gate parse_gate(const std::string& text, GateBound bound) {
  return ::plumb::cli::parse_gate(text, bound, gate_metrics(), find_gate_metric, true);
}

// --max or --min METRIC=VALUE with --scores: a model as a whole; with maps
// COLUMN:METRIC=VALUE names the model (its name or its --map FILE, or *).
Gate parse_class_gate(const std::string& text, GateBound bound, bool with_maps) {
  return ::plumb::cli::parse_gate(text, bound, class_gate_metrics(), find_class_gate_metric, with_maps);
}

// One reported column as gates see it: its name in the report, the --map
// it came through (empty for a --score column).
struct GateTarget {
  std::string name;
  std::string map;
};

// The columns of the report each gate reads, as indices into `targets`. A
// gate without a column reads what was calibrated: the mapped columns when
// there are maps, else every column. A named gate reads the columns of that
// name, or of that --map FILE as given; '*' reads every column.
std::vector<std::vector<std::size_t>> gate_columns(const std::vector<Gate>& gates,
                                                   const std::vector<GateTarget>& targets) {
  bool any_map = false;
  for (const GateTarget& t : targets) any_map = any_map || !t.map.empty();
  std::vector<std::vector<std::size_t>> out;
  for (const Gate& g : gates) {
    std::vector<std::size_t> picked;
    for (std::size_t k = 0; k < targets.size(); ++k) {
      const GateTarget& t = targets[k];
      const bool take = g.column.empty()
                            ? (!any_map || !t.map.empty())
                            : (g.column == "*" || g.column == t.name || (!t.map.empty() && g.column == t.map));
      if (take) picked.push_back(k);
    }
    if (picked.empty()) {
      std::string names;
      for (const GateTarget& t : targets) {
        names += (names.empty() ? "'" : ", '") + t.name + "'";
        if (!t.map.empty()) names += " (or '" + t.map + "')";
      }
      throw Error(ErrorKind::usage,
                  std::string(bound_option(g.bound)) + " names a column that is not reported", {}, g.column,
                  "COLUMN:METRIC=VALUE with COLUMN one of " + names + ", or * for every column");
    }
    out.push_back(std::move(picked));
  }
  return out;
}

int emit_report(const ReportCliOptions& o, Report& report, const std::string& input_sha256,
                const std::optional<io::History>& history);

// Where a column mapped on the fly came from, with the map's identity (its
// integrity hash changes with every refit) and its fit's provenance.
MapOrigin map_origin(const std::string& column, const std::string& file, const Artifact& a) {
  MapOrigin m;
  m.column = column;
  m.file = file;
  m.kind = std::string(a.map->kind());
  m.integrity = integrity_hash(artifact_to_json(a));
  m.created_utc = a.provenance.created_utc;
  m.tool = a.provenance.tool;
  m.fitted_source = a.provenance.source;
  m.fitted_sha256 = a.provenance.source_sha256;
  m.fitted_rows = a.provenance.rows;
  return m;
}

int run_report_classes(const ReportCliOptions& o);

int run_report(const ReportCliOptions& o) {
  if (!o.classes.scores.empty()) return run_report_classes(o);
  if (o.scale_given)
    throw Error(ErrorKind::usage, "--scale applies to --scores only", {}, o.input.scale,
                "--scores COLS --scale logit for K logits per row; a --score column is read as probabilities, and "
                "log-odds or margins are reported through --map");
  if (!o.classes.classes.empty() || o.classes.sum_tolerance != io::default_sum_tolerance)
    throw Error(ErrorKind::usage, "--classes and --sum-tolerance apply to --scores only", {}, {},
                "--scores COLS (one column per class) with --label COL");
  // The history is checked before any work, so a torn or foreign line is
  // refused at once; it is read again, under its lock, when the run appends.
  const std::optional<io::History> history = read_history_option(o.history);
  std::vector<Gate> gates;
  for (const std::string& m : o.max) gates.push_back(parse_gate(m, GateBound::max));
  for (const std::string& m : o.min) gates.push_back(parse_gate(m, GateBound::min));
  ReportOptions ro;
  ro.bins = o.bins;
  ro.binning = o.binning == "equal_mass" ? BinningKind::equal_mass : BinningKind::equal_width;
  ro.bootstrap = o.bootstrap;
  ro.threads = o.threads;
  ro.seed = o.seed;
  ro.confidence = o.confidence;
  ro.hl_groups = o.hl_groups;
  ro.min_segment_weight = o.min_segment;

  // Score columns as read: every --score on the probability scale, then the
  // source column of every --map on that map's scale.
  std::vector<Artifact> artifacts;
  for (const std::string& path : o.maps) {
    // A multi-class map reads K columns: say how to report it.
    if (const ArtifactFile file = read_artifact_file(path); file.multi_class) {
      Location loc;
      loc.file = path;
      const ClassArtifact a = class_artifact_from_text(file.text, file.name);
      throw Error(ErrorKind::artifact, "the map artifact holds a multi-class map, which reads K score columns", loc,
                  {}, map_scores_hint(a) + " with --label COL");
    }
    artifacts.push_back(load_artifact(path));
  }
  io::LabelledColumns columns;
  for (const std::string& s : o.scores) columns.scores.push_back({s, Scale::probability});
  if (!o.map_scores.empty() && o.map_scores.size() != o.maps.size())
    throw Error(ErrorKind::usage,
                "--map-score given " + std::to_string(o.map_scores.size()) + " times for " +
                    std::to_string(o.maps.size()) + " --map",
                {}, {}, "one --map-score per --map, in the same order, or none (each map reads its own column)");
  for (std::size_t m = 0; m < artifacts.size(); ++m)
    columns.scores.push_back(
        {map_score_column(artifacts[m], o.map_scores.empty() ? std::string() : o.map_scores[m]),
         artifacts[m].map->scale()});
  if (columns.scores.empty())
    throw Error(ErrorKind::usage, "nothing to report", {}, {}, "at least one --score or --map");
  // report has no --scale: a --score column is a probability, a --map's column is on the map's scale.
  columns.other_scales_hint =
      "report reads a --score column as probabilities; for log-odds or margins, report them through --map with a "
      "map fitted by plumb fit --scale logit or --scale margin";
  columns.label = o.input.label;
  columns.weight = o.input.weight;
  columns.segment = o.by;
  if (!o.tally.empty() && !o.given.empty())
    throw Error(ErrorKind::usage, o.given.front() + " cannot be used with --tally", {}, {},
                "--tally alone: the tally records its columns and label rule, and has no segments");
  if (o.tally.empty() && o.input.label.empty())
    throw Error(ErrorKind::usage, "report needs --label (or --tally FILE)", {}, {}, "--label COL FILE, or --tally FILE");

  // The columns each gate reads, from the reported columns' names in order.
  auto gate_reads_of = [&](const std::vector<std::string>& names) {
    std::vector<GateTarget> targets;
    for (std::size_t k = 0; k < names.size(); ++k)
      targets.push_back({names[k], k < o.scores.size() ? std::string() : o.maps[k - o.scores.size()]});
    return gate_columns(gates, targets);
  };
  if (!o.tally.empty()) {
    // The tally is read as cells: memory grows with its distinct scores, not its rows.
    std::string sha256;
    Tally t = load_report_tally(o, columns, &sha256);
    if (o.tally == "-") sha256.clear();  // the history records no digest of standard input
    // The mapped columns first (they read the scores), then the score
    // columns; the last column built takes the tally's sums without a copy.
    const std::size_t columns_in_all = o.scores.size() + artifacts.size();
    std::vector<ForecastCellColumn> cell_columns(columns_in_all);
    std::vector<std::string> extra_cautions;
    std::vector<std::optional<IntervalWidth>> widths(artifacts.size());
    std::uint64_t tallied_rows = 0;  // of positive weight, as the entries count them
    for (std::uint64_t r : t.count) tallied_rows += r;
    for (std::size_t m = 0; m < artifacts.size(); ++m) {
      std::uint64_t outside = 0;
      if (artifacts[m].map->has_interval()) {
        // One width per tallied score, weighing its rows' weight.
        std::vector<double> width(t.score.size()), weight(t.score.size());
        for (std::size_t i = 0; i < t.score.size(); ++i) {
          const std::array<double, 2> iv = artifacts[m].map->interval(t.score[i]);
          width[i] = iv[1] - iv[0];
          weight[i] = t.negative[i] + t.positive[i];
        }
        widths[m] = interval_width_summary(width, weight);
      }
      const bool last = o.scores.empty() && m + 1 == artifacts.size();
      const std::string name = t.score_column + " via " + std::filesystem::path(o.maps[m]).filename().string();
      if (!artifacts[m].odds_steps.empty()) extra_cautions.push_back(odds_caution(name, artifacts[m]));
      TallyCells cells = cells_of_tally(t, artifacts[m].map.get(), &outside, last);
      if (static_cast<double>(outside) > outside_share_caution * static_cast<double>(tallied_rows))
        extra_cautions.push_back(name + ": " + grouped(outside) +
                                 " scores lie outside the range the map was fitted on and were held at its end values");
      cell_columns[o.scores.size() + m] = {name, std::move(cells)};
    }
    for (std::size_t k = 0; k < o.scores.size(); ++k)
      cell_columns[k] = {o.scores[k], cells_of_tally(t, nullptr, nullptr, k + 1 == o.scores.size())};
    // The report reads the entries only: what is left of the per-score sums goes before it runs.
    std::vector<double>().swap(t.score);
    std::vector<std::uint64_t>().swap(t.count);
    std::vector<double>().swap(t.negative);
    std::vector<double>().swap(t.positive);
    std::vector<double>().swap(t.weight_sq);
    std::vector<std::string> names(o.scores);
    for (std::size_t m = 0; m < artifacts.size(); ++m) names.push_back(cell_columns[o.scores.size() + m].name);
    const std::vector<std::vector<std::size_t>> gate_reads = gate_reads_of(names);
    Report report = build_report_of_cells(cell_columns, {}, ro);
    for (std::size_t g = 0; g < gates.size(); ++g)
      for (std::size_t k : gate_reads[g]) report.gates.push_back(check_gate(gates[g], report.scores[k].overall));
    report.source = o.tally == "-" ? "<stdin>" : o.tally;
    report.label_column = t.label_column;
    report.rows_skipped = t.rows_skipped;
    if (!t.unit_weights) report.weight_column = t.weight_column;
    report.cautions.insert(report.cautions.end(), extra_cautions.begin(), extra_cautions.end());
    for (std::size_t m = 0; m < artifacts.size(); ++m) {
      report.scores[o.scores.size() + m].map = map_origin(t.score_column, o.maps[m], artifacts[m]);
      report.scores[o.scores.size() + m].overall.interval_width = widths[m];
    }
    return emit_report(o, report, sha256, history);
  }
  // One unweighted score column without segments: its cells are counted on
  // a second thread while the reader parses (the cell sums are then counts,
  // so this leaves no trace in any figure), and the report does not sort
  // the rows.
  const bool count_while_reading =
      o.scores.size() == 1 && artifacts.empty() && o.input.weight.empty() && o.by.empty();
  Tally counted;
  const io::LabelledRows rows = [&] {
    try {
      if (count_while_reading)
        return read_and_tally_with_progress("plumb report: reading", o.input, columns, counted, true);
      return read_rows_with_progress("plumb report: reading", o.input, columns);
    } catch (const Error& e) {
      // A map's own column is missing: say how to point the map at another.
      if (e.kind() == ErrorKind::input && e.message() == "no score column" && o.map_scores.empty())
        for (const Artifact& a : artifacts)
          if (e.value() == a.score_column)
            throw Error(e.kind(), "no column '" + a.score_column + "', which the map was fitted on", e.where(),
                        e.value(), e.expected() + ", or --map-score COLUMN for the column the map should read");
      throw;
    }
  }();

  std::vector<std::vector<double>> mapped;
  std::vector<std::optional<IntervalWidth>> widths(artifacts.size());
  std::vector<ForecastColumn> forecasts;
  std::vector<std::string> extra_cautions;
  for (std::size_t k = 0; k < o.scores.size(); ++k) forecasts.push_back({rows.score_columns[k], rows.scores[k]});
  // The counted cells stand for the rows' cells unless a forecast is -0
  // (a cell's forecast is its first row's value, and the count keeps +0).
  ForecastCells counted_cells;
  if (count_while_reading &&
      std::none_of(rows.scores[0].begin(), rows.scores[0].end(), [](double s) { return s == 0.0 && std::signbit(s); })) {
    counted_cells.forecast = std::move(counted.score);
    counted_cells.positives = std::move(counted.positive);
    counted_cells.negatives = std::move(counted.negative);
    counted_cells.rows = std::move(counted.count);
    counted_cells.weight.resize(counted_cells.size());
    for (std::size_t c = 0; c < counted_cells.size(); ++c)
      counted_cells.weight[c] = static_cast<double>(counted_cells.rows[c]);
    counted_cells.weight_sq = counted_cells.weight;  // every row's square is 1
    forecasts[0].cells = &counted_cells;
  }
  for (std::size_t m = 0; m < artifacts.size(); ++m) {
    const std::size_t k = o.scores.size() + m;
    const CalibrationMap& map = *artifacts[m].map;
    std::vector<double> p(rows.scores[k].size());
    std::uint64_t outside = 0;
    for (std::size_t i = 0; i < p.size(); ++i) {
      const Mapped r = map.map(rows.scores[k][i]);
      p[i] = r.probability;
      outside += r.outside_fit_range ? 1 : 0;
    }
    if (map.has_interval()) {
      std::vector<double> width(p.size());
      for (std::size_t i = 0; i < p.size(); ++i) {
        const std::array<double, 2> iv = map.interval(rows.scores[k][i]);
        width[i] = iv[1] - iv[0];
      }
      if (!width.empty()) widths[m] = interval_width_summary(width, rows.weight);
    }
    const std::string name =
        rows.score_columns[k] + " via " + std::filesystem::path(o.maps[m]).filename().string();
    if (!artifacts[m].odds_steps.empty()) extra_cautions.push_back(odds_caution(name, artifacts[m]));
    if (static_cast<double>(outside) > outside_share_caution * static_cast<double>(p.size()))
      extra_cautions.push_back(name + ": " + grouped(outside) +
                               " scores lie outside the range the map was fitted on and were held at its end values");
    mapped.push_back(std::move(p));
    forecasts.push_back({name, {}});
  }
  for (std::size_t m = 0; m < mapped.size(); ++m) forecasts[o.scores.size() + m].forecast = mapped[m];

  std::vector<std::string> names;
  for (const ForecastColumn& f : forecasts) names.push_back(f.name);
  const std::vector<std::vector<std::size_t>> gate_reads = gate_reads_of(names);

  Report report = build_report(forecasts, rows.label, rows.weight, rows.segment, rows.segment_names, {}, ro);
  for (std::size_t g = 0; g < gates.size(); ++g)
    for (std::size_t k : gate_reads[g]) report.gates.push_back(check_gate(gates[g], report.scores[k].overall));
  report.source = rows.source;
  report.label_column = rows.label_column;
  report.weight_column = rows.weight_column;
  report.segment_column = rows.segment_column;
  if (o.tally.empty() && parse_missing(o.input.missing) == io::MissingPolicy::skip) report.rows_skipped = rows.skipped;
  report.cautions.insert(report.cautions.end(), extra_cautions.begin(), extra_cautions.end());
  for (std::size_t m = 0; m < artifacts.size(); ++m) {
    report.scores[o.scores.size() + m].map =
        map_origin(rows.score_columns[o.scores.size() + m], o.maps[m], artifacts[m]);
    report.scores[o.scores.size() + m].overall.interval_width = widths[m];
  }
  return emit_report(o, report, rows.source_sha256, history);
}

// The terminal report (unless -q), then the gates: one line on stderr and
// exit 7 when one failed. `with_column` names each gate's column.
template <class Render>
int print_and_gate(const ReportCliOptions& o, Render render, const std::vector<GateResult>& gates, bool with_column) {
  if (!o.input.quiet) {
    TextStyle style;
    style.unicode = !o.ascii;
    style.colour = ::isatty(STDOUT_FILENO) == 1 && std::getenv("NO_COLOR") == nullptr;
    io::OutputFile out("-");
    out.write(render(style));
    out.commit();
  }
  for (const GateResult& g : gates)
    if (g.exceeded) {
      std::fprintf(stderr, "%s\n", failed_gates_line("plumb report", gates, with_column).c_str());
      return static_cast<int>(ErrorKind::threshold);
    }
  return 0;
}

// A multi-class --map checked against the rows: the map reads the --scores
// columns, which must hold its classes in its order on its scale. Refused
// (usage, located at the map file) with the option that puts it right. The
// scale is known before the rows are read, so it is checked first, alone.
void check_class_map_scale(const ClassArtifact& a, const std::string& path, ClassScale scale) {
  if (a.map->scale() == scale) return;
  Location loc;
  loc.file = path;
  throw Error(ErrorKind::usage,
              "the map was fitted on the " + std::string(to_string(a.map->scale())) +
                  " scale, and --scores are read on the " + std::string(to_string(scale)) + " scale",
              loc, std::string(to_string(scale)), "--scale " + std::string(to_string(a.map->scale())));
}
void check_class_map_classes(const ClassArtifact& a, const std::string& path, const io::ClassRows& rows) {
  const ClassCalibrationMap& map = *a.map;
  if (map.classes() == rows.data.classes) return;
  Location loc;
  loc.file = path;
  std::vector<std::string> mine = map.classes(), theirs = rows.data.classes;
  std::sort(mine.begin(), mine.end());
  std::sort(theirs.begin(), theirs.end());
  if (mine == theirs)
    throw Error(ErrorKind::usage,
                "the map orders its classes " + quoted_list(map.classes()) + ", the report " +
                    quoted_list(rows.data.classes),
                loc, comma_list(rows.data.classes), "--classes " + comma_list(map.classes()));
  throw Error(ErrorKind::usage,
              "the map was fitted on classes " + quoted_list(map.classes()) + ", and --scores gives classes " +
                  quoted_list(rows.data.classes),
              loc, comma_list(rows.data.classes), map_scores_hint(a) + " for the columns it was fitted on");
}

ClassMapOrigin class_map_origin(const std::string& file, const ClassArtifact& a) {
  ClassMapOrigin m;
  m.file = file;
  m.kind = std::string(a.map->kind());
  m.integrity = integrity_hash(class_artifact_to_json(a));
  m.created_utc = a.provenance.created_utc;
  m.tool = a.provenance.tool;
  m.fitted_source = a.provenance.source;
  m.fitted_sha256 = a.provenance.source_sha256;
  m.fitted_rows = a.provenance.rows;
  return m;
}

// The report of K-class rows (--scores): read by the multi-class reader,
// built by build_class_report for the scores as read and for each --map's
// model of them, written as the binary report is.
int run_report_classes(const ReportCliOptions& o) {
  for (const std::string& g : o.given_binary)
    throw Error(ErrorKind::usage, g + " cannot be used with --scores", {}, {},
                g == "--map-score" ? "--scores COLS, which a multi-class --map reads (one column per class)"
                                   : "--scores COLS --label COL FILE (the label column holds class names)");
  if (o.input.label.empty())
    throw Error(ErrorKind::usage, "report --scores needs --label", {}, {}, "--scores COLS --label COL FILE");
  std::vector<ClassArtifact> maps;
  for (const std::string& path : o.maps) {
    const ArtifactFile file = read_artifact_file(path);
    if (!file.multi_class) {
      Location loc;
      loc.file = path;
      throw Error(ErrorKind::usage, "the map is binary, and --scores reports K classes", loc, {},
                  "--score COL --map FILE for a binary map (without --scores), or a map fitted by plumb fit --scores");
    }
    maps.push_back(class_artifact_from_text(file.text, file.name));
  }
  // With maps a gate may name a model: its --map FILE, its name, or *.
  std::vector<Gate> gates;
  for (const std::string& m : o.max)
    gates.push_back(parse_class_gate(m, GateBound::max, !maps.empty()));
  for (const std::string& m : o.min)
    gates.push_back(parse_class_gate(m, GateBound::min, !maps.empty()));
  io::ClassColumns columns = class_columns(o.input, o.classes);
  columns.segment = o.by;
  // The scale is known before the rows are read: refuse a mismatch at once.
  for (std::size_t m = 0; m < maps.size(); ++m) check_class_map_scale(maps[m], o.maps[m], columns.scale);
  const io::ClassRows rows = [&] {
    try {
      return io::read_class_scores(o.input.file, columns, parse_separator(o.input.separator));
    } catch (const Error& e) {
      // A label outside the classes of --scores may be one of the map's: say which classes the map holds.
      if (maps.empty() || e.kind() != ErrorKind::input || e.message() != "the label is not one of the classes") throw;
      throw Error(e.kind(), e.message() + " (the map's classes are " + quoted_list(maps[0].map->classes()) + ")",
                  e.where(), e.value(), e.expected() + "; or " + map_scores_hint(maps[0]));
    }
  }();
  for (std::size_t m = 0; m < maps.size(); ++m) check_class_map_classes(maps[m], o.maps[m], rows);
  ClassReportOptions ro;
  ro.bins = o.bins;
  ro.binning = o.binning == "equal_mass" ? BinningKind::equal_mass : BinningKind::equal_width;
  ro.bootstrap = o.bootstrap;
  ro.threads = o.threads;
  ro.seed = o.seed;
  ro.confidence = o.confidence;
  const auto described = [&](ClassReport report, std::string name, const ClassScores& scores) {
    report.name = std::move(name);
    if (!o.by.empty()) {
      report.segment_column = rows.segment_column;
      report.min_segment_weight = o.min_segment;
      report.segments = class_segments(scores, rows.segment, rows.segment_names, ro, o.min_segment,
                                       report.segment_alpha);
    }
    report.source = rows.source;
    report.label_column = rows.label_column;
    report.weight_column = rows.weight_column;
    report.score_columns = rows.score_columns;
    if (parse_missing(o.input.missing) == io::MissingPolicy::skip) report.rows_skipped = rows.skipped;
    return report;
  };
  ClassReportSet set;
  const std::string scores_name = comma_list(o.classes.scores);
  set.models.push_back(described(build_class_report(rows.data, ro), scores_name, rows.data));
  std::vector<GateTarget> targets{{scores_name, {}}};
  for (std::size_t m = 0; m < maps.size(); ++m) {
    std::uint64_t floored = 0;
    const ClassScores calibrated = calibrate_class_scores(*maps[m].map, rows.data, &floored);
    const std::string name = scores_name + " via " + std::filesystem::path(o.maps[m]).filename().string();
    ClassReport report = described(build_class_report(calibrated, ro), name, calibrated);
    report.map = class_map_origin(o.maps[m], maps[m]);
    if (static_cast<double>(floored) > outside_share_caution * static_cast<double>(rows.data.rows))
      report.cautions.push_back(grouped(floored) + " rows hold a probability below " +
                                shortest(class_probability_floor) + ", which the map raised to it before its logarithm");
    set.models.push_back(std::move(report));
    targets.push_back({name, o.maps[m]});
  }
  const std::vector<std::vector<std::size_t>> reads = gate_columns(gates, targets);
  for (std::size_t g = 0; g < gates.size(); ++g)
    for (std::size_t k : reads[g]) {
      GateResult r = check_class_gate(gates[g], set.models[k]);
      if (!maps.empty()) r.column = set.models[k].name;
      set.gates.push_back(std::move(r));
    }
  // Every file is written beside its place and committed only when all are.
  std::vector<std::unique_ptr<io::OutputFile>> files;
  auto write = [&](const std::string& path, const std::string& text) {
    if (path.empty()) return;
    files.push_back(std::make_unique<io::OutputFile>(path));
    files.back()->write(text);
  };
  write(o.json_path, class_report_to_json(set).dump(2) + "\n");
  write(o.svg_path, render_class_svg(set));
  write(o.markdown_path, render_class_markdown(set));
  for (auto& f : files) f->commit();
  return print_and_gate(o, [&](const TextStyle& style) { return render_class_text(set, style); }, set.gates,
                        !maps.empty());
}

// Appends the run to the history (with --history) and draws the trend from
// it, then writes the report's files and the terminal report; the gates'
// exit code.
int emit_report(const ReportCliOptions& o, Report& report, const std::string& input_sha256,
                const std::optional<io::History>& history) {
  // Every file is opened (a temporary beside it) before the history line
  // goes out, so an unwritable path is refused before the history grows.
  std::vector<std::pair<std::unique_ptr<io::OutputFile>, int>> files;
  enum { json_file, svg_file, markdown_file, html_file };
  if (!o.json_path.empty()) files.emplace_back(std::make_unique<io::OutputFile>(o.json_path), json_file);
  if (!o.svg_path.empty()) files.emplace_back(std::make_unique<io::OutputFile>(o.svg_path), svg_file);
  if (!o.markdown_path.empty()) files.emplace_back(std::make_unique<io::OutputFile>(o.markdown_path), markdown_file);
  if (!o.html_path.empty()) files.emplace_back(std::make_unique<io::OutputFile>(o.html_path), html_file);
  if (history) {
    // A torn line the early read left out is cut off by the append, which says so.
    io::HistoryRun run;
    const std::string now = utc_now();
    run.time_utc = now;
    run.date = o.history.date.empty() ? now.substr(0, 10) : o.history.date;
    run.input_sha256 = input_sha256;
    run.tool = std::string("plumb ") + version_string;
    const io::History after = append_history_option(o.history, io::report_history_entry(report, run), "report");
    report.trend = io::trend_of_history(after, report);
  }
  // Files first, each whole or not at all; then the terminal report.
  for (auto& [out, what] : files) {
    switch (what) {
      case json_file: out->write(report_to_json(report).dump(2) + "\n"); break;
      case svg_file: out->write(render_svg(report)); break;
      case markdown_file: out->write(render_markdown(report)); break;
      default: out->write(render_html(report));
    }
  }
  for (auto& f : files) f.first->commit();
  return print_and_gate(o, [&](const TextStyle& style) { return render_text(report, style); }, report.gates, true);
}

}  // namespace

Command add_report_command(CLI::App& app) {
  auto o = std::make_shared<ReportCliOptions>();
  CLI::App* cmd = app.add_subcommand("report", kUsageSummary);
  cmd->footer(usage_footer(gate_names(GateBound::max), gate_names(GateBound::min), ::plumb::cli::gate_names(GateBound::max, class_gate_metrics()),
                           ::plumb::cli::gate_names(GateBound::min, class_gate_metrics())));
  cmd->add_option("file", o->input.file, "CSV or TSV file with a header row, plain or gzip; - or nothing reads standard input")
      ->default_str("-");
  cmd->add_option("--score", o->scores,
                  "Forecast column to report as it is, a probability in [0, 1] (name or 1-based index; "
                  "repeatable; side by side)")
      ->allow_extra_args(false);
  cmd->add_option("--map", o->maps,
                  "Map artifact to apply on the fly, reported after the --score columns (repeatable); it reads "
                  "the column it was fitted on unless --map-score names another. With --scores, a multi-class map "
                  "reading the --scores columns")
      ->allow_extra_args(false);
  cmd->add_option("--map-score", o->map_scores,
                  "Column the --map of the same position reads (name or 1-based index), as apply's --score; "
                  "one per --map, in order (default: the column each map was fitted on)")
      ->allow_extra_args(false);
  add_class_options(*cmd, o->classes);
  cmd->add_option("--scale", o->input.scale,
                  "With --scores: probability (each row sums to 1) or logit (K logits per row, read through "
                  "softmax); a --score column is always a probability")
      ->check(CLI::IsMember({"probability", "logit"}))
      ->default_str("probability");
  cmd->add_option("--label", o->input.label,
                  "Column holding the observed outcome (name or 1-based index; with --scores, the class name); "
                  "required unless --tally");
  cmd->add_option("--tally", o->tally,
                  "Report on a tally (from plumb tally or merge) instead of rows; --score "
                  "names its column. No FILE, --label, --weight, --positive, --negative, --missing, --by or --sep");
  cmd->add_option("--weight", o->input.weight, "Column of non-negative row weights (default: every row weighs 1)");
  add_label_value_options(*cmd, o->input);
  add_missing_option(*cmd, o->input.missing, false);
  cmd->add_option("--by", o->by, "Segment column: repeat the key figures per value, most miscalibrated first");
  cmd->add_option("--bins", o->bins, "Bins of the reliability table, the ECE and the Murphy decomposition")
      ->check(CLI::Range(1, 10000))
      ->default_str("10");
  // The values are the report JSON's words for the binning; "width" and
  // "mass", the older spellings, are still taken (and not shown in help).
  cmd->add_option("--binning", o->binning, "Bins of the reliability table and chart: equal-width or equal-mass")
      ->transform(CLI::Transformer(std::map<std::string, std::string>{{"width", "equal_width"}, {"mass", "equal_mass"}})
                      .description(""))
      ->check(CLI::IsMember({"equal_width", "equal_mass"}))
      ->default_str("equal_width");
  cmd->add_option("--bootstrap", o->bootstrap, "Bootstrap replicates for intervals and the consistency band (0: none)")
      ->check(CLI::Range(0, 100000))
      ->default_str("200");
  cmd->add_option("--threads", o->threads,
                  "Threads for the bootstrap (0: one per core); the intervals are the same for any count")
      ->check(CLI::Range(0, 1024))
      ->default_str("0");
  cmd->add_option("--seed", o->seed, "Seed of the bootstrap; the same seed gives the same intervals")->default_str("1");
  cmd->add_option("--confidence", o->confidence, "Level of every interval and band")
      ->check(CLI::Range(0.5, 0.999))
      ->default_str("0.95");
  cmd->add_option("--groups", o->hl_groups, "Hosmer-Lemeshow groups (equal-mass)")
      ->check(CLI::Range(3, 1000))
      ->default_str("10");
  cmd->add_option("--min-segment", o->min_segment, "Segments of less weight say 'too few rows' instead of figures")
      ->check(CLI::Range(1.0, 1e12))
      ->default_str("100");
  cmd->add_option("--max", o->max,
                  "Gate: fail (exit 7) when METRIC is above VALUE, e.g. ece=0.02 or risk:ece=0.05 (repeatable)")
      ->allow_extra_args(false);
  cmd->add_option("--min", o->min,
                  "Gate: fail (exit 7) when METRIC is below VALUE, e.g. auc=0.7 or hosmer_lemeshow_p=0.05 (repeatable)")
      ->allow_extra_args(false);
  cmd->add_option("--json", o->json_path, "Also write every number as JSON (docs/report-format.md)");
  cmd->add_option("--svg", o->svg_path, "Also write reliability diagrams as SVG");
  cmd->add_option("--markdown", o->markdown_path, "Also write a Markdown report for a review");
  cmd->add_option("--html", o->html_path,
                  "Also write a self-contained review page (HTML with inline charts; no script, works offline; "
                  "docs/review-page.md)")
      ->option_text("FILE");
  add_history_options(*cmd, o->history);
  cmd->add_flag("--ascii", o->ascii, "Draw the terminal chart with ASCII characters only");
  add_separator_option(*cmd, o->input.separator);
  cmd->add_flag("-q,--quiet", o->input.quiet, "No terminal report and no progress (files and gates still work)");
  return [o, cmd] {
    for (const char* name : {"file", "--label", "--weight", "--positive", "--negative", "--missing", "--by", "--sep"})
      if (cmd->count(name) > 0) o->given.push_back(name[0] == '-' ? name : "a FILE of rows");
    o->scale_given = cmd->count("--scale") > 0;
    for (const char* name :
         {"--score", "--map-score", "--tally", "--groups", "--positive", "--negative",
          "--history", "--history-date", "--torn-history", "--html"})
      if (cmd->count(name) > 0) o->given_binary.push_back(name);
    return run_report(*o);
  };
}

}  // namespace plumb::cli
