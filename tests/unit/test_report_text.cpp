// Tests of the terminal renderer (render_text) on reports computed by
// build_report from seeded invented data: an over-confident forecaster, its
// recalibrated counterpart, segments with one shifted and one tiny segment,
// and gates on either side of their limits. The checks are properties of
// the text (width, bytes, escapes, labels, markers) and the numbers it
// shows, read back from the text and compared with the report's own values.
#include <catch2/catch.hpp>

#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <random>
#include <sstream>
#include <regex>
#include <string>
#include <vector>

#include "plumb/report.hpp"
#include "plumb/io/report_render.hpp"
#include "support/test_helpers.hpp"

namespace {

using plumb::test::uniform01;

double logistic(double t) { return 1.0 / (1.0 + std::exp(-t)); }
double logit(double p) { return std::log(p / (1.0 - p)); }

struct Simulation {
  std::vector<double> raw, calibrated, label, weight;
  std::vector<std::uint32_t> segment;
  std::vector<std::string> segment_names;
};

// True probabilities q spread over (0, 1); the raw forecaster reports
// logistic(1.8 logit q), too extreme on both sides, and the calibrated one
// reports q itself. Segment "east" has its outcomes shifted down (both
// forecasters are too high there); segment "isle" has 30 rows only.
Simulation simulate(std::size_t n, std::uint64_t seed) {
  std::mt19937_64 g(seed);
  Simulation s;
  s.segment_names = {"north", "south", "east", "west", "isle"};
  for (std::size_t i = 0; i < n; ++i) {
    const double q = logistic(4.0 * uniform01(g) - 2.5);
    const std::uint32_t seg = i % 200 == 0 ? 4 : static_cast<std::uint32_t>(plumb::test::below(g, 4));
    const double truth = seg == 2 ? logistic(0.4 * logit(q) - 0.3) : q;
    s.raw.push_back(logistic(1.8 * logit(q)));
    s.calibrated.push_back(q);
    s.label.push_back(uniform01(g) < truth ? 1.0 : 0.0);
    s.segment.push_back(seg);
  }
  return s;
}

plumb::Report make_report(const Simulation& s, const std::vector<plumb::Gate>& gates,
                          std::size_t bootstrap = 60, bool with_segments = true) {
  const std::vector<plumb::ForecastColumn> columns = {{"risk_raw", s.raw},
                                                      {"risk_cal", s.calibrated}};
  plumb::ReportOptions options;
  options.bootstrap = bootstrap;
  options.seed = 7;
  const std::vector<std::uint32_t> no_segment;
  plumb::Report r = plumb::build_report(columns, s.label, s.weight,
                                        with_segments ? std::span(s.segment) : std::span(no_segment),
                                        s.segment_names, gates, options);
  r.source = "claims_holdout.csv";
  r.label_column = "lapsed";
  if (with_segments) r.segment_column = "region";
  return r;
}

std::vector<std::string> lines_of(const std::string& text) {
  std::vector<std::string> out;
  std::istringstream in(text);
  for (std::string l; std::getline(in, l);) out.push_back(l);
  return out;
}

// Columns of a line without escapes: one per UTF-8 code point.
std::size_t columns_of(const std::string& line) {
  std::size_t n = 0;
  for (unsigned char c : line) n += (c & 0xC0) != 0x80 ? 1 : 0;
  return n;
}

std::string strip_escapes(const std::string& s) {
  std::string out;
  for (std::size_t i = 0; i < s.size(); ++i) {
    if (s[i] == '\x1b' && i + 1 < s.size() && s[i + 1] == '[') {
      i += 2;
      while (i < s.size() && !(s[i] >= 0x40 && s[i] <= 0x7e)) ++i;
      continue;
    }
    out.push_back(s[i]);
  }
  return out;
}

// The first line that starts (after indentation) with `prefix`.
std::string line_starting(const std::string& text, const std::string& prefix) {
  for (const std::string& l : lines_of(text)) {
    const std::size_t start = l.find_first_not_of(' ');
    if (start != std::string::npos && l.compare(start, prefix.size(), prefix) == 0) return l;
  }
  return {};
}

// Every number in s (signs, decimals, exponents and thousands separators
// included), in order. A comma between a digit and three digits groups
// thousands (counts and weights); a list of numbers has ", " between them.
std::vector<double> numbers_in(const std::string& text) {
  static const std::regex grouping(R"((\d),(?=\d{3}(?!\d)))");
  const std::string s = std::regex_replace(text, grouping, "$1");
  std::vector<double> out;
  const char* p = s.c_str();
  while (*p) {
    const bool starts = (*p >= '0' && *p <= '9') ||
                        ((*p == '-' || *p == '+') && p[1] >= '0' && p[1] <= '9');
    if (!starts) {
      ++p;
      continue;
    }
    char* end = nullptr;
    out.push_back(std::strtod(p, &end));
    p = end;
  }
  return out;
}

// The lines from the section heading that contains `title` up to the next
// section heading (a line that starts with a rule).
std::string section(const std::string& text, const std::string& title) {
  std::string out;
  bool inside = false;
  for (const std::string& l : lines_of(text)) {
    // Section titles: "\u258c title" in Unicode, "[title]" in ASCII.
    const bool heading = l.rfind("[", 0) == 0 || l.rfind("\u258c ", 0) == 0;
    if (heading) inside = l.find(title) != std::string::npos;
    if (inside) out += l + "\n";
  }
  return out;
}

const Simulation& shared_simulation() {
  static const Simulation s = simulate(6000, 20261202);
  return s;
}

}  // namespace

