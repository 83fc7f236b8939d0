// Tests of the SVG and Markdown renderers of the report, on reports computed
// by build_report from seeded invented forecasters: the SVG is well-formed
// with one diagram per column and its points where the documented axis
// transform puts them; the Markdown tables are regular and say what the
// report holds.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <limits>
#include <map>
#include <random>
#include <regex>
#include <string>
#include <string_view>
#include <vector>

#include "plumb/report.hpp"
#include "plumb/io/report_render.hpp"
#include "support/test_helpers.hpp"
#include "support/xml_check.hpp"

namespace {

using plumb::test::uniform01;

// Rows of several forecast columns on the same labels, with segments.
struct Data {
  std::vector<std::vector<double>> forecasts;
  std::vector<std::string> names;
  std::vector<double> label, weight;
  std::vector<std::uint32_t> segment;
  std::vector<std::string> segment_names;
};

// Segment 0 ("north") is calibrated, segment 1 ("south|east": a pipe to
// escape) has forecasts far too low so its Spiegelhalter test flags it, and
// segment 2 ("tiny") has fewer rows than min_segment_weight. Column 0 is
// calibrated, column 1 over-confident, column 2 (if asked) a coarse score.
Data simulate(std::size_t n, std::size_t columns, std::uint64_t seed, bool weighted) {
  std::mt19937_64 g(seed);
  Data d;
  d.names = {"risk_cal", "risk <raw> & \"old\"", "coarse"};
  d.names.resize(columns);
  d.forecasts.resize(columns);
  d.segment_names = {"north", "south|east", "tiny"};
  for (std::size_t i = 0; i < n; ++i) {
    const std::uint32_t seg = i % 50 == 0 ? 2 : (i % 3 == 0 ? 1 : 0);
    double truth = 0.05 + 0.9 * uniform01(g);
    const double y = uniform01(g) < truth ? 1.0 : 0.0;
    // In segment 1 every column forecasts well below the truth.
    if (seg == 1) truth *= 0.55;
    const double logit = std::log(truth / (1 - truth));
    const double candidates[3] = {truth, 1 / (1 + std::exp(-2.2 * logit)), std::round(truth * 4) / 4};
    for (std::size_t c = 0; c < columns; ++c) d.forecasts[c].push_back(candidates[c]);
    d.label.push_back(y);
    if (weighted) d.weight.push_back(0.5 + 1.5 * uniform01(g));
    d.segment.push_back(seg);
  }
  return d;
}

plumb::Report build(const Data& d, const std::vector<plumb::Gate>& gates, const plumb::ReportOptions& o,
                    bool with_segments = true) {
  std::vector<plumb::ForecastColumn> columns;
  for (std::size_t c = 0; c < d.names.size(); ++c) columns.push_back({d.names[c], d.forecasts[c]});
  plumb::Report r =
      plumb::build_report(columns, d.label, d.weight,
                          with_segments ? std::span<const std::uint32_t>(d.segment) : std::span<const std::uint32_t>(),
                          d.segment_names, gates, o);
  r.source = "holdout|2026.csv";
  r.label_column = "outcome";
  if (!d.weight.empty()) r.weight_column = "w";
  if (with_segments) r.segment_column = "region";
  return r;
}

plumb::ReportOptions small_options() {
  plumb::ReportOptions o;
  o.bootstrap = 60;
  o.seed = 7;
  o.min_segment_weight = 100.0;
  return o;
}

std::size_t count(const std::string& text, const std::string& needle) {
  std::size_t k = 0;
  for (std::size_t at = text.find(needle); at != std::string::npos; at = text.find(needle, at + needle.size())) ++k;
  return k;
}

using plumb::test::check_xml;
using plumb::test::Element;

// The elements of each <g class="diagram">, in order.
std::vector<std::vector<Element>> diagrams(const std::vector<Element>& elements) {
  std::vector<std::vector<Element>> out;
  std::size_t depth = 0;
  bool inside = false;
  for (const Element& e : elements) {
    if (inside && e.depth <= depth) inside = false;
    if (e.name == "g" && e.attributes.count("class") && e.attributes.at("class") == "diagram") {
      out.emplace_back();
      depth = e.depth;
      inside = true;
      continue;
    }
    if (inside) out.back().push_back(e);
  }
  return out;
}

// How printf and iostreams write non-finite numbers, as a word of its own.
const std::regex& non_finite_word() {
  static const std::regex re(R"(\b(nan|inf|infinity)\b)", std::regex::icase);
  return re;
}

double attr(const Element& e, const std::string& name) { return std::stod(e.attributes.at(name)); }

// The Markdown pipe tables of a document: each a list of rows of cells.
// A `\|` is an escaped pipe inside a cell, not a separator.
std::vector<std::vector<std::vector<std::string>>> tables(const std::string& doc) {
  std::vector<std::vector<std::vector<std::string>>> out;
  bool in_table = false;
  std::size_t start = 0;
  while (start < doc.size()) {
    std::size_t end = doc.find('\n', start);
    if (end == std::string::npos) end = doc.size();
    const std::string line = doc.substr(start, end - start);
    start = end + 1;
    if (!line.starts_with("|")) {
      in_table = false;
      continue;
    }
    if (!in_table) out.emplace_back();
    in_table = true;
    std::vector<std::string> cells;
    std::string cell;
    for (std::size_t k = 1; k < line.size(); ++k) {
      if (line[k] == '\\' && k + 1 < line.size()) {
        cell += line[k];
        cell += line[++k];
      } else if (line[k] == '|') {
        cells.push_back(cell);
        cell.clear();
      } else {
        cell += line[k];
      }
    }
    if (cell.find_first_not_of(' ') != std::string::npos) cells.push_back(cell + "<unterminated>");
    for (std::string& c : cells) {
      c.erase(0, c.find_first_not_of(' '));
      c.erase(c.find_last_not_of(' ') + 1);
    }
    out.back().push_back(cells);
  }
  return out;
}

}  // namespace

