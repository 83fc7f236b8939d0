// plumb tally: turn one shard of labelled scores into a mergeable tally.
#include <cmath>
#include <cstdio>
#include <string>

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "plumb/error.hpp"
#include "plumb/io/output.hpp"
#include "plumb/tally.hpp"
#include "plumb/io/tally_io.hpp"

namespace plumb::cli {
namespace {

// The command's usage as --help prints it: the summary under the command's
// name, and the text after the options (what it does, examples).
constexpr const char* kUsageSummary =
    "Sum one shard of labelled scores into a tally (per distinct score: rows and the weight of "
    "negatives and positives) that plumb merge combines and fit and report read";
constexpr const char* kUsageFooter =
    "A tally keeps everything fit needs: a map fitted on merged tallies is the same, byte for byte\n"
    "apart from the recorded input, as a map fitted on all the rows at once. Its size grows with\n"
    "the distinct scores, not the rows; when scores have many digits, --logit-grid H rounds each\n"
    "score's log-odds to the nearest multiple of H, which moves no probability by more than H/8.\n"
    "Tallies are merged only with tallies of the same score column, scale, label column, label\n"
    "rule, weight column and grid. The format: docs/tally-format.md.\n\n"
    "Examples:\n"
    "  plumb tally --score risk --label missed part-0001.csv -o part-0001.tally.json\n"
    "  plumb tally --score risk --label missed --logit-grid 0.001 part-0002.csv -o part-0002.tally.json\n"
    "  plumb merge part-*.tally.json -o all.tally.json\n"
    "  plumb fit --map isotonic --tally all.tally.json -o late.map.json";

struct TallyOptions {
  InputOptions input;
  std::string output = "-";
  double grid_step = 0.0;  // 0: exact scores
};

int run_tally(TallyOptions o) {
  const Scale scale = parse_scale_option(o.input.scale);
  const bool on_grid = o.grid_step > 0.0;
  if (on_grid && scale == Scale::margin)
    throw Error(ErrorKind::usage, "--logit-grid needs scores on the probability or logit scale", {}, {},
                "--scale probability or logit (a margin has no log-odds to round), or no --logit-grid");
  io::LabelledColumns columns{{{o.input.score, scale}}, o.input.label, o.input.weight, {}};
  columns.other_scales_hint = scale_option_hint();
  // Unweighted exact scores are counted by score while the file is still
  // being parsed, as fit does (counts: the same sums whatever the blocks), so
  // the rows are never all held; weighted rows and grids take the rows.
  const bool count_while_reading = o.input.weight.empty() && !on_grid;
  Tally t;
  t.scale = scale;
  io::LabelledRows rows = count_while_reading
                              ? read_and_tally_with_progress("plumb tally: reading", o.input, columns, t)
                              : read_rows_with_progress("plumb tally: reading", o.input, columns);
  t.score_column = rows.score_columns[0];
  t.label_column = rows.label_column;
  t.positive_rule = label_rule(o.input).describe();
  t.weight_column = rows.weight_column;
  t.rows = rows.rows;
  if (parse_missing(o.input.missing) == io::MissingPolicy::skip) t.rows_skipped = rows.skipped;
  t.weight_total = rows.weight_total;
  t.positives = rows.positives;
  t.unit_weights = true;
  for (double w : rows.weight) t.unit_weights = t.unit_weights && w == 1.0;
  t.sources.push_back({rows.source, rows.source_sha256, rows.rows});
  if (on_grid) {
    std::vector<double>& score = rows.scores[0];
    t.grid_step = o.grid_step;
    for (double& s : score) s = round_to_logit_grid(s, scale, o.grid_step);
    t.score_min = t.score_max = score.front();
    for (double s : score) {
      t.score_min = std::min(t.score_min, s);
      t.score_max = std::max(t.score_max, s);
    }
  } else {
    t.score_min = rows.score_min;
    t.score_max = rows.score_max;
  }
  if (!count_while_reading) tally_scores(FitData{rows.scores[0], rows.label, rows.weight, scale}, t);

  io::OutputFile out(o.output);
  write_tally(t, out);
  out.commit();
  if (!o.input.quiet)
    std::fprintf(stderr, "plumb tally: %s rows of %s (weight of positives %s of %s) in %s distinct %sscores%s; "
                         "written to %s\n",
                 grouped(rows.rows).c_str(), rows.source.c_str(), weight_text(rows.positives).c_str(),
                 weight_text(rows.weight_total).c_str(), grouped(t.score.size()).c_str(),
                 on_grid ? "grid " : "", skipped_note(o.input, rows.skipped).c_str(), out.name().c_str());
  return 0;
}

}  // namespace

Command add_tally_command(CLI::App& app) {
  auto o = std::make_shared<TallyOptions>();
  CLI::App* cmd = app.add_subcommand("tally", kUsageSummary);
  cmd->footer(kUsageFooter);
  add_input_options(*cmd, o->input, true);
  cmd->add_option("-o,--output", o->output, "Where to write the tally (- for standard output)")->default_str("-");
  cmd->add_option("--logit-grid", o->grid_step,
                  "Round every score's log-odds to the nearest multiple of this step (probability or logit "
                  "scores); each probability moves by at most step/8. Default: exact scores")
      ->check(CLI::Range(1e-9, 100.0));
  return [o] { return run_tally(*o); };
}

}  // namespace plumb::cli
