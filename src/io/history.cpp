// The history file (include/plumb/io/history.hpp, docs/history-format.md):
// locked, whole-line appends and a checked read of every line.
#include "plumb/io/history.hpp"

#include <fcntl.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <cmath>
#include <cstring>
#include <limits>
#include <map>
#include <set>
#include <string_view>

#include "plumb/error.hpp"

namespace plumb::io {
namespace {

constexpr std::string_view kCutHint = "--torn-history cut to leave the torn last line out (and cut it off on append)";

// The offending text in a message: the start of a line, never the whole of a long one.
std::string excerpt(std::string_view line) {
  constexpr std::size_t kMax = 60;
  if (line.size() <= kMax) return std::string(line);
  return std::string(line.substr(0, kMax)) + "...";
}

Location at(const std::string& path, std::uint64_t line, std::uint64_t column = 0) {
  Location loc;
  loc.file = path;
  loc.line = line;
  loc.column = column;
  return loc;
}

// Closes a descriptor (and so drops its lock) on every path out.
struct Fd {
  int fd = -1;
  ~Fd() {
    if (fd >= 0) ::close(fd);
  }
};

std::string errno_text(int e) { return std::strerror(e); }

// The whole file through `fd`, from offset 0.
std::string read_all(int fd, const std::string& path) {
  std::string bytes;
  char buf[1 << 16];
  off_t offset = 0;
  for (;;) {
    const ssize_t n = ::pread(fd, buf, sizeof buf, offset);
    if (n < 0) {
      if (errno == EINTR) continue;
      throw Error(ErrorKind::io, "cannot read the history file (" + errno_text(errno) + ")", at(path, 0), path,
                  "a readable file");
    }
    if (n == 0) break;
    bytes.append(buf, static_cast<std::size_t>(n));
    offset += n;
  }
  return bytes;
}

// One line checked; throws Error(input) at path:line for a bad one.
nlohmann::json check_line(std::string_view text, const std::string& path, std::uint64_t line_no, bool last,
                          bool torn_policy_applies) {
  const std::string hint = torn_policy_applies ? ", or " + std::string(kCutHint) : std::string();
  nlohmann::json j;
  try {
    j = nlohmann::json::parse(text.begin(), text.end());
  } catch (const nlohmann::json::parse_error& e) {
    // nlohmann counts the byte at which it stopped; that is the column within the line.
    throw Error(ErrorKind::input,
                std::string(last ? "the last history line is not valid JSON (a run killed while writing it?)"
                                 : "a history line is not valid JSON"),
                at(path, line_no, e.byte), excerpt(text),
                "one JSON object per line as plumb writes it (docs/history-format.md)" + hint);
  }
  if (!j.is_object())
    throw Error(ErrorKind::input, "a history line is not a JSON object", at(path, line_no, 1), excerpt(text),
                "one JSON object per line (docs/history-format.md)");
  const auto format = j.find("format");
  if (format == j.end() || !format->is_string() || format->get<std::string>() != history_format_marker)
    throw Error(ErrorKind::input, "a line that is not a plumb history line", at(path, line_no, 1), excerpt(text),
                std::string("\"format\": \"") + history_format_marker + "\" on every line (docs/history-format.md)");
  const auto version = j.find("version");
  if (version == j.end() || !version->is_number_integer() || version->get<std::int64_t>() != history_format_version) {
    const std::string got = version == j.end() ? "no version" : "version " + version->dump();
    const bool newer =
        version != j.end() && version->is_number_integer() && version->get<std::int64_t>() > history_format_version;
    throw Error(ErrorKind::input,
                std::string("a history line of another format version") + (newer ? " (written by a newer plumb)" : ""),
                at(path, line_no, 1), got,
                "history format version " + std::to_string(history_format_version) +
                    ", which this plumb reads; start a new history file, or read it with the plumb that wrote it");
  }
  const auto command = j.find("command");
  const auto date = j.find("date");
  if (command == j.end() || !command->is_string() || date == j.end() || !date->is_string() ||
      !is_history_date(date->get<std::string>()))
    throw Error(ErrorKind::input, "a history line without its command or date", at(path, line_no, 1), excerpt(text),
                "a string \"command\" and a \"date\" YYYY-MM-DD on every line (docs/history-format.md)");
  return j;
}

// Every line of `bytes` checked. A torn last line (no final newline, or a
// line that does not pass) is refused or, with cut, left out and reported
// in `out.cut_line`; `whole_end` receives the length of the bytes up to the
// end of the last good line.
History parse_history(const std::string& bytes, const std::string& path, TornHistory torn, std::size_t* whole_end) {
  History out;
  out.path = path;
  std::size_t pos = 0;
  std::uint64_t line_no = 0;
  if (whole_end) *whole_end = 0;
  while (pos < bytes.size()) {
    ++line_no;
    const std::size_t nl = bytes.find('\n', pos);
    const bool has_newline = nl != std::string::npos;
    const std::size_t end = has_newline ? nl : bytes.size();
    const std::string_view text(bytes.data() + pos, end - pos);
    const bool last = !has_newline || nl + 1 == bytes.size();
    if (!has_newline) {
      if (torn == TornHistory::cut) {
        out.cut_line = line_no;
        out.cut_bytes = end - pos;
        return out;
      }
      throw Error(ErrorKind::input, "the last history line has no final newline (a run killed while writing it?)",
                  at(path, line_no, text.size() + 1), excerpt(text),
                  "whole lines, each ended by a newline; " + std::string(kCutHint));
    }
    // Only a last line that is not JSON at all is torn: a whole line of
    // another format or version is refused whatever the policy.
    if (last && torn == TornHistory::cut && !nlohmann::json::accept(text.begin(), text.end())) {
      out.cut_line = line_no;
      out.cut_bytes = end + 1 - pos;
      return out;
    }
    out.lines.push_back({line_no, check_line(text, path, line_no, last, last)});
    pos = end + 1;
    if (whole_end) *whole_end = pos;
  }
  return out;
}

// The number value of a figure in a history object, NaN for null or absent.
double number_or_nan(const nlohmann::json& j, const char* key) {
  const auto it = j.find(key);
  if (it == j.end() || !it->is_number()) return std::numeric_limits<double>::quiet_NaN();
  return it->get<double>();
}

nlohmann::json number_or_null(double x) { return std::isfinite(x) ? nlohmann::json(x) : nlohmann::json(nullptr); }

}  // namespace

bool is_history_date(const std::string& t) {
  if (t.size() != 10 || t[4] != '-' || t[7] != '-') return false;
  for (std::size_t i : {0, 1, 2, 3, 5, 6, 8, 9})
    if (t[i] < '0' || t[i] > '9') return false;
  const int y = std::stoi(t.substr(0, 4)), m = std::stoi(t.substr(5, 2)), d = std::stoi(t.substr(8, 2));
  if (m < 1 || m > 12 || d < 1) return false;
  static constexpr int days[] = {31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
  const bool leap = (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
  return d <= days[m - 1] + (m == 2 && leap ? 1 : 0);
}

History read_history(const std::string& path, TornHistory torn) {
  Fd f;
  f.fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (f.fd < 0) {
    if (errno == ENOENT) {
      History empty;
      empty.path = path;
      return empty;
    }
    throw Error(ErrorKind::io, "cannot open the history file (" + errno_text(errno) + ")", at(path, 0), path,
                "a readable file, or a path where one can be created");
  }
  // A shared lock: a reader never sees half of a line another run is writing.
  while (::flock(f.fd, LOCK_SH) != 0)
    if (errno != EINTR)
      throw Error(ErrorKind::io, "cannot lock the history file (" + errno_text(errno) + ")", at(path, 0), path,
                  "a file system that supports flock");
  return parse_history(read_all(f.fd, path), path, torn, nullptr);
}

History append_history(const std::string& path, nlohmann::json entry, TornHistory torn) {
  if (!entry.is_object()) throw Error(ErrorKind::internal, "append_history: the entry is not a JSON object");
  nlohmann::json line = nlohmann::json::object();
  line["format"] = history_format_marker;
  line["version"] = history_format_version;
  for (auto it = entry.begin(); it != entry.end(); ++it)
    if (it.key() != "format" && it.key() != "version") line[it.key()] = it.value();
  const auto command = line.find("command");
  const auto date = line.find("date");
  if (command == line.end() || !command->is_string() || date == line.end() || !date->is_string() ||
      !is_history_date(date->get<std::string>()))
    throw Error(ErrorKind::internal, "append_history: the entry lacks a string command or a date YYYY-MM-DD");
  // dump() escapes control characters, so the text holds no newline of its
  // own. The format and version go first, where a reader's eye looks; the
  // other keys follow in nlohmann's (sorted) order.
  nlohmann::json rest = line;
  rest.erase("format");
  rest.erase("version");
  std::string text = std::string("{\"format\":\"") + history_format_marker +
                     "\",\"version\":" + std::to_string(history_format_version);
  const std::string body = rest.dump(-1, ' ', false, nlohmann::json::error_handler_t::replace);
  if (body.size() > 2)
    text += "," + body.substr(1);
  else
    text += "}";
  text += "\n";

  Fd f;
  f.fd = ::open(path.c_str(), O_RDWR | O_APPEND | O_CREAT | O_CLOEXEC, 0644);
  if (f.fd < 0)
    throw Error(ErrorKind::io, "cannot open the history file for appending (" + errno_text(errno) + ")", at(path, 0),
                path, "a writable file, or a path in a writable directory");
  while (::flock(f.fd, LOCK_EX) != 0)
    if (errno != EINTR)
      throw Error(ErrorKind::io, "cannot lock the history file (" + errno_text(errno) + ")", at(path, 0), path,
                  "a file system that supports flock");
  const std::string bytes = read_all(f.fd, path);
  std::size_t whole_end = 0;
  History history = parse_history(bytes, path, torn, &whole_end);
  off_t size = static_cast<off_t>(bytes.size());
  if (history.cut_line) {
    if (::ftruncate(f.fd, static_cast<off_t>(whole_end)) != 0)
      throw Error(ErrorKind::io, "cannot cut the torn last line off the history file (" + errno_text(errno) + ")",
                  at(path, *history.cut_line), path, "a writable file");
    size = static_cast<off_t>(whole_end);
  }
  // One write of the whole line. A short write (a full disk) is undone, so
  // no run leaves a torn line behind it while it can still help it.
  const ssize_t n = ::write(f.fd, text.data(), text.size());
  if (n != static_cast<ssize_t>(text.size())) {
    const int e = n < 0 ? errno : ENOSPC;
    if (::ftruncate(f.fd, size) != 0) { /* the next reader finds the torn line and refuses it */
    }
    throw Error(ErrorKind::io, "cannot append to the history file (" + errno_text(e) + ")", at(path, 0), path,
                "a writable file on a file system with room");
  }
  if (::fsync(f.fd) != 0)
    throw Error(ErrorKind::io, "cannot sync the history file (" + errno_text(errno) + ")", at(path, 0), path,
                "a writable file");
  std::uint64_t line_no = history.lines.empty() ? 0 : history.lines.back().line;
  if (history.cut_line) line_no = *history.cut_line - 1;
  history.lines.push_back({line_no + 1, std::move(line)});
  return history;
}

// ---------------------------------------------------------------------------
// The report's line and its trend

nlohmann::json report_history_entry(const Report& report, const HistoryRun& run) {
  nlohmann::json j = nlohmann::json::object();
  j["command"] = "report";
  j["date"] = run.date;
  j["time"] = run.time_utc;
  j["tool"] = run.tool;
  nlohmann::json input = nlohmann::json::object();
  input["source"] = report.source;
  input["sha256"] = run.input_sha256.empty() ? nlohmann::json(nullptr) : nlohmann::json(run.input_sha256);
  input["rows"] = report.scores.empty() ? 0 : report.scores[0].overall.rows;
  input["label"] = report.label_column;
  input["weight"] = report.weight_column.empty() ? nlohmann::json(nullptr) : nlohmann::json(report.weight_column);
  j["input"] = std::move(input);
  nlohmann::json settings = nlohmann::json::object();
  settings["bins"] = report.options.bins;
  settings["binning"] = report.options.binning == BinningKind::equal_mass ? "equal_mass" : "equal_width";
  settings["bootstrap"] = report.options.bootstrap;
  settings["confidence"] = report.options.confidence;
  settings["seed"] = report.options.seed;
  j["settings"] = std::move(settings);

  nlohmann::json columns = nlohmann::json::array();
  for (const ScoreReport& sr : report.scores) {
    const ScoreSummary& s = sr.overall;
    nlohmann::json c = nlohmann::json::object();
    c["name"] = s.name;
    if (sr.map) {
      nlohmann::json m = nlohmann::json::object();
      m["file"] = sr.map->file;
      m["kind"] = sr.map->kind;
      m["column"] = sr.map->column;
      m["integrity"] = sr.map->integrity;
      m["created"] = sr.map->created_utc.empty() ? nlohmann::json(nullptr) : nlohmann::json(sr.map->created_utc);
      c["map"] = std::move(m);
    } else {
      c["map"] = nullptr;
    }
    c["rows"] = s.rows;
    c["weight"] = s.weight;
    c["observed_rate"] = number_or_null(s.observed_rate);
    c["mean_forecast"] = number_or_null(s.mean_forecast);
    // The bootstrap's intervals: the ECE's is that of the report's binning.
    std::map<std::string, const BootstrapInterval*> intervals;
    if (s.bootstrap) {
      intervals[report.options.binning == BinningKind::equal_mass ? "ece_mass" : "ece"] = &s.bootstrap->ece;
      intervals["l2_debiased"] = &s.bootstrap->l2_debiased;
      intervals["brier"] = &s.bootstrap->brier;
      intervals["mcb"] = &s.bootstrap->mcb_brier;
      intervals["auc"] = &s.bootstrap->auc;
    }
    nlohmann::json figures = nlohmann::json::object();
    for (const GateMetric& g : gate_metrics()) {
      nlohmann::json f = nlohmann::json::object();
      f["value"] = number_or_null(gate_value(s, g.name));
      const auto it = intervals.find(std::string(g.name));
      if (it != intervals.end() && it->second->used > 0) {
        f["low"] = number_or_null(it->second->lo);
        f["high"] = number_or_null(it->second->hi);
      } else {
        f["low"] = nullptr;
        f["high"] = nullptr;
      }
      figures[std::string(g.name)] = std::move(f);
    }
    c["figures"] = std::move(figures);
    columns.push_back(std::move(c));
  }
  j["columns"] = std::move(columns);

  nlohmann::json gates = nlohmann::json::array();
  for (const GateResult& g : report.gates) {
    nlohmann::json o = nlohmann::json::object();
    o["column"] = g.column;
    o["metric"] = g.gate.metric;
    o["bound"] = g.gate.bound == GateBound::max ? "max" : "min";
    o["limit"] = g.gate.limit;
    o["value"] = number_or_null(g.value);
    o["passed"] = !g.exceeded;
    gates.push_back(std::move(o));
  }
  j["gates"] = std::move(gates);
  return j;
}

std::vector<TrendSeries> trend_of_history(const History& history, const Report& tonight) {
  bool any_map = false;
  for (const ScoreReport& sr : tonight.scores) any_map = any_map || sr.map.has_value();
  const std::string ece = tonight.options.binning == BinningKind::equal_mass ? "ece_mass" : "ece";
  std::vector<TrendSeries> out;
  for (const ScoreReport& sr : tonight.scores) {
    if (any_map && !sr.map) continue;
    const std::string& column = sr.overall.name;
    std::vector<std::string> figures = {ece, "mcb", "brier", "auc"};
    for (const GateResult& g : tonight.gates) {
      if (g.column != column) continue;
      const GateMetric* m = find_gate_metric(g.gate.metric);
      const std::string name = m ? std::string(m->name) : g.gate.metric;
      bool known = false;
      for (const std::string& f : figures) known = known || f == name;
      if (!known) figures.push_back(name);
    }
    for (const std::string& figure : figures) {
      TrendSeries series;
      series.column = column;
      series.figure = figure;
      std::vector<std::string> identities;  // of each point's map, for the refits
      for (const HistoryLine& hl : history.lines) {
        const nlohmann::json& e = hl.entry;
        if (e.value("command", "") != "report") continue;
        const auto cols = e.find("columns");
        if (cols == e.end() || !cols->is_array()) continue;
        for (const nlohmann::json& c : *cols) {
          if (!c.is_object() || c.value("name", "") != column) continue;
          const auto figs = c.find("figures");
          if (figs == c.end() || !figs->is_object()) break;
          const auto f = figs->find(figure);
          if (f == figs->end() || !f->is_object()) break;
          TrendPoint p;
          p.date = e["date"].get<std::string>();
          p.value = number_or_nan(*f, "value");
          p.lo = number_or_nan(*f, "low");
          p.hi = number_or_nan(*f, "high");
          std::string identity;
          const auto m = c.find("map");
          if (m != c.end() && m->is_object()) identity = m->value("integrity", "");
          identities.push_back(std::move(identity));
          series.points.push_back(std::move(p));
          break;
        }
      }
      // Nights in date order (a backfilled night takes its place); runs of
      // one date stay in the order they appended.
      std::vector<std::size_t> order(series.points.size());
      for (std::size_t i = 0; i < order.size(); ++i) order[i] = i;
      std::stable_sort(order.begin(), order.end(),
                       [&](std::size_t a, std::size_t b) { return series.points[a].date < series.points[b].date; });
      std::vector<TrendPoint> sorted;
      for (std::size_t k = 0; k < order.size(); ++k) {
        sorted.push_back(series.points[order[k]]);
        sorted.back().refit = k > 0 && identities[order[k]] != identities[order[k - 1]];
      }
      series.points = std::move(sorted);
      for (const GateResult& g : tonight.gates) {
        const GateMetric* m = find_gate_metric(g.gate.metric);
        // Older spellings that read another quantity (citl, slope_gap) have no line on this chart.
        if (g.column == column && m && m->name == figure && g.gate.metric == figure) series.gates.push_back(g.gate);
      }
      if (!series.points.empty()) out.push_back(std::move(series));
    }
  }
  return out;
}

}  // namespace plumb::io