TEST_CASE("The SVG is one well-formed document with one diagram per score column", "[report_svg]") {
  for (const std::size_t columns : {std::size_t{1}, std::size_t{3}}) {
    const Data d = simulate(3000, columns, 21 + columns, columns == 3);
    const plumb::Report report = build(d, {}, small_options());
    const std::string svg = plumb::render_svg(report);

    std::vector<Element> elements;
    CHECK(check_xml(svg, &elements) == "");
    REQUIRE_FALSE(elements.empty());
    CHECK(elements.front().name == "svg");
    CHECK(elements.front().attributes["xmlns"] == "http://www.w3.org/2000/svg");
    for (const Element& e : elements) {
      // No scripts, no references to anything outside the document.
      CHECK(e.name != "script");
      CHECK(e.name != "image");
      CHECK(e.name != "foreignObject");
      for (const auto& [key, value] : e.attributes) {
        CHECK_FALSE(key.starts_with("on"));
        CHECK(key != "href");
        CHECK(key != "xlink:href");
      }
    }
    const auto panels = diagrams(elements);
    CHECK(panels.size() == columns);
    CHECK(count(svg, ">forecast probability</text>") == columns);
    CHECK(count(svg, ">observed frequency</text>") == columns);
    // The names are escaped (column 1 holds <, > , & and ").
    if (columns == 3) CHECK(svg.find("risk &lt;raw&gt; &amp; &quot;old&quot;") != std::string::npos);
    // No non-finite number anywhere, as a word of its own.
    CHECK_FALSE(std::regex_search(svg, non_finite_word()));
    // Each diagram has its ticks, the diagonal, a curve and a histogram.
    for (const auto& panel : panels) {
      std::size_t ticks = 0, diagonal = 0, curve = 0;
      for (const Element& e : panel) {
        const auto cls = e.attributes.count("class") ? e.attributes.at("class") : "";
        ticks += cls == "tick";
        diagonal += cls == "diagonal";
        curve += cls == "pav-curve";
      }
      CHECK(ticks == 12);  // 0, 0.2, ..., 1 on each axis
      CHECK(diagonal == 1);
      CHECK(curve == 1);
    }
  }
}

