// The multi-class report's renderers (class_report_render.hpp) on a report
// of seeded invented rows: the JSON holds every number under the concept
// table's keys, the text fits its width and names what it shows, the
// Markdown tables are regular and the SVG is well-formed with one diagram
// for the top label and one per class, points where the axis transform puts
// them.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <random>
#include <regex>
#include <sstream>
#include <string>

#include "io/report_names.hpp"
#include "io/text_painter.hpp"
#include "plumb/class_report.hpp"
#include "plumb/io/class_report_render.hpp"
#include "support/xml_check.hpp"

namespace {

namespace rn = plumb::report_names;

// 4 classes, the last labelled by no row; an over-confident score.
plumb::ClassScores rows(std::size_t n, bool weighted) {
  std::mt19937_64 gen(5);
  std::normal_distribution<double> z(0.0, 1.0);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  plumb::ClassScores s;
  s.classes = {"on_time", "late", "lost|gone", "returned"};
  s.rows = n;
  for (std::size_t r = 0; r < n; ++r) {
    double e[4], t[3], sum = 0.0, tsum = 0.0;
    for (int k = 0; k < 3; ++k) {
      const double x = z(gen);
      tsum += t[k] = std::exp(x);
      sum += e[k] = std::exp(1.8 * x);
    }
    sum += e[3] = 0.05 * sum;
    for (double v : e) s.values.push_back(v / sum);
    const double draw = u(gen) * tsum;
    s.label.push_back(draw < t[0] ? 0 : draw < t[0] + t[1] ? 1 : 2);
    if (weighted) s.weight.push_back(0.5 + u(gen));
  }
  return s;
}

plumb::ClassReport report(bool weighted, std::size_t bootstrap = 40) {
  plumb::ClassReportOptions o;
  o.bootstrap = bootstrap;
  o.threads = 1;
  plumb::ClassReport r = plumb::build_class_report(rows(1500, weighted), o);
  r.source = "outcomes.csv";
  r.label_column = "outcome";
  if (weighted) r.weight_column = "parcels";
  r.score_columns = {"p_on_time", "p_late", "p_lost", "p_returned"};
  return r;
}

std::size_t count(const std::string& text, const std::string& needle) {
  std::size_t k = 0;
  for (std::size_t at = text.find(needle); at != std::string::npos; at = text.find(needle, at + needle.size())) ++k;
  return k;
}

}  // namespace

TEST_CASE("class report JSON holds every figure under the concept table's keys", "[class_report][render]") {
  const plumb::ClassReport r = report(false);
  const nlohmann::json j = plumb::class_report_to_json(r);
  CHECK(j.at("format") == "plumb-class-report");
  CHECK(j.at("format_version") == 1);
  CHECK(j.at(std::string(rn::class_brier.json)).get<double>() == r.brier);
  CHECK(j.at(std::string(rn::class_log_loss.json)).get<double>() == r.log_loss);
  CHECK(j.at(std::string(rn::accuracy.json)).get<double>() == r.accuracy);
  CHECK(j.at(std::string(rn::mean_confidence.json)).get<double>() == r.mean_confidence);
  CHECK(j.at(std::string(rn::confidence_gap.json)).get<double>() == r.confidence_gap);
  CHECK(j.at(std::string(rn::label_probability_zero.json)).get<std::uint64_t>() == r.true_class_at_zero);
  const auto& top = j.at(std::string(rn::top_label_ece.json));
  CHECK(top.at("calibration_error").at("equal_width").at("ece").get<double>() == r.top_label_equal_width.ece);
  CHECK(top.at("calibration_error").at("equal_mass").at("ece").get<double>() == r.top_label_equal_mass.ece);
  CHECK(top.at("reliability_table").at("bins").size() == r.options.bins);
  CHECK(top.at("reliability_table").at("bins").at(0).contains("band"));
  CHECK(j.at(std::string(rn::classwise_ece.json)).at("equal_width").get<double>() == r.classwise_ece_equal_width);
  REQUIRE(j.at("classes").size() == 4);
  CHECK(j.at("classes").at(3).at("name") == "returned");
  CHECK(j.at("classes").at(3).at("rows") == 0);
  CHECK(j.at("classes").at(1).at(std::string(rn::class_share.json)).get<double>() == r.classes[1].observed_rate);
  const auto& boot = j.at("bootstrap");
  for (const rn::Name* n : {&rn::class_brier, &rn::class_log_loss, &rn::accuracy, &rn::confidence_gap,
                            &rn::top_label_ece, &rn::classwise_ece})
    CHECK(boot.contains(std::string(n->json)));
  CHECK(boot.at("accuracy").at("lo").get<double>() == r.bootstrap->accuracy.lo);
  CHECK(j.at("cautions").size() == r.cautions.size());
  // Without replicates: null, and no band in the table.
  const nlohmann::json none = plumb::class_report_to_json(report(false, 0));
  CHECK(none.at("bootstrap").is_null());
  CHECK(!none.at("top_label").at("reliability_table").at("bins").at(0).contains("band"));
}