TEST_CASE("every line fits the width, in Unicode and ASCII, with and without colour",
          "[report_text]") {
  const plumb::Report r = make_report(shared_simulation(), {{"", "ece", 0.02}});
  for (int width : {80, 100, 60, 132}) {
    for (bool unicode : {true, false}) {
      for (bool colour : {false, true}) {
        const std::string text = plumb::render_text(r, {unicode, colour, width});
        INFO("width " << width << " unicode " << unicode << " colour " << colour);
        for (const std::string& l : lines_of(text)) {
          INFO(l);
          CHECK(columns_of(strip_escapes(l)) <= static_cast<std::size_t>(width));
        }
      }
    }
  }
}

TEST_CASE("long names and a narrow terminal are cut, never overflow", "[report_text]") {
  plumb::Report r = make_report(shared_simulation(), {});
  r.source = std::string(150, 'd') + "/holdout.csv";
  r.scores[0].overall.name = std::string(90, 'n');
  r.scores[0].segments[0].value = std::string(70, 's');
  r.cautions.push_back(std::string(200, 'w') + " and some words after a very long one");
  for (int width : {40, 80}) {
    for (bool unicode : {true, false}) {
      const std::string text = plumb::render_text(r, {unicode, true, width});
      for (const std::string& l : lines_of(text)) {
        INFO(l);
        CHECK(columns_of(strip_escapes(l)) <= static_cast<std::size_t>(width));
      }
    }
  }
}

TEST_CASE("ASCII mode writes only ASCII bytes; Unicode mode uses more", "[report_text]") {
  const plumb::Report r = make_report(shared_simulation(), {{"", "ece", 0.02}});
  const std::string ascii = plumb::render_text(r, {false, false, 80});
  for (unsigned char c : ascii) REQUIRE(c < 0x80);
  const std::string unicode = plumb::render_text(r, {true, false, 80});
  bool wide_bytes = false;
  for (unsigned char c : unicode) wide_bytes = wide_bytes || c >= 0x80;
  CHECK(wide_bytes);
}

TEST_CASE("escape bytes appear exactly when colour is asked for", "[report_text]") {
  const plumb::Report r = make_report(shared_simulation(), {{"", "ece", 0.02}});
  for (bool unicode : {true, false}) {
    CHECK(plumb::render_text(r, {unicode, false, 80}).find('\x1b') == std::string::npos);
    const std::string coloured = plumb::render_text(r, {unicode, true, 80});
    CHECK(coloured.find('\x1b') != std::string::npos);
    // Without its escapes the coloured text is the plain one: colour adds no words.
    CHECK(strip_escapes(coloured) == plumb::render_text(r, {unicode, false, 80}));
  }
}

