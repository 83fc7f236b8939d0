// The formatting layer's concept table (src/io/report_names.hpp) held to
// what it names: every JSON key is a key of the report JSON, every gate name
// is a gate metric the CLI accepts, and the renderers show the labels.
#include <catch2/catch.hpp>

#include <cstdint>
#include <random>
#include <set>
#include <string>
#include <vector>

#include "io/report_names.hpp"
#include "plumb/report.hpp"
#include "plumb/io/report_render.hpp"
#include "support/test_helpers.hpp"

namespace {

plumb::Report small_report() {
  std::mt19937_64 g(5);
  std::vector<double> f, y;
  std::vector<std::uint32_t> segment;
  const std::vector<std::string> segment_names = {"east", "west"};
  for (int i = 0; i < 2000; ++i) {
    segment.push_back(static_cast<std::uint32_t>(i % 2));
    const double p = 0.05 + 0.9 * plumb::test::uniform01(g);
    f.push_back(p);
    y.push_back(plumb::test::uniform01(g) < p ? 1.0 : 0.0);
  }
  const std::vector<plumb::ForecastColumn> columns = {{"risk", f}};
  plumb::ReportOptions o;
  o.bootstrap = 20;
  plumb::Report r = plumb::build_report(columns, y, {}, segment, segment_names, {}, o);
  r.source = "rows.csv";
  r.label_column = "late";
  r.segment_column = "depot";
  return r;
}

void collect_keys(const nlohmann::json& j, std::set<std::string>& keys) {
  if (j.is_object()) {
    for (auto it = j.begin(); it != j.end(); ++it) {
      keys.insert(it.key());
      collect_keys(it.value(), keys);
    }
  } else if (j.is_array()) {
    for (const auto& e : j) collect_keys(e, keys);
  }
}

}  // namespace

TEST_CASE("every JSON key of the concept table is a key of the report JSON", "[report_names]") {
  std::set<std::string> keys;
  plumb::Report r = small_report();
  // A column mapped by a Venn-Abers map carries the interval width.
  r.scores[0].map = plumb::MapOrigin{};
  r.scores[0].map->column = "risk";
  r.scores[0].map->file = "late.map.json";
  r.scores[0].map->kind = "venn_abers";
  r.scores[0].overall.interval_width = plumb::IntervalWidth{0.01, 0.008, 0.02};
  collect_keys(plumb::report_to_json(r), keys);
  // The binnings are values of "binning" as well as keys of calibration_error.
  for (const plumb::report_names::Name* n : plumb::report_names::all) {
    if (n->json.empty()) continue;
    INFO(n->json);
    CHECK(keys.count(std::string(n->json)) == 1);
  }
}

TEST_CASE("every gate name of the concept table is a gate metric", "[report_names]") {
  std::size_t gated = 0;
  for (const plumb::report_names::Name* n : plumb::report_names::all) {
    if (n->gate.empty()) continue;
    INFO(n->gate);
    CHECK(plumb::find_gate_metric(n->gate) != nullptr);
    ++gated;
  }
  // Every gate metric but none is named by one concept (docs/cli.md lists 13).
  std::set<std::string> named;
  for (const plumb::report_names::Name* n : plumb::report_names::all)
    if (!n->gate.empty()) named.insert(std::string(n->gate));
  for (const plumb::GateMetric& m : plumb::gate_metrics()) {
    INFO(m.name);
    CHECK(named.count(std::string(m.name)) == 1);
  }
  CHECK(gated == plumb::gate_metrics().size());
}

TEST_CASE("the interval width of a Venn-Abers map: text and Markdown labels, and none without it", "[report_names]") {
  plumb::Report r = small_report();
  namespace rn = plumb::report_names;
  CHECK(plumb::render_text(r, {true, false, 100}).find(std::string(rn::interval_width.text)) == std::string::npos);
  r.scores[0].map = plumb::MapOrigin{};
  r.scores[0].map->column = "risk";
  r.scores[0].map->file = "late.map.json";
  r.scores[0].map->kind = "venn_abers";
  r.scores[0].overall.interval_width = plumb::IntervalWidth{0.01, 0.008, 0.02};
  const std::string text = plumb::render_text(r, {true, false, 100}), md = plumb::render_markdown(r);
  CHECK(text.find(std::string(rn::interval_width.text) + ", mean") != std::string::npos);
  CHECK(text.find("0.0080 | 0.0200") != std::string::npos);
  CHECK(md.find(std::string(rn::interval_width.markdown) + ", 90th percentile | 0.0200") != std::string::npos);
}

TEST_CASE("the text report shows the text labels, the Markdown report the Markdown labels", "[report_names]") {
  const plumb::Report r = small_report();
  const std::string text = plumb::render_text(r, {true, false, 100});
  const std::string md = plumb::render_markdown(r);
  namespace rn = plumb::report_names;
  for (const rn::Name* n : {&rn::observed_rate, &rn::mean_forecast, &rn::calibration_in_the_large, &rn::brier,
                            &rn::brier_mcb, &rn::brier_dsc, &rn::brier_unc, &rn::log_loss, &rn::log_loss_terms,
                            &rn::mce, &rn::calibration_slope, &rn::calibration_intercept, &rn::intercept_slope_free,
                            &rn::hosmer_lemeshow, &rn::spiegelhalter, &rn::auc, &rn::gap}) {
    INFO(n->text << " / " << n->markdown);
    CHECK(text.find(std::string(n->text)) != std::string::npos);
    CHECK(md.find(std::string(n->markdown)) != std::string::npos);
  }
}