TEST_CASE("class report text fits its width and names what it shows", "[class_report][render]") {
  const plumb::ClassReport r = report(true);
  for (const int width : {80, 64, 120}) {
    for (const bool unicode : {true, false}) {
      INFO("width " << width << " unicode " << unicode);
      const std::string text = plumb::render_class_text(r, {unicode, false, width});
      std::istringstream lines(text);
      std::string line;
      while (std::getline(lines, line)) {
        INFO(line);
        CHECK(plumb::text::visible_width(line) <= static_cast<std::size_t>(width));
      }
      for (const rn::Name* n : {&rn::class_brier, &rn::class_log_loss, &rn::accuracy, &rn::mean_confidence,
                                &rn::confidence_gap, &rn::top_label_ece, &rn::classwise_ece})
        CHECK(text.find(std::string(n->text)) != std::string::npos);
      CHECK(text.find(plumb::probability_text(r.accuracy)) != std::string::npos);
      CHECK(text.find(plumb::metric_text(r.classwise_ece_equal_width)) != std::string::npos);
      CHECK(text.find("confidence (top-label probability)") != std::string::npos);
      CHECK(text.find("reliability: class lost|gone, one-vs-rest") != std::string::npos);
      CHECK(text.find("weight parcels") != std::string::npos);
      // The class no row is labelled with is cautioned.
      CHECK(text.find("no row is labelled with class 'returned'") != std::string::npos);
      if (!unicode) {
        for (unsigned char c : text) CHECK(c < 0x80);
      }
    }
  }
}

TEST_CASE("class report Markdown tables are regular", "[class_report][render]") {
  const plumb::ClassReport r = report(false);
  const std::string md = plumb::render_class_markdown(r);
  // Every table row has as many cells as its header.
  std::istringstream lines(md);
  std::string line;
  std::size_t cells = 0, tables = 0;
  while (std::getline(lines, line)) {
    if (!line.starts_with("|")) {
      cells = 0;
      continue;
    }
    // Escaped pipes ("\|") are not cell borders.
    const std::size_t n = count(line, "|") - count(line, "\\|");
    if (cells == 0) {
      cells = n;
      ++tables;
    }
    INFO(line);
    CHECK(n == cells);
  }
  // Headline, top label, the classes, and one per class.
  CHECK(tables == 3 + 4);
  CHECK(md.find(std::string(rn::classwise_ece.markdown)) != std::string::npos);
  CHECK(md.find("lost\\|gone") != std::string::npos);
  CHECK(md.find("| " + std::string(rn::accuracy.markdown) + " | " + plumb::probability_text(r.accuracy) + " | " +
                plumb::interval_text(plumb::probability_text(r.bootstrap->accuracy.lo),
                                     plumb::probability_text(r.bootstrap->accuracy.hi)) +
                " |") != std::string::npos);
  CHECK(md.find("credit, insurance, health") != std::string::npos);
}

