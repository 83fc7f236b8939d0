// The history file (plumb/io/history.hpp): whole-line appends under a lock,
// the refusal of a torn last line, of a bad line before it and of another
// format version, each with its file:line; the --torn-history cut policy;
// concurrent appends from several processes; the trend read back from the
// lines, with refits marked where the map's identity changes.
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <catch2/catch.hpp>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>

#include "plumb/error.hpp"
#include "plumb/io/history.hpp"

namespace fs = std::filesystem;
using plumb::Error;
using plumb::ErrorKind;
using plumb::io::append_history;
using plumb::io::History;
using plumb::io::read_history;
using plumb::io::TornHistory;

namespace {

struct TempDir {
  fs::path path;
  TempDir() {
    std::string tmpl = (fs::temp_directory_path() / "plumb-history-XXXXXX").string();
    path = ::mkdtemp(tmpl.data());
  }
  ~TempDir() { fs::remove_all(path); }
};

std::string slurp(const fs::path& p) {
  std::ifstream in(p, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

void spill(const fs::path& p, const std::string& bytes) {
  std::ofstream out(p, std::ios::binary | std::ios::trunc);
  out << bytes;
}

nlohmann::json night(const std::string& date, double ece) {
  return {{"command", "report"},
          {"date", date},
          {"columns", {{{"name", "risk"}, {"figures", {{"ece", {{"value", ece}}}}}}}}};
}

// The error `f` throws, which must be a plumb::Error.
template <class F>
Error thrown(F f) {
  try {
    f();
  } catch (const Error& e) {
    return e;
  }
  FAIL("no plumb::Error was thrown");
  return Error(ErrorKind::internal, "unreachable");
}

}  // namespace

TEST_CASE("appended lines read back whole, with their format and version, one object per line") {
  TempDir d;
  const std::string file = (d.path / "h.jsonl").string();
  CHECK(read_history(file, TornHistory::refuse).lines.empty());  // no file yet: the first night
  append_history(file, night("2026-11-01", 0.01), TornHistory::refuse);
  const History h = append_history(file, night("2026-11-02", 0.02), TornHistory::refuse);
  REQUIRE(h.lines.size() == 2);
  CHECK(h.lines[1].line == 2);
  CHECK(h.lines[1].entry["date"] == "2026-11-02");
  const std::string bytes = slurp(file);
  CHECK(std::count(bytes.begin(), bytes.end(), '\n') == 2);
  CHECK(bytes.back() == '\n');
  const auto first = nlohmann::json::parse(bytes.substr(0, bytes.find('\n')));
  CHECK(first["format"] == "plumb-history");
  CHECK(first["version"] == 1);
  const History again = read_history(file, TornHistory::refuse);
  REQUIRE(again.lines.size() == 2);
  CHECK(again.lines[0].entry["columns"][0]["figures"]["ece"]["value"] == 0.01);
}

TEST_CASE("a torn last line without its newline is refused at its line, with the option that cuts it") {
  TempDir d;
  const fs::path file = d.path / "h.jsonl";
  append_history(file.string(), night("2026-11-01", 0.01), TornHistory::refuse);
  append_history(file.string(), night("2026-11-02", 0.02), TornHistory::refuse);
  const std::string whole = slurp(file);
  // A run killed in the middle of its write: half a line, no newline.
  const std::string torn = R"({"format":"plumb-history","version":1,"command":"report","date":"2026-11-0)";
  spill(file, whole + torn);

  const Error e = thrown([&] { read_history(file.string(), TornHistory::refuse); });
  CHECK(e.kind() == ErrorKind::input);
  CHECK(e.where().file == file.string());
  CHECK(e.where().line == 3);
  CHECK(e.expected().find("--torn-history cut") != std::string::npos);
  // Appending is refused the same way, and leaves the file as it was.
  const Error a = thrown([&] { append_history(file.string(), night("2026-11-03", 0.03), TornHistory::refuse); });
  CHECK(a.where().line == 3);
  CHECK(slurp(file) == whole + torn);

  // With cut: the read leaves it out; the append cuts it off, then appends.
  const History r = read_history(file.string(), TornHistory::cut);
  CHECK(r.lines.size() == 2);
  REQUIRE(r.cut_line.has_value());
  CHECK(*r.cut_line == 3);
  CHECK(r.cut_bytes == torn.size());
  const History h = append_history(file.string(), night("2026-11-03", 0.03), TornHistory::cut);
  REQUIRE(h.cut_line.has_value());
  REQUIRE(h.lines.size() == 3);
  CHECK(h.lines[2].line == 3);
  CHECK(read_history(file.string(), TornHistory::refuse).lines.size() == 3);
  CHECK(slurp(file).substr(0, whole.size()) == whole);
}

TEST_CASE("a last line that ends in a newline but is not JSON is torn too; a bad line before it is always refused") {
  TempDir d;
  const fs::path file = d.path / "h.jsonl";
  append_history(file.string(), night("2026-11-01", 0.01), TornHistory::refuse);
  const std::string good = slurp(file);
  spill(file, good + "{\"format\":\"plumb-history\",\"vers\n");
  const Error e = thrown([&] { read_history(file.string(), TornHistory::refuse); });
  CHECK(e.where().line == 2);
  CHECK(e.where().column > 0);
  CHECK(read_history(file.string(), TornHistory::cut).lines.size() == 1);

  // The same bad line in the middle: refused with its line, whatever the policy.
  spill(file, good + "{\"format\":\"plumb-history\",\"vers\n" + good);
  for (TornHistory policy : {TornHistory::refuse, TornHistory::cut}) {
    const Error m = thrown([&] { read_history(file.string(), policy); });
    CHECK(m.kind() == ErrorKind::input);
    CHECK(m.where().line == 2);
    CHECK(m.expected().find("--torn-history") == std::string::npos);  // cutting would not help
  }
}

TEST_CASE("a line of another format version is refused with its line and version") {
  TempDir d;
  const fs::path file = d.path / "h.jsonl";
  append_history(file.string(), night("2026-11-01", 0.01), TornHistory::refuse);
  spill(file, slurp(file) + R"({"format":"plumb-history","version":2,"command":"report","date":"2026-11-02"})"
                            "\n");
  const Error e = thrown([&] { read_history(file.string(), TornHistory::cut); });
  CHECK(e.kind() == ErrorKind::input);
  CHECK(e.where().line == 2);
  CHECK(e.value() == "version 2");
  CHECK(e.message().find("newer plumb") != std::string::npos);
  // Not a history line at all (another tool's JSON Lines).
  spill(file, R"({"event":"x"})"
              "\n");
  CHECK(thrown([&] { read_history(file.string(), TornHistory::refuse); }).message() ==
        "a line that is not a plumb history line");
}

TEST_CASE("concurrent appends from several processes never interleave") {
  TempDir d;
  const std::string file = (d.path / "h.jsonl").string();
  constexpr int kProcesses = 6, kLines = 40;
  // Each line is far longer than PIPE_BUF (4096), the size below which
  // POSIX promises atomic writes to pipes only: the lock must do the work.
  const std::string filler(20000, 'x');
  std::vector<pid_t> children;
  for (int p = 0; p < kProcesses; ++p) {
    const pid_t pid = ::fork();
    REQUIRE(pid >= 0);
    if (pid == 0) {
      int status = 0;
      try {
        for (int i = 0; i < kLines; ++i) {
          nlohmann::json e = night("2026-11-01", 0.0);
          e["writer"] = p;
          e["seq"] = i;
          e["filler"] = std::string(static_cast<std::size_t>(p + 1), static_cast<char>('a' + p)) + filler;
          append_history(file, e, TornHistory::refuse);
        }
      } catch (...) {
        status = 1;
      }
      ::_exit(status);
    }
    children.push_back(pid);
  }
  for (pid_t c : children) {
    int status = 0;
    REQUIRE(::waitpid(c, &status, 0) == c);
    CHECK(WIFEXITED(status));
    CHECK(WEXITSTATUS(status) == 0);
  }
  const History h = read_history(file, TornHistory::refuse);
  REQUIRE(h.lines.size() == static_cast<std::size_t>(kProcesses * kLines));
  std::vector<int> next(kProcesses, 0);
  for (const auto& line : h.lines) {
    const int p = line.entry["writer"].get<int>();
    // Each writer's lines arrive in its own order, each one whole.
    CHECK(line.entry["seq"].get<int>() == next[static_cast<std::size_t>(p)]++);
    CHECK(line.entry["filler"].get<std::string>() ==
          std::string(static_cast<std::size_t>(p + 1), static_cast<char>('a' + p)) + filler);
  }
}

TEST_CASE("the trend follows a column over the report lines and marks a change of map as a refit") {
  TempDir d;
  const std::string file = (d.path / "h.jsonl").string();
  const auto line = [](const std::string& date, const std::string& integrity, double ece, double lo, double hi) {
    return nlohmann::json{{"command", "report"},
                          {"date", date},
                          {"columns",
                           {{{"name", "risk via late.map.json"},
                             {"map", {{"integrity", integrity}}},
                             {"figures", {{"ece", {{"value", ece}, {"low", lo}, {"high", hi}}}}}}}}};
  };
  append_history(file, line("2026-11-01", "aaa", 0.010, 0.008, 0.013), TornHistory::refuse);
  append_history(file, {{"command", "drift"}, {"date", "2026-11-01"}}, TornHistory::refuse);  // not the report's
  append_history(file, line("2026-11-03", "bbb", 0.030, 0.025, 0.036), TornHistory::refuse);
  // A night backfilled after a later one: it takes its place by date.
  const History h = append_history(file, line("2026-11-02", "aaa", 0.012, 0.009, 0.016), TornHistory::refuse);

  plumb::Report tonight;
  plumb::ScoreReport sr;
  sr.overall.name = "risk via late.map.json";
  sr.map = plumb::MapOrigin{};
  tonight.scores.push_back(sr);
  plumb::ScoreReport raw;  // a --score column beside a map: not charted
  raw.overall.name = "risk";
  tonight.scores.push_back(raw);
  plumb::GateResult g;
  g.gate.metric = "ece";
  g.gate.limit = 0.02;
  g.column = "risk via late.map.json";
  tonight.gates.push_back(g);

  const auto trend = plumb::io::trend_of_history(h, tonight);
  REQUIRE(!trend.empty());
  const plumb::TrendSeries& s = trend.front();
  CHECK(s.column == "risk via late.map.json");
  CHECK(s.figure == "ece");
  REQUIRE(s.points.size() == 3);
  CHECK(s.points[0].date == "2026-11-01");
  CHECK(s.points[2].value == 0.030);
  CHECK(s.points[1].lo == 0.009);
  CHECK(!s.points[1].refit);
  CHECK(s.points[2].refit);
  REQUIRE(s.gates.size() == 1);
  CHECK(s.gates[0].limit == 0.02);
  // Figures the lines do not hold (mcb, brier, auc) have no series.
  CHECK(trend.size() == 1);
}

TEST_CASE("history dates are calendar dates") {
  using plumb::io::is_history_date;
  CHECK(is_history_date("2026-11-18"));
  CHECK(is_history_date("2028-02-29"));
  CHECK(!is_history_date("2026-02-29"));
  CHECK(!is_history_date("2026-13-01"));
  CHECK(!is_history_date("2026-1-01"));
  CHECK(!is_history_date("20261118"));
}