TEST_CASE("the chart carries both axis labels and one chart per score column", "[report_text]") {
  const plumb::Report r = make_report(shared_simulation(), {});
  for (bool unicode : {true, false}) {
    const std::string text = plumb::render_text(r, {unicode, false, 80});
    std::size_t x_labels = 0, y_labels = 0;
    for (const std::string& l : lines_of(text)) {
      x_labels += l.find("forecast probability") != std::string::npos ? 1 : 0;
      y_labels += l.find("observed frequency") != std::string::npos ? 1 : 0;
    }
    CHECK(x_labels == r.scores.size());
    CHECK(y_labels == r.scores.size());
  }
}

TEST_CASE("the chart puts the bin marks at mean forecast and observed frequency",
          "[report_text]") {
  // ASCII, no band: every mark is an 'O'. The plot is the 21 lines under the
  // y-axis label, the top one at observed 1.0; after the 8-column axis margin
  // plot column c stands for forecast c / 60. Every mark must sit on the
  // cell of some non-empty bin, and every non-empty bin's cell must hold a mark.
  const plumb::Report r = make_report(shared_simulation(), {}, 0, false);
  const auto& bins = r.scores[0].overall.table.bins;
  const std::vector<std::string> lines = lines_of(plumb::render_text(r, {false, false, 80}));
  std::size_t top = 0;
  while (top < lines.size() && lines[top].find("observed frequency") == std::string::npos) ++top;
  REQUIRE(top + 21 < lines.size());
  const auto cell_of = [](const plumb::ReliabilityBin& b) {
    return std::pair<long, long>{std::lround(20.0 * (1.0 - b.observed)), std::lround(60.0 * b.mean_forecast)};
  };
  std::size_t marks = 0;
  for (std::size_t row = 0; row < 21; ++row) {
    const std::string& l = lines[top + 1 + row];
    for (std::size_t at = 8; at < l.size(); ++at) {
      if (l[at] != 'O') continue;
      ++marks;
      bool matches = false;
      for (const auto& b : bins)
        if (b.weight > 0) matches = matches || cell_of(b) == std::pair<long, long>(row, at - 8);
      CHECK(matches);
    }
  }
  for (const auto& b : bins) {
    if (!(b.weight > 0)) continue;
    const auto [row, column] = cell_of(b);
    CHECK(lines[top + 1 + static_cast<std::size_t>(row)][static_cast<std::size_t>(column) + 8] == 'O');
  }
  CHECK(marks >= 5);
}

TEST_CASE("a flagged segment shows the flag and a tiny one says too few rows", "[report_text]") {
  const plumb::Report r = make_report(shared_simulation(), {});
  // The calibrated column: the simulation makes "east" over-confident and
  // "isle" tiny, the other segments calibrated. The report must agree before
  // the text can be judged.
  const auto& segments = r.scores[1].segments;
  std::size_t flagged = 0;
  const plumb::SegmentSummary* east = nullptr;
  for (const auto& seg : segments) {
    flagged += seg.flagged ? 1 : 0;
    if (seg.value == "east") east = &seg;
    if (seg.value == "isle") REQUIRE(seg.too_few);
  }
  REQUIRE(east != nullptr);
  REQUIRE(east->flagged);
  REQUIRE(flagged == 1);
  for (bool unicode : {true, false}) {
    const std::string text =
        section(plumb::render_text(r, {unicode, false, 80}), "segments by region: risk_cal");
    REQUIRE_FALSE(text.empty());
    const std::string east_line = line_starting(text, "! east");
    REQUIRE_FALSE(east_line.empty());
    for (const auto& seg : segments) {
      const std::string l = line_starting(text, seg.value);
      CHECK(l.empty() == seg.flagged);  // a flagged row starts with the flag instead
      if (seg.too_few) CHECK(l.find("too few rows") != std::string::npos);
      if (!seg.too_few) CHECK(l.find("too few rows") == std::string::npos);
    }
    // The row's figures, in the order of the header.
    const std::vector<double> v = numbers_in(east_line.substr(east_line.find("east") + 4));
    REQUIRE(v.size() == 7);
    CHECK(v[0] == static_cast<double>(east->rows));
    CHECK(std::fabs(v[1] - east->mean_forecast) <= 5e-5);
    CHECK(std::fabs(v[2] - east->observed_rate) <= 5e-5);
    CHECK(std::fabs(v[3] - east->calibration_in_the_large) <= 5e-5);
    CHECK(std::fabs(v[4] - east->ece) <= 5e-5);
    CHECK(std::fabs(v[5] - east->spiegelhalter.z) <= 5e-3);
    CHECK(std::fabs(v[6] - east->p_adjusted) <= 0.05 * east->p_adjusted);
  }
}