TEST_CASE("class report SVG is well-formed, one diagram for the top label and one per class",
          "[class_report][render]") {
  const plumb::ClassReport r = report(false);
  const std::string svg = plumb::render_class_svg(r);
  std::vector<plumb::test::Element> elements;
  REQUIRE(plumb::test::check_xml(svg, &elements) == "");
  CHECK(count(svg, "<g class=\"diagram\">") == 1 + 4);
  CHECK(svg.find("nan") == std::string::npos);
  CHECK(svg.find("inf\"") == std::string::npos);
  // The first plot area is the top label's; its first non-empty bin's point
  // sits at x = X + S * mean confidence, y = Y + S * (1 - accuracy).
  const plumb::test::Element* area = nullptr;
  const plumb::test::Element* point = nullptr;
  for (const auto& e : elements) {
    if (!area && e.name == "rect" && e.attributes.count("class") && e.attributes.at("class") == "plot-area") area = &e;
    if (area && !point && e.name == "circle" && e.attributes.count("class") && e.attributes.at("class") == "bin")
      point = &e;
  }
  REQUIRE(area);
  REQUIRE(point);
  const plumb::ReliabilityBin* bin = nullptr;
  for (const auto& b : r.top_label_table.bins)
    if (!bin && b.weight > 0) bin = &b;
  REQUIRE(bin);
  const double X = std::stod(area->attributes.at("x")), Y = std::stod(area->attributes.at("y"));
  const double S = std::stod(area->attributes.at("width"));
  CHECK(std::abs(std::stod(point->attributes.at("cx")) - (X + S * bin->mean_forecast)) <= 0.01);
  CHECK(std::abs(std::stod(point->attributes.at("cy")) - (Y + S * (1 - bin->observed))) <= 0.01);
  CHECK(svg.find(">accuracy<") != std::string::npos);
  CHECK(svg.find("class lost|gone, one-vs-rest") != std::string::npos);
}

TEST_CASE("class report gates show in every renderer but the SVG", "[class_report][render]") {
  plumb::ClassReport r = report(false, 0);
  plumb::Gate tight;
  tight.metric = "brier";
  tight.limit = r.brier / 2;  // fails
  plumb::Gate loose;
  loose.metric = "accuracy";
  loose.bound = plumb::GateBound::min;
  loose.limit = 0.0;  // holds
  r.gates = {plumb::check_class_gate(tight, r), plumb::check_class_gate(loose, r)};
  REQUIRE(r.any_gate_exceeded());
  const nlohmann::json j = plumb::class_report_to_json(r);
  CHECK(j.at("any_gate_exceeded") == true);
  CHECK(j.at("gates").at(0).at("exceeded") == true);
  CHECK(j.at("gates").at(1).at("bound") == "min");
  const std::string text = plumb::render_class_text(r, {false, false, 80});
  CHECK(text.find("1 of 2 limits breached") != std::string::npos);
  CHECK(text.find("BREACHED") != std::string::npos);
  const std::string md = plumb::render_class_markdown(r);
  CHECK(md.find("1 of 2 gates failed.") != std::string::npos);
  CHECK(md.find("| brier | at most " + plumb::significant_text(r.brier / 2, 6)) != std::string::npos);
}

namespace {

// The scores as read and a temperature map's model of them, side by side,
// with a gate on each.
plumb::ClassReportSet two_models() {
  plumb::ClassReportOptions o;
  o.bootstrap = 20;
  o.threads = 1;
  const plumb::ClassScores s = rows(1500, false);
  // Fitted on a copy in which some rows are labelled with the last class
  // (a fit refuses a class without rows; the report cautions it).
  plumb::ClassScores fit_rows = s;
  for (std::size_t r = 0; r < fit_rows.rows; r += 50) fit_rows.label[r] = 3;
  const auto map = plumb::fit_class_map("temperature", fit_rows);
  plumb::ClassReportSet set;
  set.models.push_back(plumb::build_class_report(s, o));
  set.models.push_back(plumb::build_class_report(plumb::calibrate_class_scores(*map, s), o));
  const char* names[2] = {"p_*", "p_* via t.map.json"};
  for (int m = 0; m < 2; ++m) {
    plumb::ClassReport& r = set.models[m];
    r.name = names[m];
    r.source = "outcomes.csv";
    r.label_column = "outcome";
    r.score_columns = {"p_on_time", "p_late", "p_lost", "p_returned"};
  }
  plumb::ClassMapOrigin origin;
  origin.file = "maps/t.map.json";
  origin.kind = "temperature";
  origin.integrity = std::string(64, 'a');
  origin.fitted_source = "fit.csv";
  origin.fitted_rows = 1500;
  set.models[1].map = origin;
  plumb::Gate g;
  g.metric = "log_loss";
  g.limit = set.models[1].log_loss;  // the map's model holds it exactly
  for (int m = 0; m < 2; ++m) {
    plumb::GateResult result = plumb::check_class_gate(g, set.models[m]);
    result.column = names[m];
    set.gates.push_back(result);
  }
  return set;
}

}  // namespace