TEST_CASE("Bin points sit where the documented axis transform puts them", "[report_svg]") {
  const Data d = simulate(4000, 2, 5, false);
  const plumb::Report report = build(d, {}, small_options());
  std::vector<Element> elements;
  REQUIRE(check_xml(plumb::render_svg(report), &elements) == "");
  const auto panels = diagrams(elements);
  REQUIRE(panels.size() == 2);
  for (std::size_t c = 0; c < 2; ++c) {
    const plumb::ScoreSummary& s = report.scores[c].overall;
    const Element* area = nullptr;
    std::vector<const Element*> points, whiskers, bars;
    for (const Element& e : panels[c]) {
      const auto cls = e.attributes.count("class") ? e.attributes.at("class") : "";
      if (cls == "plot-area") area = &e;
      if (e.name == "circle" && cls == "bin") points.push_back(&e);
      if (cls == "whisker") whiskers.push_back(&e);
    }
    REQUIRE(area != nullptr);
    const double x0 = attr(*area, "x"), y0 = attr(*area, "y"), side = attr(*area, "width");
    CHECK(attr(*area, "height") == side);  // square
    std::vector<const plumb::ReliabilityBin*> shown;
    for (const auto& bin : s.table.bins)
      if (bin.weight > 0) shown.push_back(&bin);
    REQUIRE(shown.size() >= 8);  // a continuous forecaster fills most bins
    REQUIRE(points.size() == shown.size());
    REQUIRE(whiskers.size() == shown.size());
    for (std::size_t k = 0; k < shown.size(); ++k) {
      // cx = x0 + side * p, cy = y0 + side * (1 - o); coordinates are
      // written to 0.01 px.
      CHECK(attr(*points[k], "cx") == Approx(x0 + side * shown[k]->mean_forecast).margin(0.006));
      CHECK(attr(*points[k], "cy") == Approx(y0 + side * (1 - shown[k]->observed)).margin(0.006));
      const double lo = std::max(attr(*whiskers[k], "y1"), attr(*whiskers[k], "y2"));
      const double hi = std::min(attr(*whiskers[k], "y1"), attr(*whiskers[k], "y2"));
      CHECK(lo == Approx(y0 + side * (1 - shown[k]->observed_lo)).margin(0.006));
      CHECK(hi == Approx(y0 + side * (1 - shown[k]->observed_hi)).margin(0.006));
      // The observed frequency is inside its own whisker.
      CHECK(attr(*points[k], "cy") <= lo + 0.01);
      CHECK(attr(*points[k], "cy") >= hi - 0.01);
    }
  }
}

TEST_CASE("Without bootstrap the SVG has no band and no intervals, and empty bins draw no point", "[report_svg]") {
  Data d = simulate(1500, 1, 9, false);
  // Forecasts only below 0.5: the upper equal-width bins are empty.
  for (double& p : d.forecasts[0]) p *= 0.45;
  plumb::ReportOptions o = small_options();
  o.bootstrap = 0;
  const plumb::Report report = build(d, {}, o, false);
  REQUIRE(report.scores[0].overall.band.empty());
  const std::string svg = plumb::render_svg(report);
  std::vector<Element> elements;
  REQUIRE(check_xml(svg, &elements) == "");
  std::size_t points = 0, bands = 0;
  for (const Element& e : elements) {
    const auto cls = e.attributes.count("class") ? e.attributes.at("class") : "";
    points += e.name == "circle" && cls == "bin";
    bands += cls == "band";
  }
  std::size_t nonempty = 0;
  for (const auto& bin : report.scores[0].overall.table.bins) nonempty += bin.weight > 0;
  CHECK(nonempty <= 5);
  CHECK(points == nonempty);
  CHECK(bands == 0);
  // The subtitle gives the figures without an interval; an interval is
  // "[lo, hi]", as in every renderer (plumb/number_text.hpp).
  const std::regex interval(R"(\[-?\d[.\de-]*, -?\d[.\de-]*\])");
  const auto intervals = [&](const std::string& doc) {
    return static_cast<std::size_t>(
        std::distance(std::sregex_iterator(doc.begin(), doc.end(), interval), std::sregex_iterator()));
  };
  CHECK(intervals(svg) == 0);
  CHECK(svg.find(">ECE ") != std::string::npos);

  // With the bootstrap, each subtitle carries the three intervals.
  const plumb::Report with = build(d, {}, small_options(), false);
  CHECK(intervals(plumb::render_svg(with)) == 3);
}