TEST_CASE("a gate says BREACHED exactly when its value exceeds the limit", "[report_text]") {
  const Simulation& s = shared_simulation();
  const plumb::Report probe = make_report(s, {}, 0, false);
  const double raw_ece = probe.scores[0].overall.ece_equal_width.ece;
  const double cal_ece = probe.scores[1].overall.ece_equal_width.ece;
  REQUIRE(raw_ece > cal_ece);
  // One limit between the two columns' ECE: the raw column breaks it, the
  // calibrated one holds.
  const double between = 0.5 * (raw_ece + cal_ece);
  {
    const plumb::Report r = make_report(s, {{"", "ece", between}}, 0, false);
    const std::string text = plumb::render_text(r, {true, false, 80});
    const std::string raw = line_starting(text, "BREACHED");
    CHECK(raw.find("risk_raw") != std::string::npos);
    const std::string cal = line_starting(text, "held");
    CHECK(cal.find("risk_cal") != std::string::npos);
    const std::vector<double> v = numbers_in(raw.substr(raw.find("ece") + 3));
    REQUIRE(v.size() == 2);
    CHECK(std::fabs(v[0] - raw_ece) <= 5e-5);
    CHECK(std::fabs(v[1] - between) <= 5e-5);
  }
  {
    const plumb::Report r = make_report(s, {{"", "ece", 1.0}}, 0, false);
    const std::string text = plumb::render_text(r, {true, false, 80});
    CHECK(text.find("BREACHED") == std::string::npos);
    CHECK(text.find("0 of 2 limits breached") != std::string::npos);
  }
  {
    const plumb::Report r = make_report(s, {}, 0, false);
    CHECK(plumb::render_text(r, {true, false, 80}).find("gates") == std::string::npos);
  }
}

TEST_CASE("headline numbers are the report's values to the printed precision", "[report_text]") {
  const plumb::Report r = make_report(shared_simulation(), {});
  const plumb::ScoreSummary& raw = r.scores[0].overall;
  const plumb::ScoreSummary& cal = r.scores[1].overall;
  REQUIRE(raw.bootstrap);
  for (int width : {80, 100}) {
    const std::string text = plumb::render_text(r, {true, false, width});
    INFO(text);
    // Side by side at these widths: value [lo, hi] of raw, then of calibrated.
    const std::string ece_line = line_starting(text, "ECE equal-width, 10 bins");
    const std::vector<double> ece = numbers_in(ece_line.substr(ece_line.find("bins") + 4));
    REQUIRE(ece.size() == 6);
    CHECK(std::fabs(ece[0] - raw.ece_equal_width.ece) <= 5e-5);
    CHECK(std::fabs(ece[1] - raw.bootstrap->ece.lo) <= 5e-5);
    CHECK(std::fabs(ece[2] - raw.bootstrap->ece.hi) <= 5e-5);
    CHECK(std::fabs(ece[3] - cal.ece_equal_width.ece) <= 5e-5);

    const std::string auc_line = line_starting(text, "AUC");
    const std::vector<double> auc = numbers_in(auc_line);
    REQUIRE(auc.size() == 6);
    CHECK(std::fabs(auc[0] - raw.auc) <= 5e-5);
    CHECK(std::fabs(auc[3] - cal.auc) <= 5e-5);

    const std::string z_line = line_starting(text, "Spiegelhalter Z");
    const std::vector<double> z = numbers_in(z_line);
    REQUIRE(z.size() == 4);
    CHECK(std::fabs(z[0] - raw.spiegelhalter.z) <= 5e-3);

    const std::string slope_line = line_starting(text, "calibration slope");
    const std::vector<double> slope = numbers_in(slope_line);
    REQUIRE(slope.size() == 2);
    CHECK(std::fabs(slope[0] - raw.regression.slope) <= 5e-5);
    // The simulated raw forecaster is over-confident: slope well below 1.
    CHECK(slope[0] < 0.8);

    const std::string mcb_line = line_starting(text, "MCB miscalibration");
    const std::vector<double> mcb = numbers_in(mcb_line);
    REQUIRE(mcb.size() == 6);
    CHECK(std::fabs(mcb[0] - raw.corp_brier.mcb) <= 5e-5);
    CHECK(std::fabs(mcb[1] - raw.bootstrap->mcb_brier.lo) <= 5e-5);

    CHECK(text.find("95% bootstrap percentile interval, 60 replicates") != std::string::npos);
  }
}

