// Gates of the report: which side each metric may be bounded on, the value
// each reads, and the rule that a figure that cannot be computed fails
// whichever side it is bounded on. The summaries are set by hand, so every
// expected value is stated here, not taken from the report's computation.
#include <catch2/catch.hpp>
#include <cmath>
#include <limits>
#include <string>

#include "plumb/report.hpp"

namespace {

plumb::ScoreSummary summary() {
  plumb::ScoreSummary s;
  s.name = "risk";
  s.auc = 0.75;
  s.calibration_in_the_large = -0.02;
  s.regression.slope = 0.8;
  s.hosmer_lemeshow.p_value = 0.04;
  s.spiegelhalter.p_value = 0.3;
  s.ece_equal_width.ece = 0.05;
  return s;
}

plumb::Gate gate(const std::string& metric, double limit, plumb::GateBound bound) {
  return plumb::Gate{"", metric, limit, bound};
}

}  // namespace

TEST_CASE("a --min gate fails below its limit and holds at it", "[gates]") {
  const plumb::ScoreSummary s = summary();
  CHECK_FALSE(plumb::check_gate(gate("auc", 0.75, plumb::GateBound::min), s).exceeded);
  CHECK(plumb::check_gate(gate("auc", 0.76, plumb::GateBound::min), s).exceeded);
  CHECK(plumb::check_gate(gate("hosmer_lemeshow_p", 0.05, plumb::GateBound::min), s).exceeded);
  CHECK_FALSE(plumb::check_gate(gate("spiegelhalter_p", 0.05, plumb::GateBound::min), s).exceeded);
  CHECK(plumb::gate_comparison(plumb::check_gate(gate("auc", 0.76, plumb::GateBound::min), s)) == "<");
  CHECK(plumb::gate_comparison(plumb::check_gate(gate("auc", 0.7, plumb::GateBound::min), s)) == ">=");
}

TEST_CASE("a --max gate fails above its limit and holds at it", "[gates]") {
  const plumb::ScoreSummary s = summary();
  CHECK_FALSE(plumb::check_gate(gate("ece", 0.05, plumb::GateBound::max), s).exceeded);
  CHECK(plumb::check_gate(gate("ece", 0.049, plumb::GateBound::max), s).exceeded);
  CHECK(plumb::gate_comparison(plumb::check_gate(gate("ece", 0.049, plumb::GateBound::max), s)) == ">");
  // Two-sided figures read the signed value.
  CHECK(plumb::check_gate(gate("calibration_in_the_large", -0.01, plumb::GateBound::min), s).exceeded);
  CHECK_FALSE(plumb::check_gate(gate("calibration_in_the_large", 0.0, plumb::GateBound::max), s).exceeded);
  CHECK(plumb::check_gate(gate("slope", 0.9, plumb::GateBound::min), s).exceeded);
}

TEST_CASE("a figure that cannot be computed fails a gate on either side", "[gates]") {
  plumb::ScoreSummary s = summary();
  s.auc = std::numeric_limits<double>::quiet_NaN();
  const plumb::GateResult r = plumb::check_gate(gate("auc", 0.0, plumb::GateBound::min), s);
  CHECK(r.exceeded);
  CHECK(plumb::gate_comparison(r).empty());
  s.ece_equal_width.ece = std::numeric_limits<double>::quiet_NaN();
  CHECK(plumb::check_gate(gate("ece", 1.0, plumb::GateBound::max), s).exceeded);
}

TEST_CASE("gate metrics: each listed name is found, bounded on a side, and older spellings still read",
          "[gates]") {
  for (const plumb::GateMetric& m : plumb::gate_metrics()) {
    REQUIRE(plumb::find_gate_metric(m.name) == &m);
    CHECK((m.max || m.min));
  }
  CHECK(plumb::find_gate_metric("sharpness") == nullptr);
  REQUIRE(plumb::find_gate_metric("hl_p") != nullptr);
  CHECK(plumb::find_gate_metric("hl_p")->name == "hosmer_lemeshow_p");
  REQUIRE(plumb::find_gate_metric("citl") != nullptr);
  CHECK(plumb::gate_value(summary(), "citl") == 0.02);
  CHECK(std::fabs(plumb::gate_value(summary(), "slope_gap") - 0.2) < 1e-15);
  CHECK(plumb::find_gate_metric("auc")->min);
  CHECK_FALSE(plumb::find_gate_metric("auc")->max);
  CHECK_FALSE(plumb::find_gate_metric("ece")->min);
}