TEST_CASE("Non-finite values in a report are left out of the SVG", "[report_svg]") {
  const Data d = simulate(800, 1, 3, false);
  plumb::Report report = build(d, {}, small_options(), false);
  plumb::ScoreSummary& s = report.scores[0].overall;
  const double nan = std::nan("");
  s.brier = nan;
  s.table.bins[3].observed_lo = nan;
  s.band[4].hi = std::numeric_limits<double>::infinity();
  s.pav_curve[0].value = nan;
  s.histogram[2] = nan;
  const std::string svg = plumb::render_svg(report);
  std::vector<Element> elements;
  CHECK(check_xml(svg, &elements) == "");
  CHECK_FALSE(std::regex_search(svg, non_finite_word()));
  CHECK(svg.find("Brier n/a") != std::string::npos);
}

TEST_CASE("Markdown tables are regular and escape the data's pipes", "[report_markdown]") {
  const Data d = simulate(3000, 2, 11, true);
  std::vector<plumb::Gate> gates{{"", "ece", 0.5}, {"risk_cal", "brier", 0.01}};
  const plumb::Report report = build(d, gates, small_options());
  const std::string md = plumb::render_markdown(report);

  const auto all = tables(md);
  // Per column: headline and reliability, plus segments; then the gates.
  REQUIRE(all.size() == 2 * 3 + 1);
  for (const auto& t : all) {
    REQUIRE(t.size() >= 3);
    for (const auto& row : t) {
      CHECK(row.size() == t.front().size());
      for (const std::string& cell : row) {
        CHECK(cell.find("<unterminated>") == std::string::npos);
        CHECK_FALSE(std::regex_search(cell, non_finite_word()));
      }
    }
    // The second line is the alignment row.
    for (const std::string& cell : t[1]) CHECK(std::regex_match(cell, std::regex("-{3}:?")));
  }
  // The reliability table has one row per bin (header and alignment rows aside).
  CHECK(all[1].size() == 2 + report.scores[0].overall.table.bins.size());
  // The segment and source names keep their pipe, escaped.
  CHECK(md.find("south\\|east") != std::string::npos);
  CHECK(md.find("holdout\\|2026.csv") != std::string::npos);
  CHECK(md.find("south|east") == std::string::npos);
  // The column name with Markdown and HTML characters is escaped too.
  CHECK(md.find("## risk \\<raw\\> \\& \"old\"") != std::string::npos);
  // The headline table gives the confidence level of its intervals.
  CHECK(all[0][0].size() == 3);
  CHECK(all[0][0][2] == "95% interval");
}

TEST_CASE("Markdown segments: too few rows and flagged segments say so", "[report_markdown]") {
  const Data d = simulate(3000, 1, 13, false);
  const plumb::Report report = build(d, {}, small_options());
  const auto& segments = report.scores[0].segments;
  REQUIRE(segments.size() == 3);
  const auto all = tables(plumb::render_markdown(report));
  REQUIRE(all.size() == 3);  // headline, reliability, segments; no gates table without gates
  const auto& t = all[2];
  REQUIRE(t.size() == 2 + segments.size());
  const std::size_t flag_col = t[0].size() - 1;
  CHECK(t[0][flag_col] == "flag");
  std::size_t too_few = 0, flagged = 0;
  for (std::size_t k = 0; k < segments.size(); ++k) {
    const auto& row = t[2 + k];
    const plumb::SegmentSummary& s = segments[k];
    // Counts with a comma every three digits (common practice in English text).
    std::string rows = std::to_string(s.rows);
    for (std::size_t at = rows.size(); at > 3; at -= 3) rows.insert(at - 3, ",");
    CHECK(row[1] == rows);
    if (s.too_few) {
      ++too_few;
      CHECK(row[4] == "too few rows");
      CHECK(row[flag_col] == "");
    } else {
      CHECK(row[flag_col] == (s.flagged ? "**flagged**" : "no"));
      flagged += s.flagged;
    }
  }
  // The simulation makes "tiny" too small and "south|east" far off.
  CHECK(too_few == 1);
  CHECK(flagged >= 1);
  CHECK(t[2 + segments.size() - 1][0] == "tiny");
}

