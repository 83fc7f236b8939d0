#include "cli/common.hpp"

#include <unistd.h>

#include <algorithm>
#include <charconv>
#include <condition_variable>
#include <deque>
#include <exception>
#include <mutex>
#include <thread>
#include <cstdio>

#include "plumb/error.hpp"
#include "plumb/version.hpp"

namespace plumb::cli {

void add_separator_option(CLI::App& command, std::string& separator) {
  command.add_option("--sep", separator,
                     "Field separator: auto (tab for .tsv/.tab files, else the one of comma, tab and "
                     "semicolon the header holds), comma, tab, semicolon, or one character")
      ->default_str("auto");
}

void add_quiet_option(CLI::App& command, bool& quiet) {
  command.add_flag("-q,--quiet", quiet, "No progress and no summary on stderr (errors are still reported)");
}

void add_input_options(CLI::App& command, InputOptions& o, bool with_label) {
  command.add_option("file", o.file, "CSV or TSV file with a header row, plain or gzip; - or nothing reads standard input")
      ->default_str("-");
  command.add_option("--score", o.score, "Column holding the raw score (name or 1-based index)")->required();
  if (with_label) {
    command.add_option("--label", o.label, "Column holding the observed outcome (name or 1-based index)")
        ->required();
    command.add_option("--weight", o.weight, "Column of non-negative row weights (default: every row weighs 1)");
    add_label_value_options(command, o);
    add_missing_option(command, o.missing, false);
  }
  command
      .add_option("--scale", o.scale,
                  "What the score is: probability (in [0, 1]), logit (log-odds) or margin (any real, "
                  "no probabilistic reading)")
      ->check(CLI::IsMember({"probability", "logit", "margin"}))
      ->default_str("probability");
  add_separator_option(command, o.separator);
  add_quiet_option(command, o.quiet);
}

void add_class_options(CLI::App& command, ClassOptions& o) {
  command
      .add_option("--scores", o.scores,
                  "K score columns of a multi-class model, one per class: a list (name or 1-based index, comma "
                  "separated) naming each class by its header, or one pattern with * (p_*) naming each class by what "
                  "* stands for; the label column then holds class names")
      ->delimiter(',')
      ->option_text("COLS");
  command
      .add_option("--classes", o.classes,
                  "The class order, comma separated: every class of --scores once (default: the order of the score "
                  "columns)")
      ->delimiter(',')
      ->option_text("NAMES");
  command
      .add_option("--sum-tolerance", o.sum_tolerance,
                  "With --scores on the probability scale: the widest gap between a row's sum and 1 accepted")
      ->check(CLI::Range(0.0, 1.0))
      ->default_str("0.001");
}

ClassScale parse_class_scale_option(const std::string& text) {
  if (text == "logit") return ClassScale::logit;
  if (text == "probability") return ClassScale::probability;
  throw Error(ErrorKind::usage, "--scale " + text + " does not apply to --scores", {}, text,
              "probability (each row sums to 1) or logit (a row of K logits)");
}

io::ClassColumns class_columns(const InputOptions& input, const ClassOptions& o) {
  io::ClassColumns c;
  c.scores = o.scores;
  c.scale = parse_class_scale_option(input.scale);
  c.label = input.label;
  c.classes = o.classes;
  c.weight = input.weight;
  c.missing = parse_missing(input.missing);
  c.sum_tolerance = o.sum_tolerance;
  return c;
}

void add_label_value_options(CLI::App& command, InputOptions& o) {
  command
      .add_option("--positive", o.positive,
                  "Label value that counts as the positive outcome; alone, every other value is negative "
                  "(default: labels must be 1/0, 1.0/0.0 or true/false)")
      ->each([&o](const std::string&) { o.positive_given = true; });
  command
      .add_option("--negative", o.negative,
                  "Label value that counts as the negative outcome; alone, every other value is positive; "
                  "with --positive, any third value is refused")
      ->each([&o](const std::string&) { o.negative_given = true; });
}

void add_missing_option(CLI::App& command, std::string& missing, bool with_empty) {
  const std::string about =
      "A missing score or label (empty, NA, NaN, null, n/a, None): refuse (stop with its location) or skip "
      "(leave the row out and count it)";
  command
      .add_option("--missing", missing,
                  with_empty ? "A missing score (empty, NA, NaN, null, n/a, None): refuse (stop with its location), "
                               "skip (leave the row out of the output and count it) or empty (write the row with "
                               "an empty probability)"
                             : about)
      ->check(CLI::Validator(
          [with_empty](std::string& value) -> std::string {
            // "stop" is apply's earlier spelling of refuse, kept working but not shown.
            if (value == "refuse" || value == "skip" || (with_empty && (value == "empty" || value == "stop")))
              return {};
            return "--missing is " + std::string(with_empty ? "refuse, skip or empty" : "refuse or skip") +
                   ", not '" + value + "'";
          },
          with_empty ? "{refuse,skip,empty}" : "{refuse,skip}"))
      ->default_str("refuse");
}

io::MissingPolicy parse_missing(const std::string& text) {
  if (text == "skip") return io::MissingPolicy::skip;
  if (text == "empty") return io::MissingPolicy::empty;
  return io::MissingPolicy::refuse;  // refuse, or apply's old spelling "stop"
}

std::string skipped_note(const InputOptions& o, std::uint64_t skipped) {
  if (parse_missing(o.missing) != io::MissingPolicy::skip) return {};
  return "; " + grouped(skipped) + (skipped == 1 ? " row" : " rows") + " with a missing score or label left out";
}

namespace {

// "a, b or c".
std::string or_list(std::span<const std::string_view> words) {
  std::string out;
  for (std::size_t i = 0; i < words.size(); ++i)
    out += (i == 0 ? "" : i + 1 == words.size() ? " or " : ", ") + std::string(words[i]);
  return out;
}

}  // namespace

MapOptions MapChoices::map_options() const {
  MapOptions m = given;
  for (const Older& o : older) {
    if (o.text.empty()) continue;
    const std::string name = "--" + std::string(o.option->name);
    if (o.current != nullptr && o.current->count() > 0)
      throw Error(ErrorKind::usage, name + " given twice", {}, o.text, "it once");
    if (std::find(o.option->choices.begin(), o.option->choices.end(), o.text) == o.option->choices.end())
      throw Error(ErrorKind::usage, "unknown " + name, {}, o.text, or_list(o.option->choices));
    o.option->set(m, o.text, 0);
  }
  return m;
}

nlohmann::json MapChoices::recorded(std::string_view kind) const {
  const MapKind* k = find_map_kind(kind);
  return k == nullptr ? nlohmann::json::object() : recorded_options(*k, map_options());
}

void add_map_options(CLI::App& command, MapChoices& c) {
  for (const MapKind& kind : map_registry()) {
    if (!kind.fittable) continue;
    for (const MapOption& option : kind.options) {
      const std::string name = "--" + std::string(option.name);
      CLI::Option* added = nullptr;
      if (option.choices.empty()) {
        added = command.add_option_function<int>(
                           name, [&c, &option](const int& count) { option.set(c.given, {}, count); },
                           std::string(option.help))
                    ->check(CLI::Range(option.min, option.max));
      } else {
        const std::vector<std::string> choices(option.choices.begin(), option.choices.end());
        added = command.add_option_function<std::string>(
                           name, [&c, &option](const std::string& text) { option.set(c.given, text, 0); },
                           std::string(option.help))
                    ->check(CLI::IsMember(choices));
        if (!option.value_word.empty()) added->option_text(std::string(option.value_word));
      }
      added->default_str(std::string(option.default_text));
      // The older spelling is still taken but not shown in help.
      if (!option.older_spelling.empty()) {
        c.older.push_back({&option, added, {}});
        command.add_option("--" + std::string(option.older_spelling), c.older.back().text)->group("");
      }
    }
  }
}

char parse_separator(const std::string& text) {
  if (text == "auto") return 0;
  if (text == "comma" || text == ",") return ',';
  if (text == "tab" || text == "\\t" || text == "\t") return '\t';
  if (text == "semicolon" || text == ";") return ';';
  if (text.size() == 1 && text[0] != '"' && text[0] != '\n' && text[0] != '\r') return text[0];
  throw Error(ErrorKind::usage, "unknown --sep", {}, text, "auto, comma, tab, semicolon or one character other than a quote");
}

Scale parse_scale_option(const std::string& text) {
  const auto scale = parse_scale(text);
  if (!scale) throw Error(ErrorKind::usage, "unknown --scale", {}, text, "probability, logit or margin");
  return *scale;
}

std::string scale_option_hint() { return "for log-odds or margins, give --scale logit or --scale margin"; }

io::LabelRule label_rule(const InputOptions& o) {
  if (o.positive_given && o.negative_given && o.positive == o.negative)
    throw Error(ErrorKind::usage, "--positive and --negative name the same value", {}, o.positive,
                "two different label values");
  return io::LabelRule(o.positive_given ? std::optional<std::string>(o.positive) : std::nullopt,
                       o.negative_given ? std::optional<std::string>(o.negative) : std::nullopt);
}

Progress::Progress(std::string what, bool quiet) : what_(std::move(what)) {
  active_ = !quiet && ::isatty(STDERR_FILENO) == 1;
  start_ = last_ = std::chrono::steady_clock::now();
}

Progress::~Progress() {
  if (drawn_) std::fputs("\r\033[K", stderr);
}

void Progress::update(std::uint64_t rows, std::uint64_t bytes, std::optional<std::uint64_t> total) {
  if (!active_) return;
  const auto now = std::chrono::steady_clock::now();
  if (now - last_ < std::chrono::milliseconds(250)) return;
  last_ = now;
  const double seconds = std::chrono::duration<double>(now - start_).count();
  const double rate = seconds > 0 ? static_cast<double>(rows) / seconds : 0.0;
  char line[160];
  int n = std::snprintf(line, sizeof line, "\r\033[K%s: %s rows, %.1f MB, %.2f M rows/s", what_.c_str(),
                        grouped(rows).c_str(), static_cast<double>(bytes) / 1e6, rate / 1e6);
  if (total && *total > 0 && bytes > 0 && n > 0 && n < static_cast<int>(sizeof line)) {
    const double fraction = std::min(1.0, static_cast<double>(bytes) / static_cast<double>(*total));
    const double eta = fraction > 0 ? seconds * (1.0 - fraction) / fraction : 0.0;
    std::snprintf(line + n, sizeof line - static_cast<std::size_t>(n), ", %.0f%%, about %.0f s left",
                  100.0 * fraction, eta);
  }
  std::fputs(line, stderr);
  std::fflush(stderr);
  drawn_ = true;
}

void Progress::finish() {
  if (drawn_) std::fputs("\r\033[K", stderr);
  drawn_ = false;
}

std::string map_score_column(const Artifact& artifact, const std::string& given) {
  return given.empty() ? artifact.score_column : given;
}

namespace {
// `columns` under the --missing policy of `o`: every labelled read takes it.
io::LabelledColumns with_missing_policy(io::LabelledColumns columns, const InputOptions& o) {
  columns.missing = parse_missing(o.missing);
  return columns;
}
}  // namespace

io::LabelledRows read_rows_with_progress(const std::string& what, const InputOptions& o,
                                         const io::LabelledColumns& columns) {
  Progress progress(what, o.quiet);
  io::LabelledRows rows = io::read_labelled(
      o.file, with_missing_policy(columns, o), label_rule(o), parse_separator(o.separator),
      [&progress](std::uint64_t r, std::uint64_t b, std::optional<std::uint64_t> t) { progress.update(r, b, t); });
  progress.finish();
  return rows;
}

io::LabelledRows read_and_tally_with_progress(const std::string& what, const InputOptions& o,
                                              const io::LabelledColumns& columns, Tally& sums, bool keep_rows) {
  // The reading thread parses; this worker counts the blocks it is handed.
  // A few blocks may wait between them, so memory stays a few blocks.
  struct Block {
    std::vector<double> score, label;
  };
  constexpr std::size_t max_waiting = 4;
  std::mutex mutex;
  std::condition_variable changed;
  std::deque<Block> waiting;
  bool done = false, failed = false;
  std::exception_ptr failure;
  UnweightedTallyBuilder builder;
  std::thread counter([&] {
    try {
      for (;;) {
        Block b;
        {
          std::unique_lock lock(mutex);
          changed.wait(lock, [&] { return !waiting.empty() || done; });
          if (waiting.empty()) return;
          b = std::move(waiting.front());
          waiting.pop_front();
        }
        changed.notify_all();
        builder.add(b.score, b.label);
      }
    } catch (...) {
      std::lock_guard lock(mutex);
      failure = std::current_exception();
      failed = true;
      waiting.clear();
      changed.notify_all();
    }
  });
  auto stop = [&] {
    {
      std::lock_guard lock(mutex);
      done = true;
    }
    changed.notify_all();
    counter.join();
  };
  io::LabelledRows rows;
  std::vector<double> kept_score, kept_label;
  try {
    Progress progress(what, o.quiet);
    rows = io::read_labelled(
        o.file, with_missing_policy(columns, o), label_rule(o), parse_separator(o.separator),
        [&progress](std::uint64_t r, std::uint64_t b, std::optional<std::uint64_t> t) { progress.update(r, b, t); },
        [&](std::span<const double> score, std::span<const double> label) {
          if (keep_rows) {
            kept_score.insert(kept_score.end(), score.begin(), score.end());
            kept_label.insert(kept_label.end(), label.begin(), label.end());
          }
          Block b{{score.begin(), score.end()}, {label.begin(), label.end()}};
          std::unique_lock lock(mutex);
          changed.wait(lock, [&] { return waiting.size() < max_waiting || failed; });
          if (failed) std::rethrow_exception(failure);  // ends the read
          waiting.push_back(std::move(b));
          lock.unlock();
          changed.notify_all();
        });
    progress.finish();
  } catch (...) {
    stop();
    throw;
  }
  stop();
  if (failure) std::rethrow_exception(failure);
  builder.finish(sums);
  if (keep_rows) {
    rows.scores.at(0) = std::move(kept_score);
    rows.label = std::move(kept_label);
  }
  return rows;
}

Provenance provenance_of(const io::LabelledRows& rows, const InputOptions& o, bool no_timestamp) {
  Provenance p;
  p.source = rows.source;
  p.source_sha256 = rows.source_sha256;
  p.rows = rows.rows;
  p.positives = rows.positives;
  p.weight_total = rows.weight_total;
  p.label_column = rows.label_column;
  p.weight_column = rows.weight_column;
  p.positive_rule = label_rule(o).describe();
  if (parse_missing(o.missing) == io::MissingPolicy::skip) p.rows_skipped = rows.skipped;
  p.score_min = rows.score_min;
  p.score_max = rows.score_max;
  p.tool = std::string("plumb ") + version_string;
  p.created_utc = no_timestamp ? std::string() : utc_now();
  return p;
}

std::string grouped(std::uint64_t n) { return count_text(n); }

std::string shortest(double value) { return shortest_text(value); }

std::string significant(double value, int digits) {
  char text[48];
  std::snprintf(text, sizeof text, "%.*g", digits, value);
  return text;
}

std::string odds_steps_text(const Artifact& artifact) {
  double factor = 1.0;
  std::string steps;
  for (const OddsStep& s : artifact.odds_steps) {
    factor *= s.factor;
    steps += steps.empty() ? "" : "; ";
    steps += s.reason == OddsStep::Reason::negative_sampling
                 ? "negatives kept at rate " + shortest(s.negative_rate) + " in the fit rows"
                 : "prior shift, base rate " + significant(s.base_rate_from, 4) + " -> " +
                       significant(s.base_rate_to, 4) + (s.estimate.is_null() ? "" : " estimated by EM");
  }
  return "x " + significant(factor, 6) + " (" + steps + ")";
}

std::string_view bound_option(GateBound bound) { return bound == GateBound::max ? "--max" : "--min"; }

std::string gate_names(GateBound bound, std::span<const GateMetric> metrics) {
  std::string names;
  for (const GateMetric& m : metrics)
    if (bound == GateBound::max ? m.max : m.min) names += (names.empty() ? "" : ", ") + std::string(m.name);
  return names;
}

Gate parse_gate(const std::string& text, GateBound bound, std::span<const GateMetric> metrics,
                const GateMetric* (*find)(std::string_view), bool columns) {
  const std::string option(bound_option(bound));
  const auto eq = text.find('=');
  const std::string expected = std::string(columns ? "METRIC=VALUE or COLUMN:METRIC=VALUE" : "METRIC=VALUE") +
                               ", METRIC one of " + gate_names(bound, metrics);
  if (eq == std::string::npos) throw Error(ErrorKind::usage, option + " needs a value", {}, text, expected);
  Gate g;
  g.bound = bound;
  std::string lhs = text.substr(0, eq);
  const auto colon = lhs.rfind(':');
  if (colon != std::string::npos && !columns)
    throw Error(ErrorKind::usage, option + " takes no column before ':' here", {}, text, expected);
  if (colon != std::string::npos) {
    g.column = lhs.substr(0, colon);
    lhs = lhs.substr(colon + 1);
    if (g.column.empty())
      throw Error(ErrorKind::usage, option + " has an empty column before ':'", {}, text, expected);
  }
  const GateMetric* metric = find(lhs);
  if (metric == nullptr) throw Error(ErrorKind::usage, option + " names an unknown metric", {}, lhs, expected);
  if (!(bound == GateBound::max ? metric->max : metric->min)) {
    const std::string other(bound_option(bound == GateBound::max ? GateBound::min : GateBound::max));
    throw Error(ErrorKind::usage,
                option + " cannot bound " + std::string(metric->name) + " (" + std::string(metric->reads) +
                    "): only " + other + " can",
                {}, text, other + " " + text + ", or " + option + " with one of " + gate_names(bound, metrics));
  }
  g.metric = metric->name;
  const std::string value = text.substr(eq + 1);
  char* end = nullptr;
  g.limit = std::strtod(value.c_str(), &end);
  if (value.empty() || *end != '\0' || !std::isfinite(g.limit))
    throw Error(ErrorKind::usage, option + " has a limit that is not a number", {}, value, expected);
  return g;
}

// The failed gates, for the one line on stderr.
std::string failed_gates_line(const std::string& command, const std::vector<GateResult>& results,
                              bool with_column) {
  std::size_t failed = 0;
  std::string detail;
  for (const GateResult& g : results) {
    if (!g.exceeded) continue;
    ++failed;
    // Six significant digits, as the reports' gate tables (plumb/number_text.hpp).
    const std::string value = significant_text(g.value, 6), limit = significant_text(g.gate.limit, 6);
    detail += (detail.empty() ? "" : "; ") + (with_column ? g.column + ": " : std::string()) + g.gate.metric;
    if (std::isfinite(g.value))
      detail += " = " + value + " " + std::string(gate_comparison(g)) + " " + limit;
    else
      detail += " could not be computed, which fails";
    detail += " (" + std::string(bound_option(g.gate.bound)) +
              (std::isfinite(g.value) ? ")" : " " + limit + ")");
  }
  return command + ": " + std::to_string(failed) + " of " + std::to_string(results.size()) +
         (results.size() == 1 ? " gate" : " gates") + " failed: " + detail;
}

void add_history_options(CLI::App& cmd, HistoryOptions& h) {
  cmd.add_option("--history", h.path,
                 "Append this run's figures as one line to a history file (JSON Lines; docs/history-format.md)")
      ->option_text("FILE");
  cmd.add_option("--history-date", h.date,
                 "The night this run stands for in the history, YYYY-MM-DD (default: today, UTC)")
      ->option_text("DATE");
  cmd.add_option("--torn-history", h.torn,
                 "A torn last line of the history (a run killed while writing): refuse, or cut it off and go on")
      ->check(CLI::IsMember({"refuse", "cut"}))
      ->default_str("refuse")
      ->option_text("POLICY");
}

io::TornHistory torn_policy(const HistoryOptions& h) {
  return h.torn == "cut" ? io::TornHistory::cut : io::TornHistory::refuse;
}

std::optional<io::History> read_history_option(const HistoryOptions& h) {
  if (h.path.empty() && (!h.date.empty() || h.torn != "refuse"))
    throw Error(ErrorKind::usage, std::string(h.date.empty() ? "--torn-history" : "--history-date") + " needs --history",
                {}, {}, "--history FILE.jsonl");
  if (!h.date.empty() && !io::is_history_date(h.date))
    throw Error(ErrorKind::usage, "--history-date is not a date", {}, h.date,
                "a date YYYY-MM-DD of the calendar, e.g. 2026-11-18");
  if (h.path.empty()) return std::nullopt;
  return io::read_history(h.path, torn_policy(h));
}

io::History append_history_option(const HistoryOptions& h, nlohmann::json entry, const char* command) {
  const std::string now = utc_now();
  if (!entry.contains("date")) entry["date"] = h.date.empty() ? now.substr(0, 10) : h.date;
  if (!entry.contains("time")) entry["time"] = now;
  if (!entry.contains("tool")) entry["tool"] = std::string("plumb ") + version_string;
  io::History after = io::append_history(h.path, std::move(entry), torn_policy(h));
  if (after.cut_line)
    std::fprintf(stderr, "plumb %s: cut off the torn last line %llu of %s (%s bytes; --torn-history cut)\n", command,
                 static_cast<unsigned long long>(*after.cut_line), after.path.c_str(),
                 count_text(after.cut_bytes).c_str());
  return after;
}

ClassProvenance class_provenance(const io::ClassRows& rows, io::MissingPolicy missing, bool no_timestamp) {
  ClassProvenance p;
  p.source = rows.source;
  p.source_sha256 = rows.source_sha256;
  p.rows = rows.data.rows;
  p.class_weights.assign(rows.data.k(), 0.0);
  for (std::size_t r = 0; r < rows.data.rows; ++r) {
    const double w = rows.data.weight.empty() ? 1.0 : rows.data.weight[r];
    p.class_weights[rows.data.label[r]] += w;
    p.weight_total += w;
  }
  p.label_column = rows.label_column;
  p.weight_column = rows.weight_column;
  if (missing == io::MissingPolicy::skip) p.rows_skipped = rows.skipped;
  p.tool = std::string("plumb ") + version_string;
  p.created_utc = no_timestamp ? std::string() : utc_now();
  return p;
}

}  // namespace plumb::cli