TEST_CASE("headline figures fall back to one column after another when narrow",
          "[report_text]") {
  const plumb::Report r = make_report(shared_simulation(), {});
  const std::string text = plumb::render_text(r, {true, false, 60});
  // Two ECE lines, one per score column, each with one value and its interval.
  std::size_t ece_lines = 0;
  for (const std::string& l : lines_of(text))
    if (l.find("ECE equal-width, 10 bins") != std::string::npos) {
      ++ece_lines;
      CHECK(numbers_in(l.substr(l.find("bins") + 4)).size() == 3);
    }
  CHECK(ece_lines == 2);
}

TEST_CASE("the reliability table shows each bin's figures and marks empty bins",
          "[report_text]") {
  plumb::Report r = make_report(shared_simulation(), {}, 0, false);
  // The first raw bin [0, 0.1) holds rows; pick a row of the table by its range.
  const auto& bins = r.scores[0].overall.table.bins;
  const std::string text = plumb::render_text(r, {false, false, 80});
  for (std::size_t b = 0; b < bins.size(); ++b) {
    char range[64];
    std::snprintf(range, sizeof range, "%.4f-%.4f", bins[b].edge_lo, bins[b].edge_hi);
    const std::string l = line_starting(text, range);
    REQUIRE_FALSE(l.empty());
    const std::vector<double> v = numbers_in(l.substr(l.find(range) + std::string(range).size()));
    if (bins[b].weight > 0) {
      REQUIRE(v.size() == 6);
      CHECK(v[0] == static_cast<double>(bins[b].rows));
      CHECK(std::fabs(v[1] - bins[b].mean_forecast) <= 5e-5);
      CHECK(std::fabs(v[2] - bins[b].observed) <= 5e-5);
      CHECK(std::fabs(v[3] - bins[b].observed_lo) <= 5e-5);
      CHECK(std::fabs(v[4] - bins[b].observed_hi) <= 5e-5);
      CHECK(std::fabs(v[5] - bins[b].gap) <= 5e-5);
    } else {
      CHECK(l.find("empty") != std::string::npos);
    }
  }
}

TEST_CASE("non-finite numbers print as n/a and cautions start with the marker",
          "[report_text]") {
  plumb::Report r = make_report(shared_simulation(), {}, 0, false);
  r.scores[0].overall.auc = std::nan("");
  r.cautions = {"first caution", "second caution"};
  for (bool unicode : {true, false}) {
    const std::string text = plumb::render_text(r, {unicode, false, 80});
    CHECK(line_starting(text, "AUC").find("n/a") != std::string::npos);
    CHECK(text.find("nan") == std::string::npos);
    const std::string marker = unicode ? "\u25b8 " : "> ";
    CHECK_FALSE(line_starting(text, marker + "first caution").empty());
    CHECK_FALSE(line_starting(text, marker + "second caution").empty());
  }
}

TEST_CASE("three score columns sit side by side at 100 columns, one after another at 80",
          "[report_text]") {
  const Simulation& s = shared_simulation();
  std::vector<double> middle;
  for (double q : s.calibrated) middle.push_back(logistic(1.3 * logit(q)));
  const std::vector<plumb::ForecastColumn> columns = {
      {"risk_raw", s.raw}, {"risk_cal", s.calibrated}, {"risk_mid", middle}};
  plumb::ReportOptions options;
  options.bootstrap = 40;
  const plumb::Report r = plumb::build_report(columns, s.label, {}, {}, {}, {}, options);
  const auto ece_numbers = [](const std::string& text) {
    std::vector<std::size_t> out;
    for (const std::string& l : lines_of(text))
      if (l.find("ECE equal-width, 10 bins") != std::string::npos)
        out.push_back(numbers_in(l.substr(l.find("bins") + 4)).size());
    return out;
  };
  const std::string wide = plumb::render_text(r, {true, false, 100});
  CHECK(ece_numbers(wide) == std::vector<std::size_t>{9});
  const std::vector<double> v = numbers_in(line_starting(wide, "calibration slope"));
  REQUIRE(v.size() == 3);
  for (std::size_t i = 0; i < 3; ++i)
    CHECK(std::fabs(v[i] - r.scores[i].overall.regression.slope) <= 5e-5);
  CHECK(ece_numbers(plumb::render_text(r, {true, false, 80})) ==
        std::vector<std::size_t>{3, 3, 3});
}