TEST_CASE("Markdown gates, cautions and the standing caution paragraph", "[report_markdown]") {
  const Data d = simulate(2000, 1, 17, false);
  SECTION("one gate passes, one fails") {
    const plumb::Report report = build(d, {{"", "ece", 0.9}, {"", "brier", 0.001}}, small_options(), false);
    REQUIRE(report.gates.size() == 2);
    const std::string md = plumb::render_markdown(report);
    const auto all = tables(md);
    const auto& gates = all.back();
    REQUIRE(gates.size() == 4);
    CHECK(gates[0] == std::vector<std::string>{"column", "metric", "limit", "value", "result"});
    for (std::size_t k = 0; k < 2; ++k) {
      CHECK(gates[2 + k][4] == (report.gates[k].exceeded ? "**FAIL**" : "pass"));
    }
    CHECK(gates[2][4] == "pass");      // an ECE of 0.9 needs forecasts nearly opposite to the outcomes
    CHECK(gates[3][4] == "**FAIL**");  // a Brier score of 0.001 needs forecasts nearly certain and right
    CHECK(md.find("1 of 2 gates failed.") != std::string::npos);
  }
  SECTION("no gates, and every caution listed") {
    plumb::Report report = build(d, {}, small_options(), false);
    report.cautions.push_back("a caution with a | pipe");
    const std::string md = plumb::render_markdown(report);
    CHECK(md.find("No gates were set.") != std::string::npos);
    for (const std::string& c : report.cautions) {
      std::string escaped;
      for (const char ch : c) {
        if (std::string_view("\\`*_[]<>|#~!&").find(ch) != std::string_view::npos) escaped += '\\';
        escaped += ch;
      }
      CHECK(md.find("- " + escaped + "\n") != std::string::npos);
    }
    for (const char* phrase : {"population and the model stay the same", "not model validation",
                               "credit, insurance, health", "licensed practice"}) {
      CHECK(md.find(phrase) != std::string::npos);
    }
  }
}

TEST_CASE("Markdown prints non-finite numbers as n/a and leaves out absent intervals", "[report_markdown]") {
  const Data d = simulate(1000, 1, 19, false);
  plumb::ReportOptions o = small_options();
  o.bootstrap = 0;
  plumb::Report report = build(d, {}, o, false);
  report.scores[0].overall.auc = std::nan("");
  report.scores[0].overall.spiegelhalter.z = -std::numeric_limits<double>::infinity();
  const std::string md = plumb::render_markdown(report);
  const auto all = tables(md);
  REQUIRE(all.size() >= 2);
  CHECK(all[0][0].size() == 2);  // no interval column without a bootstrap
  std::map<std::string, std::string> headline;
  for (const auto& row : all[0]) headline[row[0]] = row[1];
  CHECK(headline["AUC"] == "n/a");
  CHECK(headline["Spiegelhalter Z"] == "n/a");
  // A real number elsewhere is still a number.
  CHECK(std::stod(headline["Brier score"]) == Approx(report.scores[0].overall.brier).epsilon(1e-3));
  CHECK_FALSE(std::regex_search(md, non_finite_word()));
}

