#pragma once
// Option handling shared by the subcommands: input columns, label rule,
// score scale, field separator, progress on stderr.
#include <CLI/CLI.hpp>
#include <chrono>
#include <cstdint>
#include <deque>
#include <optional>
#include <string>

#include "plumb/io/artifact.hpp"
#include "plumb/calibration_map.hpp"
#include "plumb/io/class_artifact.hpp"
#include "plumb/io/class_input.hpp"
#include "plumb/io/history.hpp"
#include "plumb/io/labelled_input.hpp"
#include "plumb/map_registry.hpp"
#include "plumb/report.hpp"
#include "plumb/number_text.hpp"  // the formatting layer, for every summary line
#include "plumb/tally.hpp"
#include "plumb/scale.hpp"

namespace plumb::cli {

struct InputOptions {
  std::string file = "-";
  std::string score;
  std::string label;
  std::string weight;
  std::string positive;  // empty: 1/0, true/false
  bool positive_given = false;
  std::string negative;  // named negative value, when negative_given
  bool negative_given = false;
  std::string missing = "refuse";  // --missing: refuse or skip
  std::string scale = "probability";
  std::string separator = "auto";
  bool quiet = false;
};

// The options of each kind of map, as given on the command line. The options
// and their kinds come from the map registry (plumb/map_registry.hpp).
struct MapChoices {
  MapOptions given;  // the defaults, with each option given applied as it is parsed
  // An option's hidden older spelling (--between for --between-blocks):
  // checked by map_options(), so that no message names it.
  struct Older {
    const MapOption* option = nullptr;
    const CLI::Option* current = nullptr;  // the option under its current name
    std::string text;                      // the value given under the older name
  };
  std::deque<Older> older;  // a deque: the command line binds to each `text`

  // Throws a usage Error when an older spelling was given with a value that
  // is not one of the option's choices, or together with the current name.
  MapOptions map_options() const;
  // The options that matter to `kind`, as the artifact records them.
  nlohmann::json recorded(std::string_view kind) const;
};
// Every fittable kind's options, in registry order (--between-blocks and its
// hidden older spelling --between, --platt-targets, --beta-form, --bins).
void add_map_options(CLI::App& command, MapChoices& choices);

// --score, --label, --weight, --positive, --negative, --missing, --scale,
// --sep, --quiet and the positional FILE. `with_label` false leaves out
// --label, --weight, --positive, --negative and --missing (for commands that
// read unlabelled rows).
void add_input_options(CLI::App& command, InputOptions& options, bool with_label);
void add_separator_option(CLI::App& command, std::string& separator);
// --positive and --negative (add_input_options adds them with the label).
void add_label_value_options(CLI::App& command, InputOptions& options);
// --missing: refuse or skip, and empty when `with_empty` (apply). The old
// apply spelling "stop" is still accepted, as refuse.
void add_missing_option(CLI::App& command, std::string& missing, bool with_empty);
// The --missing text as a policy (after add_missing_option's check).
io::MissingPolicy parse_missing(const std::string& text);
// "; 3 rows with a missing score or label left out" under --missing skip,
// empty otherwise: the summary lines' wording.
std::string skipped_note(const InputOptions& options, std::uint64_t skipped);
void add_quiet_option(CLI::App& command, bool& quiet);

// The separator option as a character (0 = detect). Throws Error(usage).
char parse_separator(const std::string& text);
Scale parse_scale_option(const std::string& text);
// The advice for a probability score outside [0, 1] on the commands that
// have --scale (fit, cross-fit, tally).
std::string scale_option_hint();
// The label rule of --positive/--negative; Error(usage) when both name the
// same value.
io::LabelRule label_rule(const InputOptions& options);

// Progress lines on stderr, only when stderr is a terminal and not quiet;
// rewritten in place at most a few times a second.
class Progress {
 public:
  Progress(std::string what, bool quiet);
  ~Progress();
  void update(std::uint64_t rows, std::uint64_t bytes, std::optional<std::uint64_t> total_bytes);
  void finish();
  bool active() const noexcept { return active_; }

