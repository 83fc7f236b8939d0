// plumb merge: combine tallies of shards into one.
#include <cstdio>
#include <string>
#include <vector>

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
    "Combine tallies written by plumb tally (or merge) into one tally";
constexpr const char* kUsageFooter =
    "Scores are matched exactly; row counts and weights are added. Tallies of unweighted rows merge\n"
    "exactly, so any order and any grouping of merges give the same bytes. With tallies made with\n"
    "plumb tally --weight the weights are added as doubles, whose sums can differ in the last digit with the order.\n"
    "Tallies of different score columns, scales, label columns, label rules, weight columns or\n"
    "grids are refused.\n\n"
    "Examples:\n"
    "  plumb merge part-*.tally.json -o all.tally.json\n"
    "  plumb merge monday.tally.json tuesday.tally.json > week.tally.json";

struct MergeOptions {
  std::vector<std::string> inputs;
  std::string output = "-";
  bool quiet = false;
};

int run_merge(const MergeOptions& o) {
  Tally merged = load_tally(o.inputs.front());
  for (std::size_t i = 1; i < o.inputs.size(); ++i) {
    const Tally next = load_tally(o.inputs[i]);
    if (const std::string conflict = merge_conflict(merged, next); !conflict.empty()) {
      Location loc;
      loc.file = o.inputs[i];
      throw Error(ErrorKind::usage,
                  "cannot merge this tally with " + std::string(i == 1 ? o.inputs[0] : "the ones before it") +
                      ": they differ in " + conflict,
                  loc, {}, "tallies of the same score column, scale, label column, label rule, weight column and grid");
    }
    merged = merge_tallies(merged, next);
  }
  io::OutputFile out(o.output);
  write_tally(merged, out);
  out.commit();
  if (!o.quiet)
    std::fprintf(stderr, "plumb merge: %s tallies, %s rows (weight of positives %s of %s) in %s distinct scores; "
                         "written to %s\n",
                 grouped(o.inputs.size()).c_str(), grouped(merged.rows).c_str(), weight_text(merged.positives).c_str(),
                 weight_text(merged.weight_total).c_str(), grouped(merged.score.size()).c_str(), out.name().c_str());
  return 0;
}

}  // namespace

Command add_merge_command(CLI::App& app) {
  auto o = std::make_shared<MergeOptions>();
  CLI::App* cmd = app.add_subcommand("merge", kUsageSummary);
  cmd->footer(kUsageFooter);
  cmd->add_option("tallies", o->inputs, "Tally files (at least one; - reads one from standard input)")
      ->required()
      ->expected(1, -1);
  cmd->add_option("-o,--output", o->output, "Where to write the merged tally (- for standard output)")
      ->default_str("-");
  add_quiet_option(*cmd, o->quiet);
  return [o] { return run_merge(*o); };
}

}  // namespace plumb::cli
