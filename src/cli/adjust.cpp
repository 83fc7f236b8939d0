// plumb adjust: write a map artifact whose probabilities have their odds
// multiplied for a new base rate (given, or estimated from unlabelled rows
// by EM) or for negatives downsampled in the fit rows, without refitting.
#include <cstdio>
#include <optional>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "plumb/io/artifact.hpp"
#include "plumb/io/csv.hpp"
#include "plumb/error.hpp"
#include "plumb/io/labelled_input.hpp"
#include "plumb/io/output.hpp"
#include "plumb/prior_estimate.hpp"

namespace plumb::cli {
namespace {

struct AdjustOptions {
  std::string artifact;
  std::string output = "-";
  double prior = 0.0;
  bool prior_given = false;
  std::string estimate_from;  // --estimate-prior FILE
  double negative_rate = 1.0;
  bool negative_rate_given = false;
  std::string score;  // empty: the map's score column
  std::string missing = "refuse";
  std::string separator = "auto";
  std::size_t bootstrap = 300;
  std::uint64_t seed = 1;
  double confidence = 0.95;
  std::size_t threads = 0;
  bool quiet = false;
  std::vector<std::string> estimate_only;  // options that need --estimate-prior, as given
};

void check_rate(bool given, double value, const char* option, bool one_allowed, const std::string& expected) {
  if (given && !(value > 0.0 && (one_allowed ? value <= 1.0 : value < 1.0)))
    throw Error(ErrorKind::usage, std::string(option) + (one_allowed ? " lies outside (0, 1]" : " lies outside (0, 1)"),
                {}, shortest(value), expected);
}

struct UnlabelledProbabilities {
  std::vector<double> probability;
  std::string source, sha256;
  std::uint64_t skipped = 0;
};

// The map's probabilities for every row of the score column; a missing or
// invalid score is refused with its location unless --missing skip.
UnlabelledProbabilities read_probabilities(const AdjustOptions& o, const Artifact& artifact) {
  io::CsvOptions csv;
  csv.delimiter = parse_separator(o.separator);
  io::CsvReader reader(o.estimate_from, csv);
  const std::string spec = map_score_column(artifact, o.score);
  std::size_t col = 0;
  try {
    col = reader.column(spec, "score");
  } catch (const Error& e) {
    if (!o.score.empty() || e.kind() != ErrorKind::input) throw;
    throw Error(e.kind(), e.message() + " (the map was fitted on column '" + spec + "')", e.where(), e.value(),
                e.expected() + "; or name the column with --score NAME");
  }
  const io::MissingPolicy policy = parse_missing(o.missing);
  const CalibrationMap& map = *artifact.map;
  UnlabelledProbabilities out;
  out.source = reader.name();
  Progress progress("plumb adjust: reading", o.quiet);
  io::Record record;
  while (reader.next(record)) {
    const std::string_view text = record.fields[col];
    const std::optional<double> score = io::parse_number(text);
    if (!score || !valid_on_scale(*score, map.scale())) {
      Location loc;
      loc.file = reader.name();
      loc.line = record.line;
      loc.column = col + 1;
      loc.column_name = reader.header()[col];
      if (io::is_missing_value(text)) {
        if (policy == io::MissingPolicy::skip) {
          ++out.skipped;
          continue;
        }
        throw Error(ErrorKind::input, "the score is missing", loc, std::string(text),
                    "a score (or --missing skip to leave the row out)");
      }
      const io::ScoreProblem why = io::score_problem(
          text, map.scale(), "this map was fitted on probabilities; for log-odds or margins, adjust a map fitted "
                             "with plumb fit --scale logit or --scale margin");
      throw Error(ErrorKind::input,
                  why.message + " (the map was fitted on the " + std::string(to_string(map.scale())) + " scale)", loc,
                  std::string(text), why.expected);
    }
    out.probability.push_back(map.map(*score).probability);
    if ((out.probability.size() & 0xFFFF) == 0)
      progress.update(out.probability.size(), reader.bytes_read(), reader.total_bytes());
  }
  progress.finish();
  out.sha256 = reader.content_sha256();
  if (out.probability.empty()) {
    Location loc;
    loc.file = reader.name();
    throw Error(ErrorKind::input,
                out.skipped > 0 ? "every row has a missing score (" + grouped(out.skipped) + " rows left out)"
                                : "no rows to estimate the base rate from",
                loc, {}, "rows with a score");
  }
  return out;
}

int run_adjust(const AdjustOptions& o) {
  if (!o.prior_given && o.estimate_from.empty() && !o.negative_rate_given)
    throw Error(ErrorKind::usage, "nothing to adjust", {}, {},
                "--prior RATE (a known new base rate), --estimate-prior FILE (estimate it from unlabelled rows) "
                "or --negative-rate RATE (negatives were downsampled in the fit rows)");
  if (o.prior_given && !o.estimate_from.empty())
    throw Error(ErrorKind::usage, "--prior and --estimate-prior both give the new base rate", {}, {},
                "one of them");
  if (!o.estimate_only.empty() && o.estimate_from.empty())
    throw Error(ErrorKind::usage, o.estimate_only.front() + " only applies to the rows of --estimate-prior", {}, {},
                "--estimate-prior FILE, or leave " + o.estimate_only.front() + " out");
  if (o.estimate_from == "-" && o.artifact == "-")
    throw Error(ErrorKind::usage, "the map and --estimate-prior cannot both read standard input", {}, {},
                "a file name for one of them");
  check_rate(o.prior_given, o.prior, "--prior", false, "the new base rate, strictly between 0 and 1, such as 0.3");
  check_rate(o.negative_rate_given, o.negative_rate, "--negative-rate", true,
             "the rate at which negative rows were kept in the fit rows, such as 0.1 for one in ten");

  Artifact artifact = load_artifact(o.artifact);
  const double before = target_base_rate(artifact);
  bool sampled_before = false;
  for (const OddsStep& s : artifact.odds_steps)
    sampled_before = sampled_before || s.reason == OddsStep::Reason::negative_sampling;
  // Negatives first: a prior shift starts from the base rate of the population
  // the map's probabilities describe, which the downsampling correction gives.
  if (o.negative_rate_given) {
    OddsStep step;
    step.reason = OddsStep::Reason::negative_sampling;
    step.negative_rate = o.negative_rate;
    add_odds_step(artifact, step);
  }
  std::optional<PriorEstimate> estimate;
  std::string estimated_from;
  double before_estimate = 0.0;  // the base rate the estimate starts from
  if (o.prior_given || !o.estimate_from.empty()) {
    OddsStep step;
    step.reason = OddsStep::Reason::prior_shift;
    if (o.prior_given) {
      step.base_rate_to = o.prior;
    } else {
      const UnlabelledProbabilities rows = read_probabilities(o, artifact);
      PriorEstimateOptions options;
      options.resamples = o.bootstrap;
      options.seed = o.seed;
      options.confidence = o.confidence;
      options.threads = o.threads;
      before_estimate = target_base_rate(artifact);
      try {
        estimate = estimate_base_rate(rows.probability, before_estimate, options);
      } catch (const Error& e) {
        if (e.kind() != ErrorKind::fit) throw;
        Location loc;
        loc.file = rows.source;
        throw Error(e.kind(), e.message(), loc, e.value(), e.expected());
      }
      step.base_rate_to = estimate->base_rate;
      step.estimate = {{"method", "em"},
                       {"source", rows.source},
                       {"source_sha256", rows.sha256},
                       {"rows", rows.probability.size()},
                       {"iterations", estimate->iterations},
                       {"bootstrap", o.bootstrap},
                       {"bootstrap_used", estimate->resamples_used},
                       {"seed", o.seed},
                       {"confidence", o.confidence},
                       {"interval", {estimate->lo, estimate->hi}}};
      if (o.missing == "skip") step.estimate["rows_skipped"] = rows.skipped;
      estimated_from = grouped(rows.probability.size()) + " rows of " + rows.source;
    }
    add_odds_step(artifact, step);
  }

  io::OutputFile out(o.output);
  out.write(artifact_to_text(artifact));
  out.commit();
  if (o.quiet) return 0;
  double factor = 1.0;
  for (const OddsStep& s : artifact.odds_steps) factor *= s.factor;
  if (estimate)
    std::fprintf(stderr,
                 "plumb adjust: base rate estimated by EM from %s: %s (%s%% bootstrap interval %s, %s "
                 "resamples), %d EM step%s\n",
                 estimated_from.c_str(), significant(estimate->base_rate, 4).c_str(),
                 significant(100.0 * o.confidence, 4).c_str(),
                 interval_text(significant(estimate->lo, 4), significant(estimate->hi, 4)).c_str(),
                 grouped(estimate->resamples_used).c_str(),
                 estimate->iterations, estimate->iterations == 1 ? "" : "s");
  std::fprintf(stderr, "plumb adjust: %s map; base rate %s -> %s, odds x %s on the fitted map's; written to %s\n",
               std::string(artifact.map->kind()).c_str(), significant(before, 4).c_str(),
               significant(target_base_rate(artifact), 4).c_str(), significant(factor, 6).c_str(),
               out.name().c_str());
  if (o.negative_rate_given && sampled_before)
    std::fprintf(stderr, "plumb adjust: caution: the map already recorded downsampled negatives; both rates now "
                         "apply, which is right only if the fit rows were downsampled twice\n");
  if (estimate && estimate->resamples_used > 0 && estimate->lo <= before_estimate && before_estimate <= estimate->hi)
    std::fprintf(stderr, "plumb adjust: note: the interval holds the map's base rate %s: these rows show no clear "
                         "shift\n",
                 significant(before_estimate, 4).c_str());
  if (o.prior_given || estimate)
    std::fprintf(stderr, "plumb adjust: caution: a prior shift assumes only the base rate changed (each class's "
                         "scores look as they did at the fit); check the adjusted map with plumb report once "
                         "labels arrive\n");
  return 0;
}

}  // namespace

Command add_adjust_command(CLI::App& app) {
  auto o = std::make_shared<AdjustOptions>();
  CLI::App* cmd = app.add_subcommand(
      "adjust", "Adjust a map's odds for a new base rate or for downsampled negatives, and write the adjusted map");
  cmd->footer(
      "The adjusted artifact keeps the fitted map and records the adjustment beside it; plumb apply,\n"
      "plumb report --map and plumb inspect use the adjusted probabilities with no option of their own.\n"
      "Every adjustment multiplies\n"
      "the odds p/(1-p) by one factor k, so the map's ranking and shape stay as fitted:\n"
      "  --prior B             the base rate moved from the map's A (inspect shows it) to B:\n"
      "                        k = [B/(1-B)] / [A/(1-A)] (Bayes' rule)\n"
      "  --estimate-prior FILE B is unknown: estimated from the unlabelled scores of FILE by EM\n"
      "                        (Saerens, Latinne and Decaestecker 2002), with a bootstrap interval\n"
      "  --negative-rate R     the fit rows kept each negative at rate R: k = R\n"
      "A prior shift assumes that only the base rate changed: within each class the scores are\n"
      "distributed as at the fit. When the model or the population changed otherwise, refit on new\n"
      "labelled rows instead. The interval is a bootstrap interval under that assumption, not a guarantee.\n\n"
      "Examples:\n"
      "  plumb adjust late.map.json --prior 0.30 -o late.peak.map.json\n"
      "  plumb adjust late.map.json --estimate-prior tonight.csv -o late.tonight.map.json\n"
      "  plumb adjust sampled.map.json --negative-rate 0.1 -o late.map.json");
  cmd->add_option("map", o->artifact, "Map artifact written by plumb fit, cross-fit or adjust (- reads standard input)")
      ->required();
  cmd->add_option("--prior", o->prior, "The new base rate, in (0, 1), where the map will be applied")
      ->option_text("RATE");
  cmd->add_option("--estimate-prior", o->estimate_from,
                  "Estimate the new base rate by EM from this CSV or TSV of unlabelled scores (- reads standard "
                  "input)")
      ->option_text("FILE");
  cmd->add_option("--negative-rate", o->negative_rate,
                  "The map's fit rows kept each negative row at this rate, in (0, 1]: odds x RATE (applied "
                  "before a prior shift)")
      ->option_text("RATE");
  cmd->add_option("--score", o->score,
                  "With --estimate-prior: column holding the raw score (default: the column the map was fitted on)");
  add_missing_option(*cmd, o->missing, false);
  cmd->get_option("--missing")
      ->description("With --estimate-prior: a missing score (empty, NA, NaN, null, n/a, None): refuse (stop with "
                    "its location) or skip (leave the row out and count it)");
  cmd->add_option("--bootstrap", o->bootstrap, "With --estimate-prior: bootstrap resamples for the interval (0: none)")
      ->check(CLI::Range(std::size_t{0}, std::size_t{100000}))
      ->default_str("300");
  cmd->add_option("--seed", o->seed, "With --estimate-prior: seed of the bootstrap; the same seed gives the same "
                  "interval")->default_str("1");
  cmd->add_option("--confidence", o->confidence, "With --estimate-prior: level of the interval")
      ->check(CLI::Range(0.5, 0.999))
      ->default_str("0.95");
  cmd->add_option("--threads", o->threads,
                  "With --estimate-prior: threads for the bootstrap (0: one per core); the interval is the same for "
                  "any count")
      ->check(CLI::Range(std::size_t{0}, std::size_t{1024}))
      ->default_str("0");
  add_separator_option(*cmd, o->separator);
  cmd->add_option("-o,--output", o->output, "Where to write the adjusted map artifact (- for standard output)")
      ->default_str("-");
  add_quiet_option(*cmd, o->quiet);
  return [o, cmd] {
    o->prior_given = cmd->count("--prior") > 0;
    o->negative_rate_given = cmd->count("--negative-rate") > 0;
    for (const char* name : {"--score", "--missing", "--bootstrap", "--seed", "--confidence", "--threads", "--sep"})
      if (cmd->count(name) > 0) o->estimate_only.push_back(name);
    return run_adjust(*o);
  };
}

}  // namespace plumb::cli