 private:
  std::string what_;
  bool active_ = false;
  bool drawn_ = false;
  std::chrono::steady_clock::time_point start_, last_;
};

// The column a map reads, as apply's --score and report's --map-score name
// it: `given` (a name or 1-based index) when not empty, else the column the
// map was fitted on.
std::string map_score_column(const Artifact& artifact, const std::string& given);

// Reads labelled rows with a progress line headed `what` on stderr, under
// the label rule and the --missing policy of `options`.
io::LabelledRows read_rows_with_progress(const std::string& what, const InputOptions& options,
                                         const io::LabelledColumns& columns);

// Reads unweighted labelled rows (one score column, no weight, no segment)
// with a progress line, counting them into per-score sums on a second thread
// while the next block is parsed: `sums` gets score, count, negative and
// positive exactly as tally_scores on the rows gives them (counts, so the
// blocks and the threads leave no trace). The returned rows hold every
// total, name, range and the hash, but no per-row vectors, unless
// `keep_rows`: then they hold the score and label of every row as well
// (copied on the reading thread as each block is handed over).
io::LabelledRows read_and_tally_with_progress(const std::string& what, const InputOptions& options,
                                              const io::LabelledColumns& columns, Tally& sums,
                                              bool keep_rows = false);

// The provenance of an artifact fitted on `rows` (the first score column).
Provenance provenance_of(const io::LabelledRows& rows, const InputOptions& options, bool no_timestamp);

// The multi-class input options (fit, cross-fit and apply read K score
// columns when --scores is given).
struct ClassOptions {
  std::vector<std::string> scores;   // --scores: columns, or one pattern with '*'
  std::vector<std::string> classes;  // --classes: the class order
  double sum_tolerance = io::default_sum_tolerance;
};
// --scores, --classes and --sum-tolerance.
void add_class_options(CLI::App& command, ClassOptions& options);
// The reader's columns for labelled K-class rows under `input`'s label,
// weight, --missing and --scale (probability or logit; margin is refused,
// Error(usage)).
io::ClassColumns class_columns(const InputOptions& input, const ClassOptions& options);
ClassScale parse_class_scale_option(const std::string& text);

// A count with thousands separators ("20,000"): the formatting layer's
// count_text (plumb/number_text.hpp), under the name the commands use.
std::string grouped(std::uint64_t n);

// A floating value printed with the shortest text that reads back to the
// same double: the formatting layer's shortest_text.
std::string shortest(double value);

// A value in `digits` significant digits ("%.*g"), for figures shown to a
// reader (base rates, odds factors); the artifact keeps every digit.
std::string significant(double value, int digits);

// The artifact's odds steps in a few words, for summaries and cautions:
// "x 2.09095 (prior shift, base rate 0.1701 -> 0.3)". Precondition: at
// least one step.
std::string odds_steps_text(const Artifact& artifact);

// Gates, as plumb report and plumb drift take them (--max / --min).
std::string_view bound_option(GateBound bound);
// The metrics of `metrics` that `bound` may read, comma-separated, for messages.
std::string gate_names(GateBound bound, std::span<const GateMetric> metrics);
// --max or --min TEXT: METRIC=VALUE, or COLUMN:METRIC=VALUE when `columns`;
// `find` looks a name up (older spellings included). Throws Error(usage)
// naming the option, the text and the accepted names.
Gate parse_gate(const std::string& text, GateBound bound, std::span<const GateMetric> metrics,
                const GateMetric* (*find)(std::string_view), bool columns);
// The failed gates as one line for stderr: "COMMAND: 1 of 2 gates failed: ...",
// each gate preceded by its column when `with_column`.
std::string failed_gates_line(const std::string& command, const std::vector<GateResult>& results, bool with_column);

// --history FILE, --history-date DATE and --torn-history POLICY of report
// and drift: adds the three options, checks them before any work (a date
// or policy without --history is refused) and reads the history once so a
// torn or foreign line is refused at once; nullopt without --history.
struct HistoryOptions {
  std::string path;
  std::string date;              // YYYY-MM-DD, default: today, UTC
  std::string torn = "refuse";  // refuse or cut
};
void add_history_options(CLI::App& cmd, HistoryOptions& h);
std::optional<io::History> read_history_option(const HistoryOptions& h);
io::TornHistory torn_policy(const HistoryOptions& h);
// Appends `entry` (a JSON object with "command") with the date, time and
// tool set, says on stderr when a torn last line was cut off, and returns
// the history as read under the lock, the new line last.
io::History append_history_option(const HistoryOptions& h, nlohmann::json entry, const char* command);

// The provenance of a multi-class map fitted on `rows`: source, hash, rows,
// each class's weight, columns, skipped rows (with --missing skip), tool and
// creation time (empty with --no-timestamp).
ClassProvenance class_provenance(const io::ClassRows& rows, io::MissingPolicy missing, bool no_timestamp);

}  // namespace plumb::cli