TEST_CASE("class report set: JSON version 2 holds each model under its name", "[class_report][render]") {
  const plumb::ClassReportSet set = two_models();
  // Temperature scaling fitted on these rows lowers their log loss (it
  // minimises it over T, and T = 1 is the scores as read).
  REQUIRE(set.models[1].log_loss < set.models[0].log_loss);
  const nlohmann::json j = plumb::class_report_to_json(set);
  CHECK(j.at("format_version") == 2);
  CHECK_FALSE(j.contains("brier"));
  REQUIRE(j.at("models").size() == 2);
  CHECK(j.at("models").at(0).at("name") == "p_*");
  CHECK(j.at("models").at(0).at("map").is_null());
  CHECK(j.at("models").at(1).at("map").at("kind") == "temperature");
  CHECK(j.at("models").at(1).at("map").at("file") == "maps/t.map.json");
  CHECK(j.at("models").at(1).at(std::string(rn::class_log_loss.json)).get<double>() == set.models[1].log_loss);
  // The first model's members are those of its own version 1 document.
  const nlohmann::json one = plumb::class_report_to_json(set.models[0]);
  CHECK(one.at("format_version") == 1);
  for (const char* key : {"brier", "log_loss", "top_label", "classes", "bootstrap", "classwise_ece"})
    CHECK(j.at("models").at(0).at(key) == one.at(key));
  CHECK(j.at("gates").at(0).at("model") == "p_*");
  CHECK(j.at("gates").at(0).at("exceeded") == true);
  CHECK(j.at("gates").at(1).at("exceeded") == false);
  CHECK(j.at("any_gate_exceeded") == true);
}

TEST_CASE("class report set: text, Markdown and SVG show every model", "[class_report][render]") {
  const plumb::ClassReportSet set = two_models();
  for (const int width : {80, 64}) {
    const std::string text = plumb::render_class_text(set, {false, false, width});
    std::istringstream lines(text);
    std::string line;
    while (std::getline(lines, line)) {
      INFO(line);
      CHECK(plumb::text::visible_width(line) <= static_cast<std::size_t>(width));
    }
    CHECK(count(text, "[models side by side]") == 1);
    CHECK(count(text, "[headline figures: p_*]") == 1);
    CHECK(count(text, "[headline figures: p_* via t.map.json]") == 1);
    CHECK(text.find("a temperature map (maps/t.map.json)") != std::string::npos);
    CHECK(text.find(plumb::metric_text(set.models[1].log_loss)) != std::string::npos);
    CHECK(text.find("1 of 2 limits breached") != std::string::npos);
    // The rows' own caution (a class no row is labelled with) once, not once per model.
    CHECK(count(text, "no row is labelled with class 'returned'") == 1);
  }
  plumb::ClassReportSet own = set;
  own.models[1].cautions.push_back("only the map's");
  const std::vector<std::string> cautions = own.cautions();
  CHECK(std::count(cautions.begin(), cautions.end(), "p_* via t.map.json: only the map's") == 1);
  CHECK(std::count(cautions.begin(), cautions.end(), set.models[0].cautions.front()) == 1);
  const std::string md = plumb::render_class_markdown(set);
  CHECK(md.find("## Models side by side") != std::string::npos);
  CHECK(md.find("| p\\_\\* via t.map.json | temperature (maps/t.map.json) | " + plumb::metric_text(set.models[1].brier)) !=
        std::string::npos);
  CHECK(count(md, "### Top label") == 2);
  CHECK(md.find("1 of 2 gates failed.") != std::string::npos);
  const std::string svg = plumb::render_class_svg(set);
  REQUIRE(plumb::test::check_xml(svg, nullptr) == "");
  CHECK(count(svg, "<g class=\"diagram\">") == 2 * (1 + 4));
  CHECK(svg.find("model p_* via t.map.json (temperature map)") != std::string::npos);
}