TEST_CASE("a weighted report shows each bin's weight and the total", "[report_text]") {
  Simulation s = shared_simulation();
  std::mt19937_64 g(99);
  for (std::size_t i = 0; i < s.label.size(); ++i) s.weight.push_back(0.5 + 2.0 * uniform01(g));
  plumb::Report r = make_report(s, {}, 0, false);
  r.weight_column = "exposure";
  const std::string text = plumb::render_text(r, {false, false, 80});
  CHECK(text.find("weight exposure") != std::string::npos);
  const auto& bins = r.scores[0].overall.table.bins;
  for (const auto& b : bins) {
    if (!(b.weight > 0)) continue;
    char range[64];
    std::snprintf(range, sizeof range, "%.4f-%.4f", b.edge_lo, b.edge_hi);
    const std::string l = line_starting(text, range);
    const std::vector<double> v = numbers_in(l.substr(l.find(range) + std::string(range).size()));
    REQUIRE(v.size() == 7);
    CHECK(v[0] == static_cast<double>(b.rows));
    CHECK(std::fabs(v[1] - b.weight) <= 5e-3);
    CHECK(std::fabs(v[2] - b.mean_forecast) <= 5e-5);
  }
}

TEST_CASE("equal-mass bins show their own forecast ranges and fit the width", "[report_text]") {
  const Simulation& s = shared_simulation();
  const std::vector<plumb::ForecastColumn> columns = {{"risk_raw", s.raw}};
  plumb::ReportOptions options;
  options.bootstrap = 30;
  options.binning = plumb::BinningKind::equal_mass;
  options.bins = 12;
  const plumb::Report r = plumb::build_report(columns, s.label, {}, {}, {}, {}, options);
  const auto& bins = r.scores[0].overall.table.bins;
  REQUIRE(bins.size() == 12);
  for (int width : {80, 100}) {
    const std::string text = plumb::render_text(r, {false, false, width});
    CHECK(text.find("12 equal-mass bins") != std::string::npos);
    for (const std::string& l : lines_of(text)) CHECK(columns_of(l) <= static_cast<std::size_t>(width));
    for (const auto& b : bins) {
      char range[64];
      std::snprintf(range, sizeof range, "%.4f-%.4f", b.edge_lo, b.edge_hi);
      CHECK_FALSE(line_starting(text, range).empty());
    }
  }
}

TEST_CASE("a single column's name stands over its values", "[report_text]") {
  const Simulation& s = shared_simulation();
  const std::vector<plumb::ForecastColumn> columns = {{"risk_cal", s.calibrated}};
  plumb::ReportOptions options;
  options.bootstrap = 0;
  const plumb::Report r = plumb::build_report(columns, s.label, {}, {}, {}, {}, options);
  for (bool unicode : {true, false}) {
    const std::string text = section(plumb::render_text(r, {unicode, false, 80}), "headline figures");
    const std::vector<std::string> lines = lines_of(text);
    REQUIRE(lines.size() > 2);
    const std::string& name = lines[1];
    const std::string observed = line_starting(text, "observed rate");
    REQUIRE_FALSE(observed.empty());
    // The value begins where the name begins.
    const std::size_t value_at = observed.find("0.", observed.find("rate"));
    CHECK(name.find_first_not_of(' ') == value_at);
    CHECK(name.substr(value_at) == "risk_cal");
  }
}

