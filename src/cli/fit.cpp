// plumb fit: fit one map on labelled scores and write its artifact.
#include <algorithm>
#include <cstdio>
#include <optional>
#include <string>

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "plumb/io/artifact.hpp"
#include "plumb/calibration_map.hpp"
#include "plumb/class_map.hpp"
#include "plumb/io/class_artifact.hpp"
#include "plumb/io/class_input.hpp"
#include "plumb/error.hpp"
#include "plumb/map_registry.hpp"
#include "plumb/io/output.hpp"
#include "plumb/tally.hpp"
#include "plumb/io/tally_io.hpp"
#include "plumb/version.hpp"

namespace plumb::cli {
namespace {

// The command's usage as --help prints it: the summary under the command's
// name, and the text after the options (what it does, examples). The footer
// opens with the kinds' lines, which come from the map registry (maps_help()).
constexpr const char* kUsageSummary =
    "Fit a recalibration map on labelled scores and write it as a map artifact";
constexpr const char* kUsageFooter =
    "Examples:\n"
    "  plumb fit --map isotonic --score risk --label missed holdout.csv -o late.map.json\n"
    "  plumb fit --map platt --scale logit --score z --label outcome --positive late holdout.tsv > z.map.json\n"
    "  plumb fit --map isotonic --tally all.tally.json -o late.map.json\n"
    "  plumb fit --map dirichlet --l2 0.001 --scores 'p_*' --label outcome parcels.csv -o outcome.map.json\n\n"
    "Multi-class: with --scores (K columns, one per class; the label column holds class names) --map is\n"
    "one of the multi-class kinds below, and the map gives each row K probabilities summing to 1.\n\n"
    "With --tally (from plumb tally and merge) the map is the one a fit on all the tallied rows gives:\n"
    "every kind fits on the per-score sums, which a tally keeps. Only the recorded source (the tally\n"
    "file and its SHA-256) differs in the artifact.\n\n"
    "Downsampled negatives: when the fit rows kept only a fraction RATE of the negative rows (as a model\n"
    "trained on downsampled data is often checked), --negative-rate RATE fits the map on the rows as they\n"
    "are and records odds x RATE in the artifact, so apply, report --map and inspect give the probabilities\n"
    "of the full population. For a map already written, plumb adjust --negative-rate does the same.\n\n"
    "The artifact records the input's SHA-256, row counts and the fit's diagnostics; see docs/artifact-format.md.\n"
    "It also keeps the fit rows counted on a grid of the score (--reference-grid), which plumb drift compares\n"
    "later nights with; weighted rows get none, and --no-reference leaves it out.";

struct FitOptions {
  InputOptions input;
  std::string kind;
  std::string output = "-";
  MapChoices choices;
  bool no_timestamp = false;
  std::string tally;               // fit on this tally instead of rows
  double negative_rate = 1.0;      // --negative-rate, when negative_rate_given
  bool negative_rate_given = false;
  double reference_grid = default_reference_grid;  // --reference-grid
  bool no_reference = false;
  std::vector<std::string> given;  // row-reading options given on the command line
  std::vector<std::string> given_all;  // options that do not go with --scores, as given
  ClassOptions classes;            // --scores, --classes, --sum-tolerance
  ClassMapOptions class_map;       // --l2, --per-class
};

// Refused before any reading, so a bad rate costs no pass over the rows.
void check_negative_rate(const FitOptions& o) {
  if (o.negative_rate_given && !(o.negative_rate > 0.0 && o.negative_rate <= 1.0))
    throw Error(ErrorKind::usage, "--negative-rate lies outside (0, 1]", {}, shortest(o.negative_rate),
                "the rate at which negative rows were kept when the fit rows were drawn, such as 0.1 for one in "
                "ten (1: all kept)");
}

// The map fitted on rows whose negatives were downsampled gives the odds of
// that sample; the artifact records the correction to the full population.
void record_negative_rate(const FitOptions& o, Artifact& artifact) {
  if (!o.negative_rate_given) return;
  OddsStep step;
  step.reason = OddsStep::Reason::negative_sampling;
  step.negative_rate = o.negative_rate;
  add_odds_step(artifact, step);
}

// The fit rows' reference for plumb drift, or none when the scores span
// more grid cells than a reference holds (scores such as log-odds of 1e300),
// with a note naming the option that would keep one.
std::optional<GridCells> drift_reference(const Tally& sums, double step, bool quiet) {
  try {
    return reference_from_tally(sums, step);
  } catch (const Error& e) {
    if (e.kind() != ErrorKind::input) throw;
    if (!quiet)
      std::fprintf(stderr, "plumb fit: note: the artifact carries no drift reference: %s; a coarser "
                           "--reference-grid keeps one\n",
                   e.message().c_str());
    return std::nullopt;
  }
}

// The artifact's provenance for a map fitted on a tally: the tally file is
// the source; every count and range is the tally's, so they equal those of
// a fit on the rows the tally was built from.
Provenance provenance_of_tally(const Tally& t, const std::string& file, const std::string& sha256,
                               bool no_timestamp) {
  Provenance p;
  p.source = file;
  p.source_sha256 = sha256;
  p.rows = t.rows;
  p.rows_skipped = t.rows_skipped;
  p.positives = t.positives;
  p.weight_total = t.weight_total;
  p.label_column = t.label_column;
  p.weight_column = t.weight_column;
  p.positive_rule = t.positive_rule;
  p.score_min = t.score_min;
  p.score_max = t.score_max;
  p.tool = std::string("plumb ") + version_string;
  p.created_utc = no_timestamp ? std::string() : utc_now();
  return p;
}

int write_and_summarise(const FitOptions& o, const Artifact& artifact, const std::string& from);

void check_scale(const FitOptions& o, Scale scale) {
  const MapKind& kind = fittable_map_kind(o.kind);
  if (!kind.accepts(scale)) throw scale_refusal(kind, scale);
}

int run_fit_classes(const FitOptions& o);

int run_fit(const FitOptions& o) {
  if (!o.classes.scores.empty()) return run_fit_classes(o);
  if (!find_map_kind(o.kind) || !find_map_kind(o.kind)->fittable)
    throw Error(ErrorKind::usage, "the " + o.kind + " map is a multi-class kind and needs --scores", {}, o.kind,
                "--scores COLS (one column per class), or a binary kind with --score: " + map_kind_list());
  (void)o.choices.map_options();  // refuses a bad --between-blocks before any reading
  check_negative_rate(o);
  if (!o.tally.empty()) {
    if (!o.given.empty())
      throw Error(ErrorKind::usage, o.given.front() + " cannot be used with --tally", {}, {},
                  "--tally alone: the tally records its score and label columns, scale, weights and label rule");
  } else if (o.input.score.empty() || o.input.label.empty()) {
    throw Error(ErrorKind::usage, "fit needs --score and --label (or --tally FILE)", {}, {},
                "--score COL --label COL FILE, or --tally FILE");
  }
  const Scale scale = o.tally.empty() ? parse_scale_option(o.input.scale) : Scale::probability;
  if (!o.tally.empty()) {
    std::string sha256;
    const Tally tally = load_tally(o.tally, &sha256);
    check_scale(o, tally.scale);
    Artifact artifact;
    Location loc;
    loc.file = o.tally;
    try {
      artifact.map = fit_map_on_tally(o.kind, tally, o.choices.map_options());
    } catch (const Error& e) {
      if (e.kind() != ErrorKind::fit || !e.where().file.empty()) throw;
      throw Error(e.kind(), e.message(), loc, e.value(), e.expected());
    }
    artifact.score_column = tally.score_column;
    artifact.fit_options = o.choices.recorded(o.kind);
    artifact.provenance = provenance_of_tally(tally, o.tally == "-" ? "<stdin>" : o.tally, sha256, o.no_timestamp);
    if (!o.no_reference && tally.unit_weights)
      artifact.reference = drift_reference(tally, o.reference_grid, o.input.quiet);
    record_negative_rate(o, artifact);
    return write_and_summarise(o, artifact, "tally " + artifact.provenance.source);
  }
  check_scale(o, scale);
  const MapOptions map_options = o.choices.map_options();

  // Unweighted rows are counted by score while the file is still being
  // parsed (the sums are counts, the same whatever the blocks); weighted rows
  // are summed in input order after the read, as tally_scores does.
  io::LabelledColumns columns{{{o.input.score, scale}}, o.input.label, o.input.weight, {}};
  columns.other_scales_hint = scale_option_hint();
  Tally sums;
  sums.scale = scale;
  const io::LabelledRows rows = o.input.weight.empty()
                                    ? read_and_tally_with_progress("plumb fit: reading", o.input, columns, sums)
                                    : read_rows_with_progress("plumb fit: reading", o.input, columns);

  Artifact artifact;
  try {
    artifact.map = o.input.weight.empty()
                       ? fit_map_on_tally(o.kind, sums, map_options)
                       : fit_map(o.kind, FitData{rows.scores[0], rows.label, rows.weight, scale}, map_options);
  } catch (const Error& e) {
    if (e.kind() != ErrorKind::fit || !e.where().file.empty()) throw;
    Location loc;
    loc.file = rows.source;
    throw Error(e.kind(), e.message(), loc, e.value(), e.expected());
  }
  artifact.score_column = rows.score_columns[0];
  artifact.fit_options = o.choices.recorded(o.kind);
  artifact.provenance = provenance_of(rows, o.input, o.no_timestamp);
  if (!o.no_reference && o.input.weight.empty())
    artifact.reference = drift_reference(sums, o.reference_grid, o.input.quiet);
  record_negative_rate(o, artifact);
  return write_and_summarise(o, artifact, grouped(rows.rows) + " rows of " + rows.source);
}

int write_and_summarise(const FitOptions& o, const Artifact& artifact, const std::string& from) {
  const Provenance& rows = artifact.provenance;
  io::OutputFile out(o.output);
  out.write(artifact_to_text(artifact));
  out.commit();

  if (!o.input.quiet) {
    const FitDiagnostics& d = artifact.map->diagnostics();
    std::string notes;
    for (const std::string& n : d.notes) notes += "; " + n;
    if (rows.rows_skipped)
      notes += "; " + grouped(*rows.rows_skipped) + (*rows.rows_skipped == 1 ? " row" : " rows") +
               " with a missing score or label left out";
    if (!artifact.odds_steps.empty())
      notes += "; odds x " + shortest(o.negative_rate) + " for negatives kept at rate " + shortest(o.negative_rate) +
               " (base rate " + significant(fitted_base_rate(artifact), 4) + " in the fit rows, " +
               significant(target_base_rate(artifact), 4) + " in the population they were drawn from)";
    std::fprintf(stderr, "plumb fit: %s map from %s (weight of positives %s of %s), log loss %.6f%s; written to %s\n",
                 o.kind.c_str(), from.c_str(), weight_text(rows.positives).c_str(),
                 weight_text(rows.weight_total).c_str(), d.log_loss, notes.c_str(), out.name().c_str());
    if (!d.converged)
      std::fprintf(stderr, "plumb fit: warning: the fit did not converge after %d iterations (are the labels "
                           "separated by the score?); the map is usable but its parameters are not a maximum\n",
                   d.iterations);
    const CalibrationMap& map = *artifact.map;
    const MapKind& kind = fittable_map_kind(o.kind);
    if (map.decreases_overall())
      std::fprintf(stderr, "plumb fit: warning: the fitted map decreases (higher scores get lower probabilities); "
                           "is the score oriented the other way, or the label's positive value wrong?\n");
    else if (!map.monotone())
      std::fprintf(stderr, "plumb fit: note: the fitted map is not monotone: it rises with the score as a whole "
                           "but falls between some neighbouring %s%s%s\n",
                   kind.not_monotone_between.empty() ? "scores" : std::string(kind.not_monotone_between).c_str(),
                   kind.not_monotone_advice.empty() ? "" : "; ", std::string(kind.not_monotone_advice).c_str());
    if (map.reaches_zero_or_one())
      std::fprintf(stderr, "plumb fit: caution: the map gives a probability of exactly 0 or 1 for some scores "
                           "(%s whose rows all have one outcome), so any row there with the other outcome has infinite log "
                           "loss%s%s\n",
                   kind.zero_or_one_pieces.empty() ? "pieces" : std::string(kind.zero_or_one_pieces).c_str(),
                   kind.zero_or_one_advice.empty() ? "" : "; ", std::string(kind.zero_or_one_advice).c_str());
    if (d.clipped > 0)
      std::fprintf(stderr, "plumb fit: note: %s rows had probability scores within 1e-12 of 0 or 1 and were "
                           "clipped there before taking log-odds\n",
                   grouped(d.clipped).c_str());
    if (kind.nonparametric && rows.weight_total < few_rows_for_nonparametric)
      std::fprintf(stderr, "plumb fit: caution: %s rows is few for %s map (common practice: about %s or "
                           "more); a platt or beta map is less likely to overfit\n",
                   weight_text(rows.weight_total).c_str(), kind_with_article(o.kind).c_str(),
                   grouped(static_cast<std::uint64_t>(few_rows_for_nonparametric)).c_str());
  }
  return 0;
}

// The multi-class fit: K score columns, class labels, a multi-class kind.
int run_fit_classes(const FitOptions& o) {
  for (const char* name : {"--tally", "--positive", "--negative", "--negative-rate", "--score"})
    for (const std::string& g : o.given_all)
      if (g == name)
        throw Error(ErrorKind::usage, std::string(name) + " cannot be used with --scores", {}, {},
                    "--scores COLS --label COL FILE (the label column holds class names)");
  if (o.input.label.empty())
    throw Error(ErrorKind::usage, "fit --scores needs --label", {}, {}, "--scores COLS --label COL FILE");
  if (!find_class_map_kind(o.kind))
    throw Error(ErrorKind::usage, "the " + o.kind + " map is binary and does not take --scores", {}, o.kind,
                "a multi-class kind: " + class_map_kind_list());
  ClassMapOptions options = o.class_map;
  options.binary = o.choices.map_options();
  if (o.kind == "one_vs_rest") {
    const MapKind* per = find_map_kind(options.per_class);
    if (!per || !per->fittable || !per->accepts(Scale::probability))
      throw Error(ErrorKind::usage, "--per-class names no binary kind on probabilities", {}, options.per_class,
                  map_kind_list());
  }
  const io::ClassColumns columns = class_columns(o.input, o.classes);
  const io::ClassRows rows = io::read_class_scores(o.input.file, columns, parse_separator(o.input.separator));
  ClassArtifact artifact;
  try {
    artifact.map = fit_class_map(o.kind, rows.data, options);
  } catch (const Error& e) {
    if (e.kind() != ErrorKind::fit || !e.where().file.empty()) throw;
    Location loc;
    loc.file = rows.source;
    loc.column_name = rows.label_column;
    throw Error(e.kind(), e.message(), loc, e.value(), e.expected());
  }
  artifact.score_columns = rows.score_columns;
  if (o.kind == "dirichlet") artifact.fit_options["l2"] = options.l2;
  if (o.kind == "one_vs_rest") {
    artifact.fit_options["per_class"] = options.per_class;
    artifact.fit_options["per_class_options"] = o.choices.recorded(options.per_class);
  }
  if (columns.scale == ClassScale::probability) artifact.fit_options["sum_tolerance"] = columns.sum_tolerance;
  artifact.provenance = class_provenance(rows, columns.missing, o.no_timestamp);

  io::OutputFile out(o.output);
  out.write(class_artifact_to_text(artifact));
  out.commit();
  if (!o.input.quiet) {
    const FitDiagnostics& d = artifact.map->diagnostics();
    std::string notes;
    for (const std::string& n : d.notes) notes += "; " + n;
    notes += skipped_note(o.input, rows.skipped);
    std::fprintf(stderr, "plumb fit: %s map on %zu classes from %s rows of %s, log loss %s%s; written to %s\n",
                 o.kind.c_str(), rows.data.k(), grouped(rows.data.rows).c_str(), rows.source.c_str(),
                 fixed_text(d.log_loss, 6).c_str(), notes.c_str(), out.name().c_str());
    if (!d.converged)
      std::fprintf(stderr, "plumb fit: warning: the fit did not converge after %d iterations; the map is usable "
                           "but its parameters are not a minimum%s\n",
                   d.iterations, o.kind == "dirichlet" ? " (a larger --l2 makes the optimum finite)" : "");
  }
  return 0;
}

// The footer's list of kinds, one line each from the map registry.
std::string maps_help() {
  std::string out = "Maps:\n";
  std::size_t width = 13;  // the names in one column, two spaces after the longest
  for (const MapKind& kind : map_registry())
    if (kind.fittable) width = std::max(width, kind.name.size() + 2);
  for (const MapKind& kind : map_registry()) {
    if (!kind.fittable) continue;
    std::string name(kind.name);
    name.resize(width, ' ');
    out += "  " + name + std::string(kind.help) + "\n";
  }
  out += "\nMulti-class maps (with --scores):\n";
  for (const ClassMapKind& kind : class_map_kinds()) {
    std::string name(kind.name);
    name.resize(width, ' ');
    out += "  " + name + std::string(kind.help) + "\n";
  }
  return out + "\n";
}

}  // namespace

Command add_fit_command(CLI::App& app) {
  auto o = std::make_shared<FitOptions>();
  CLI::App* cmd = app.add_subcommand("fit", kUsageSummary);
  cmd->footer(maps_help() + kUsageFooter);
  // The kinds come from the map registry; the help and the refusal list them from the check.
  std::vector<std::string> kinds(map_kinds().begin(), map_kinds().end());
  for (const ClassMapKind& k : class_map_kinds())
    if (std::find(kinds.begin(), kinds.end(), k.name) == kinds.end()) kinds.emplace_back(k.name);
  cmd->add_option("--map", o->kind, "Kind of map (each is described below)")->required()->check(CLI::IsMember(kinds))
      ->option_text("KIND");
  add_input_options(*cmd, o->input, true);
  // Required unless --tally is given; run_fit checks.
  cmd->get_option("--score")->required(false)->description("Column holding the raw score (name or 1-based index); required unless --tally");
  cmd->get_option("--label")->required(false)->description("Column holding the observed outcome (name or 1-based index); required unless --tally");
  cmd->add_option("--tally", o->tally,
                  "Fit on a tally from plumb tally or merge instead of rows (no FILE, --score, --label, --weight, "
                  "--positive, --negative, --missing, --scale or --sep: the tally records them)");
  cmd->add_option("-o,--output", o->output, "Where to write the map artifact (- for standard output)")
      ->default_str("-");
  add_map_options(*cmd, o->choices);
  cmd->add_option("--negative-rate", o->negative_rate,
                  "The fit rows kept each negative row at this rate, in (0, 1] (downsampling): the artifact "
                  "records odds x RATE, so the map's probabilities are those of the full population")
      ->option_text("RATE");
  add_class_options(*cmd, o->classes);
  cmd->add_option("--l2", o->class_map.l2,
                  "dirichlet: the L2 weight on the matrix's off-diagonal and the bias (0: matrix scaling)")
      ->check(CLI::Range(0.0, 1e6))
      ->default_str("0");
  cmd->add_option("--per-class", o->class_map.per_class,
                  "one_vs_rest: the binary kind fitted for each class (its options as for that kind)")
      ->check(CLI::IsMember(std::vector<std::string>(map_kinds().begin(), map_kinds().end())))
      ->default_str("isotonic")
      ->option_text("KIND");
  cmd->add_option("--reference-grid", o->reference_grid,
                  "Step of the grid the fit rows are counted on for plumb drift (log-odds for probability "
                  "scores; moves no probability by more than step/8)")
      ->check(CLI::Range(1e-6, 10.0))
      ->default_str("0.02");
  cmd->add_flag("--no-reference", o->no_reference,
                "Leave the fit rows' reference out of the artifact (plumb drift then needs --reference)");
  cmd->add_flag("--no-timestamp", o->no_timestamp,
                "Leave the creation time out, so the same input gives a byte-identical artifact");
  return [o, cmd] {
    o->negative_rate_given = cmd->count("--negative-rate") > 0;
    for (const char* name :
         {"file", "--score", "--label", "--weight", "--positive", "--negative", "--missing", "--scale", "--sep"})
      if (cmd->count(name) > 0) o->given.push_back(name[0] == '-' ? name : "a FILE of rows");
    for (const char* name : {"--tally", "--positive", "--negative", "--negative-rate", "--score"})
      if (cmd->count(name) > 0) o->given_all.push_back(name);
    return run_fit(*o);
  };
}

}  // namespace plumb::cli
