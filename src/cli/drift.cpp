// plumb drift: tonight's scores (and labels, when they have arrived) against
// the fit rows a map was fitted on, or against another dump or tally.
#include <unistd.h>

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <optional>
#include <string>

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "plumb/drift.hpp"
#include "plumb/error.hpp"
#include "plumb/io/artifact.hpp"
#include "plumb/io/drift_render.hpp"
#include "plumb/io/output.hpp"
#include "plumb/io/score_cells.hpp"
#include "plumb/io/tally_io.hpp"
#include "plumb/tally.hpp"

namespace plumb::cli {
namespace {

// The command's usage as --help prints it: the summary under the command's
// name, and the text after the options (what it does, examples).
constexpr const char* kUsageSummary =
    "Compare tonight's scores (and labels, once they arrive) with the rows a map was fitted on: PSI, KS, "
    "share outside the fitted range, and the change of the labelled figures, with gates";
std::string usage_footer(const std::string& max_gates, const std::string& min_gates) {
  return "The reference is the one the map artifact carries (plumb fit writes it: the fit rows counted on a\n"
         "grid of the score), or the rows of --reference FILE, or a tally given with --reference-tally. Both\n"
         "sides are counted on that grid, and every figure is of the grid's scores.\n\n"
         "Without labels: the population stability index over the map's own bins (runs of scores the map gives\n"
         "one probability, joined into at most --bins bins of about equal reference rows; for a map that rises\n"
         "with every score, equal-mass bins of the fit scores), the two-sample Kolmogorov-Smirnov statistic\n"
         "with its asymptotic p-value, the share of rows outside the fitted score range, and the mean\n"
         "probability the map gives (the base rate it expects) beside the fit's.\n"
         "With --label (and a labelled reference): the change of the observed rate, log loss, Brier score,\n"
         "ECE and MCB (plumb report's definitions), each with a bootstrap interval of the difference (the\n"
         "two sides resampled independently; not paired), and whether a refit is warranted (rule: tonight's\n"
         "MCB is above what the map, were it calibrated, would show on tonight's rows; --confidence level).\n\n"
         "Rules of thumb (common practice, not a test): a PSI below 0.1 is little shift, 0.1 to 0.25 some,\n"
         "above 0.25 a large one (some use 0.2).\n\n"
         "Gates (repeatable): --max METRIC=VALUE fails when the figure is above VALUE, --min when below.\n"
         "  --max: " + max_gates + "\n"
         "  --min: " + min_gates + "\n"
         "A labelled figure without --label fails its gate (it cannot be computed). When a gate fails, every\n"
         "requested output is still written, then plumb exits with code 7.\n\n"
         "Examples:\n"
         "  plumb drift --map late.map.json tonight.csv\n"
         "  plumb drift --map late.map.json --label missed --max psi=0.2 --json drift.json night-18.csv\n"
         "  plumb drift --map old.map.json --reference holdout.csv tonight.csv\n"
         "  plumb drift --map late.map.json --reference-tally all.tally.json -q --max psi=0.25 tonight.csv\n"
         "  plumb drift --map late.map.json --history nightly.jsonl --history-date 2026-11-18 tonight.csv\n\n"
         "History: --history FILE appends one JSON line per run, {\"command\": \"drift\", \"drift\": the --json\n"
         "document}, under the same lock and torn-line rules as plumb report --history (docs/history-format.md).\n\n"
         "Cautions: drift says the inputs have moved, not why; where calibrated numbers decide about people\n"
         "(credit, insurance, health), a refit is checked like the first fit, under local rules.";
}

struct DriftCliOptions {
  InputOptions input;
  std::string map;
  std::string reference;        // --reference FILE (rows)
  std::string reference_tally;  // --reference-tally FILE
  std::size_t bins = 10;
  std::size_t bootstrap = 200;
  std::uint64_t seed = 1;
  double confidence = 0.95;
  std::vector<std::string> max, min;
  std::string json_path;
  HistoryOptions history;  // --history, --history-date, --torn-history
  bool ascii = false;
};

const char* const other_scales =
    "this map was fitted on probabilities; for log-odds or margins, use a map fitted with plumb fit --scale logit "
    "or --scale margin";

int run_drift(const DriftCliOptions& o) {
  // A torn or foreign history line is refused before any work.
  const std::optional<io::History> history = read_history_option(o.history);
  std::vector<Gate> gates;
  for (const std::string& m : o.max)
    gates.push_back(parse_gate(m, GateBound::max, drift_gate_metrics(), find_drift_gate_metric, false));
  for (const std::string& m : o.min)
    gates.push_back(parse_gate(m, GateBound::min, drift_gate_metrics(), find_drift_gate_metric, false));
  if (!o.reference.empty() && !o.reference_tally.empty())
    throw Error(ErrorKind::usage, "--reference and --reference-tally cannot be used together", {}, {},
                "one of them, or neither (the map's own reference)");
  const Artifact artifact = load_artifact(o.map);
  const Scale scale = artifact.map->scale();
  const bool from_artifact = o.reference.empty() && o.reference_tally.empty();
  if (from_artifact && !artifact.reference) {
    Location loc;
    loc.file = o.map;
    throw Error(ErrorKind::input,
                "the map artifact carries no reference of its fit rows (written by an older plumb, fitted on weighted "
                "rows, or fitted without one)",
                loc, {}, "--reference FILE (rows like the fit rows) or --reference-tally FILE (their tally)");
  }
  const double step = artifact.reference ? artifact.reference->step : default_reference_grid;

  io::ScoreCellsOptions read;
  read.score = map_score_column(artifact, o.input.score);
  read.label = o.input.label;
  if (!read.label.empty()) read.rule = label_rule(o.input);
  read.scale = scale;
  read.step = step;
  read.missing = parse_missing(o.input.missing);
  read.delimiter = parse_separator(o.input.separator);
  read.range_min = artifact.provenance.score_min;
  read.range_max = artifact.provenance.score_max;
  read.other_scales_hint = other_scales;

  DriftReport report;
  report.map_file = o.map;
  report.map_kind = std::string(artifact.map->kind());
  report.fitted_min = artifact.provenance.score_min;
  report.fitted_max = artifact.provenance.score_max;
  report.grid_step = step;

  GridCells reference;
  if (from_artifact) {
    reference = *artifact.reference;
    report.reference_kind = "artifact";
    report.reference_source = o.map;
  } else if (!o.reference.empty()) {
    const io::ScoreCells ref = io::read_score_cells(o.reference, read);
    reference = ref.cells;
    report.reference_kind = "rows";
    report.reference_source = ref.source;
  } else {
    const Tally tally = load_tally(o.reference_tally);
    Location loc;
    loc.file = o.reference_tally == "-" ? "<stdin>" : o.reference_tally;
    if (!tally.unit_weights)
      throw Error(ErrorKind::input, "the reference tally is of weighted rows, which drift does not compare", loc, {},
                  "a tally of unweighted rows, or --reference FILE");
    if (tally.scale != scale)
      throw Error(ErrorKind::input,
                  "the reference tally's scores are on the " + std::string(to_string(tally.scale)) +
                      " scale, the map's on the " + std::string(to_string(scale)),
                  loc, {}, "a tally of the scores the map reads");
    reference = reference_from_tally(tally, step);
    reference.labelled = !o.input.label.empty();
    report.reference_kind = "tally";
    report.reference_source = loc.file;
  }
  // A labelled reference is compared with labels only when tonight has them.
  if (o.input.label.empty()) reference.labelled = false;

  const io::ScoreCells tonight = io::read_score_cells(o.input.file, read);
  DriftOptions options;
  options.bins = o.bins;
  options.bootstrap = o.bootstrap;
  options.seed = o.seed;
  options.confidence = o.confidence;
  try {
    report.result = compute_drift(reference, tonight.cells, *artifact.map, options);
  } catch (const Error& e) {
    if (!e.where().file.empty()) throw;
    Location loc;
    loc.file = tonight.source;
    throw Error(e.kind(), e.message(), loc, e.value(), e.expected());
  }
  report.result.outside_rows = tonight.outside;
  report.options = options;
  report.source = tonight.source;
  report.source_sha256 = tonight.sha256;
  report.rows_skipped = tonight.skipped;
  report.score_column = tonight.score_column;
  for (const Gate& g : gates) report.gates.push_back(check_drift_gate(g, report.result));

  const bool json_to_stdout = o.json_path == "-";
  // The JSON file is opened (a temporary beside it) before the history line
  // goes out, so an unwritable path is refused before the history grows.
  std::optional<io::OutputFile> json_out;
  if (!o.json_path.empty()) {
    json_out.emplace(o.json_path);
    json_out->write(drift_to_json(report).dump(2) + "\n");
  }
  if (history) append_history_option(o.history, {{"command", "drift"}, {"drift", drift_to_json(report)}}, "drift");
  if (json_out) json_out->commit();
  if (!o.input.quiet && !json_to_stdout) {
    io::OutputFile out("-");
    out.write(render_drift_text(report, !o.ascii));
    out.commit();
  }
  for (const GateResult& g : report.gates)
    if (g.exceeded) {
      std::fprintf(stderr, "%s\n", failed_gates_line("plumb drift", report.gates, false).c_str());
      return static_cast<int>(ErrorKind::threshold);
    }
  return 0;
}

}  // namespace

Command add_drift_command(CLI::App& app) {
  auto o = std::make_shared<DriftCliOptions>();
  CLI::App* cmd = app.add_subcommand("drift", kUsageSummary);
  cmd->footer(usage_footer(gate_names(GateBound::max, drift_gate_metrics()),
                           gate_names(GateBound::min, drift_gate_metrics())));
  cmd->add_option("file", o->input.file, "Tonight's CSV or TSV file with a header row, plain or gzip; - or nothing reads standard input")
      ->default_str("-");
  cmd->add_option("--map", o->map, "The map artifact whose fit rows are the reference")->required();
  cmd->add_option("--score", o->input.score,
                  "Column holding the raw score (name or 1-based index; default: the column the map was fitted on)");
  cmd->add_option("--label", o->input.label,
                  "Column holding the observed outcome, once it has arrived: adds the labelled figures and the refit line");
  add_label_value_options(*cmd, o->input);
  add_missing_option(*cmd, o->input.missing, false);
  cmd->add_option("--reference", o->reference,
                  "Compare with the rows of this file (same columns as tonight's) instead of the map's own reference");
  cmd->add_option("--reference-tally", o->reference_tally,
                  "Compare with this tally of unweighted rows (plumb tally or merge) instead of the map's own reference");
  cmd->add_option("--bins", o->bins, "PSI bins at most (the map's pieces joined into bins of about equal reference rows)")
      ->check(CLI::Range(1, 1000))
      ->default_str("10");
  cmd->add_option("--bootstrap", o->bootstrap, "Bootstrap replicates for the intervals of the labelled changes (0: none)")
      ->check(CLI::Range(0, 100000))
      ->default_str("200");
  cmd->add_option("--seed", o->seed, "Seed of the bootstrap; the same seed gives the same intervals")->default_str("1");
  cmd->add_option("--confidence", o->confidence, "Level of every interval")
      ->check(CLI::Range(0.5, 0.999))
      ->default_str("0.95");
  cmd->add_option("--max", o->max, "Gate: fail (exit 7) when METRIC is above VALUE, e.g. psi=0.2 (repeatable)")
      ->allow_extra_args(false);
  cmd->add_option("--min", o->min, "Gate: fail (exit 7) when METRIC is below VALUE, e.g. ks_p=0.001 (repeatable)")
      ->allow_extra_args(false);
  cmd->add_option("--json", o->json_path,
                  "Also write every figure as one JSON object (docs/drift-format.md); - writes it to standard output "
                  "instead of the text");
  add_history_options(*cmd, o->history);
  cmd->add_flag("--ascii", o->ascii, "ASCII characters only in the text");
  add_separator_option(*cmd, o->input.separator);
  cmd->add_flag("-q,--quiet", o->input.quiet, "No text output (files and gates still work)");
  return [o] { return run_drift(*o); };
}

}  // namespace plumb::cli