TEST_CASE("section titles are a left bar or brackets, never a title between rules", "[report_text]") {
  const plumb::Report r = make_report(shared_simulation(), {{"", "ece", 0.02}});
  for (bool unicode : {true, false}) {
    const std::string text = plumb::render_text(r, {unicode, false, 100});
    const std::regex old_rule(unicode ? "^\\s*\u2500\u2500 .*\\S \u2500{3,}\\s*$" : "^\\s*-- .*\\S -{3,}\\s*$");
    std::size_t titles = 0;
    for (const std::string& l : lines_of(text)) {
      CHECK_FALSE(std::regex_match(l, old_rule));
      if (l.rfind(unicode ? "\u258c " : "[", 0) == 0) ++titles;
    }
    CHECK(text.find(unicode ? "\u258c headline figures\n" : "[headline figures]\n") != std::string::npos);
    CHECK(titles >= 5);  // headline, two reliability, segments, gates, cautions
  }
}

TEST_CASE("counts carry thousands separators; a difference of zero carries no sign", "[report_text]") {
  plumb::Report r = make_report(shared_simulation(), {}, 0, false);
  auto& bins = r.scores[0].overall.table.bins;
  REQUIRE(bins.size() >= 2);
  REQUIRE(bins[1].weight > 0);
  bins[1].gap = 0.0;
  bins[1].rows = 1234567;
  const std::string text = plumb::render_text(r, {false, false, 80});
  // The formatting layer's count rule (plumb/number_text.hpp): 6000 rows.
  CHECK_FALSE(line_starting(text, "6,000 rows").empty());
  char range[64];
  std::snprintf(range, sizeof range, "%.4f-%.4f", bins[1].edge_lo, bins[1].edge_hi);
  const std::string l = line_starting(text, range);
  REQUIRE_FALSE(l.empty());
  CHECK(l.find(" 1,234,567 ") != std::string::npos);
  CHECK(l.substr(l.size() - 7) == " 0.0000");
  CHECK(text.find("+0.0000") == std::string::npos);
}

TEST_CASE("the trend section fits every width, marks breaches and refits, and is ASCII when asked") {
  const Simulation s = simulate(3000, 12);
  plumb::Report r = make_report(s, {}, 0, false);
  plumb::TrendSeries t;
  t.column = "risk_cal";
  t.figure = "ece";
  // Five nights: the third breaches the gate, the fourth follows a refit.
  const double values[] = {0.011, 0.012, 0.031, 0.014, 0.013};
  for (int i = 0; i < 5; ++i) {
    plumb::TrendPoint p;
    p.date = "2026-11-0" + std::to_string(i + 1);
    p.value = values[i];
    p.lo = values[i] - 0.004;
    p.hi = values[i] + 0.005;
    p.refit = i == 3;
    t.points.push_back(p);
  }
  plumb::Gate g;
  g.metric = "ece";
  g.limit = 0.02;
  t.gates.push_back(g);
  r.trend.push_back(t);
  for (bool unicode : {true, false})
    for (int width : {40, 60, 80, 120}) {
      const std::string text = plumb::render_text(r, {unicode, true, width});
      for (const std::string& line : lines_of(text)) CHECK(columns_of(strip_escapes(line)) <= std::size_t(width));
      const std::string plain = plumb::render_text(r, {unicode, false, width});
      CHECK(plain.find(unicode ? "\u258c trend" : "[trend]") != std::string::npos);
      CHECK(plain.find("risk_cal" + std::string(unicode ? " \u00b7 " : ", ") + "ece") != std::string::npos);
      CHECK(plain.find("5 nights, 2026-11-01") != std::string::npos);
      // One breach mark (night 3), four held marks; a refit marker; the gate's limit on the axis.
      const std::string breach = unicode ? "\u00d7" : "X";
      const std::string held = unicode ? "\u25cf" : "O";
      std::size_t breaches = 0, helds = 0;
      const std::string section = plain.substr(plain.find(unicode ? "\u258c trend" : "[trend]"));
      const std::string chart = section.substr(0, section.find(unicode ? "\u25cf night" : "O night"));
      for (std::size_t at = chart.find(breach); at != std::string::npos; at = chart.find(breach, at + 1)) ++breaches;
      for (std::size_t at = chart.find(held); at != std::string::npos; at = chart.find(held, at + 1)) ++helds;
      CHECK(breaches == 1);
      CHECK(helds == 4);
      CHECK(section.find(unicode ? "\u25bc map refitted" : "v map refitted") != std::string::npos);
      CHECK(section.find("0.0200 ") != std::string::npos);
      if (!unicode)
        for (unsigned char c : plain) CHECK(c < 0x80);
    }
}