TEST_CASE("The SVG legend says forecast = observed and PAV (CORP) curve, in a font stack of our own",
          "[report_svg]") {
  const Data d = simulate(3000, 1, 31, false);
  const std::string svg = plumb::render_svg(build(d, {}, small_options()));
  // Our words for the diagonal and the curve (the same as the text report's).
  CHECK(count(svg, ">forecast = observed<") == 1);
  CHECK(count(svg, ">PAV (CORP) curve<") == 1);
  CHECK(count(svg, "perfect calibration") == 0);
  CHECK(count(svg, "isotonic (PAV) fit") == 0);
  // Generic system faces in our order: not led by DejaVu Sans, ending in
  // the generic family.
  std::vector<Element> elements;
  REQUIRE(check_xml(svg, &elements) == "");
  const std::string fonts = elements.front().attributes["font-family"];
  CHECK_FALSE(fonts.starts_with("DejaVu"));
  CHECK(fonts.ends_with(", sans-serif"));
}

TEST_CASE("Markdown p-values and figures have one format per column, the text report's", "[report_markdown]") {
  const Data d = simulate(3000, 1, 13, false);
  const plumb::Report report = build(d, {}, small_options());
  const auto all = tables(plumb::render_markdown(report));
  REQUIRE(all.size() == 3);
  // p-values: 4 decimals down to 1e-4, then 2 significant digits in
  // scientific notation (the text report's rule), never "< 0.0001".
  const std::regex p_format(R"(\d\.\d{4}|\d\.\de-\d+|<1e-300|n/a)");
  // Scores and calibration errors: 4 decimals, or 3 significant digits in
  // scientific notation below 1e-3. Z: 2 decimals.
  const std::regex metric_format(R"(-?\d\.\d{4}|-?\d\.\d{2}e-\d+|n/a)");
  const std::regex stat_format(R"(-?\d+\.\d{2}|n/a)");
  for (const auto& row : all[0]) {
    if (row[0].find("p-value") != std::string::npos) CHECK(std::regex_match(row[1], p_format));
    if (row[0] == "Brier score" || row[0].starts_with("ECE") || row[0] == "AUC")
      CHECK(std::regex_match(row[1], metric_format));
    if (row[0] == "Spiegelhalter Z") CHECK(std::regex_match(row[1], stat_format));
  }
  const auto& seg = all[2];
  const std::vector<std::string>& header = seg[0];
  const auto col = [&](const std::string& name) {
    return static_cast<std::size_t>(std::find(header.begin(), header.end(), name) - header.begin());
  };
  REQUIRE(col("Holm p") < header.size());
  std::size_t checked = 0;
  for (std::size_t k = 2; k < seg.size(); ++k) {
    if (seg[k][4] == "too few rows") continue;
    CHECK(std::regex_match(seg[k][col("Holm p")], p_format));
    CHECK(std::regex_match(seg[k][col("ECE")], metric_format));
    CHECK(std::regex_match(seg[k][col("Brier")], metric_format));
    CHECK(std::regex_match(seg[k][col("log loss")], metric_format));
    CHECK(std::regex_match(seg[k][col("Spiegelhalter Z")], stat_format));
    ++checked;
  }
  CHECK(checked == 2);
}

TEST_CASE("Markdown and SVG call each concept by the text report's name", "[report_markdown]") {
  const Data d = simulate(3000, 1, 17, false);
  const plumb::Report report = build(d, {}, small_options());
  const std::string md = plumb::render_markdown(report);
  const std::string text = plumb::render_text(report, {true, false, 100});
  for (const char* name : {"calibration slope", "calibration intercept", "intercept, slope free",
                                 "calibration in the large"}) {
    CHECK(count(md, name) >= 1);
    CHECK(count(text, name) >= 1);
  }
  for (const std::string& doc : {md, text, plumb::render_svg(report)}) {
    CHECK(count(doc, "Cox slope") == 0);
    CHECK(count(doc, "calib. in the large") == 0);
    CHECK(count(doc, "p Holm") == 0);
  }
  CHECK(count(md, "equal-width") >= 1);
  CHECK(count(md, "equal width") == 0);
}
