// Centered isotonic regression (Oron and Flournoy 2017) and its strict form:
// the definition worked by hand on small cases, monotonicity, and what it is
// for: the ranking of the raw scores kept (AUC) at the log loss of plain
// isotonic, on the demo's two halves (fit on one, measure on the other).
//
// The definition, from memory of the paper: run PAV; represent each pooled
// block (adjacent blocks of one value count as one flat stretch) by one point
// at the block's weighted mean dose (here: score) and its pooled value; join
// the points by straight lines. Beyond the end points the estimate is held
// (here, as plumb's isotonic map holds its ends).
#include <catch2/catch.hpp>
#include <cmath>
#include <fstream>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "plumb/auc.hpp"
#include "plumb/calibration_map.hpp"
#include "plumb/error.hpp"
#include "plumb/map_registry.hpp"
#include "plumb/maps/centered_isotonic_map.hpp"
#include "support/test_helpers.hpp"

using plumb::FitData;
using plumb::MapOptions;
using plumb::Scale;

namespace {

MapOptions strict_options() {
  MapOptions m;
  m.centered_strict = true;
  return m;
}

double p_at(const plumb::CalibrationMap& map, double s) { return map.map(s).probability; }

}  // namespace

TEST_CASE("centered isotonic: the points and lines by hand, unweighted", "[centered_isotonic]") {
  // scores 0.1 .. 0.7, labels 0 1 0 1 0 1 1. PAV pools (0.2, 0.3) to 1/2 and
  // (0.4, 0.5) to 1/2: one flat stretch of value 1/2 over 0.2 .. 0.5, whose
  // mean score is (0.2 + 0.3 + 0.4 + 0.5) / 4 = 0.35; 0.6 and 0.7 are both 1,
  // mean 0.65. Points: (0.1, 0), (0.35, 1/2), (0.65, 1).
  const std::vector<double> s{0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7};
  const std::vector<double> y{0, 1, 0, 1, 0, 1, 1};
  const auto map = plumb::fit_map("centered_isotonic", FitData{s, y, {}, Scale::probability});
  const auto& m = dynamic_cast<const plumb::CenteredIsotonicMap&>(*map);
  REQUIRE(m.point_score().size() == 3);
  CHECK(m.point_score()[0] == Approx(0.1));
  CHECK(m.point_score()[1] == Approx(0.35));
  CHECK(m.point_score()[2] == Approx(0.65));
  CHECK(m.point_value()[0] == 0.0);
  CHECK(m.point_value()[1] == Approx(0.5));
  CHECK(m.point_value()[2] == 1.0);
  // On the line from (0.1, 0) to (0.35, 0.5): 0.5 (s - 0.1) / 0.25.
  CHECK(p_at(m, 0.2) == Approx(0.2));  // 0.5 * 0.1 / 0.25
  CHECK(p_at(m, 0.3) == Approx(0.4));  // 0.5 * 0.2 / 0.25; plain isotonic gives 0.2 and 0.3 one value, 1/2
  CHECK(p_at(m, 0.35) == Approx(0.5));
  // From (0.35, 0.5) to (0.65, 1): 0.5 + 0.5 (s - 0.35) / 0.3.
  CHECK(p_at(m, 0.5) == Approx(0.75));       // 0.5 + 0.5 * 0.15 / 0.3
  CHECK(p_at(m, 0.6) == Approx(11.0 / 12));  // 0.5 + 0.5 * 0.25 / 0.3
  // Held beyond the end points: 0.7 lies in the fitted range (not flagged),
  // 0.05 and 0.9 outside it (flagged).
  CHECK(p_at(m, 0.7) == 1.0);
  CHECK_FALSE(m.map(0.7).outside_fit_range);
  CHECK(m.map(0.05).probability == 0.0);
  CHECK(m.map(0.05).outside_fit_range);
  CHECK(m.map(0.9).probability == 1.0);
  CHECK(m.map(0.9).outside_fit_range);
  CHECK(m.reaches_zero_or_one());
}

TEST_CASE("centered isotonic: a weighted block is drawn at its weighted mean score", "[centered_isotonic]") {
  // 0.1: label 0 (weight 1); 0.2: label 1 (weight 3); 0.3: label 0 (weight 1);
  // 0.4: label 1 (weight 1). PAV pools 0.2 and 0.3 to 3/4, drawn at
  // (3 * 0.2 + 1 * 0.3) / 4 = 0.225. Points (0.1, 0), (0.225, 3/4), (0.4, 1).
  const std::vector<double> s{0.1, 0.2, 0.3, 0.4}, y{0, 1, 0, 1}, w{1, 3, 1, 1};
  const auto map = plumb::fit_map("centered_isotonic", FitData{s, y, w, Scale::probability});
  const auto& m = dynamic_cast<const plumb::CenteredIsotonicMap&>(*map);
  REQUIRE(m.point_score().size() == 3);
  CHECK(m.point_score()[1] == Approx(0.225));
  CHECK(m.point_value()[1] == Approx(0.75));
  // 0.3: 3/4 + (1/4) (0.3 - 0.225) / (0.4 - 0.225) = 3/4 + (1/4)(3/7) = 6/7.
  CHECK(p_at(m, 0.3) == Approx(6.0 / 7));
  // 0.2: (3/4) (0.2 - 0.1) / 0.125 = 0.6.
  CHECK(p_at(m, 0.2) == Approx(0.6));
}

TEST_CASE("centered isotonic: with no violations it is the line through the rates", "[centered_isotonic]") {
  // Per-score rates 1/4, 2/4, 3/4 already increase: PAV pools nothing, so the
  // points are the scores and their rates, and the map is their
  // interpolation (as plain isotonic with linear between blocks).
  const std::vector<double> s{0.2, 0.2, 0.2, 0.2, 0.5, 0.5, 0.5, 0.5, 0.8, 0.8, 0.8, 0.8};
  const std::vector<double> y{1, 0, 0, 0, 1, 1, 0, 0, 1, 1, 1, 0};
  const auto cir = plumb::fit_map("centered_isotonic", FitData{s, y, {}, Scale::probability});
  const auto iso = plumb::fit_map("isotonic", FitData{s, y, {}, Scale::probability});
  for (double t : {0.2, 0.3, 0.35, 0.5, 0.65, 0.8}) CHECK(p_at(*cir, t) == Approx(p_at(*iso, t)));
  CHECK(p_at(*cir, 0.35) == Approx(0.375));  // halfway from 1/4 to 1/2
  CHECK_FALSE(cir->reaches_zero_or_one());
}

TEST_CASE("centered isotonic: the strict form's minimal slope, by hand", "[centered_isotonic]") {
  // The first case again, strict: p = (1 - 1e-6) c(s) + 1e-6 T(s), with
  // T(s) = (1 + tanh((s - 0.4) / 0.3)) / 2 (range 0.1 .. 0.7). At 0.7,
  // T = (1 + tanh 1) / 2 = 1 / (1 + e^-2) = 0.8807970779778823, so
  // p = 1 - 1e-6 (1 - 0.8807970779778823), and at 0.65 T = 1/(1 + e^(-5/3)).
  const std::vector<double> s{0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7};
  const std::vector<double> y{0, 1, 0, 1, 0, 1, 1};
  const auto map = plumb::fit_map("centered_isotonic", FitData{s, y, {}, Scale::probability}, strict_options());
  CHECK(p_at(*map, 0.7) == Approx(1.0 - 1e-6 * (1.0 - 0.8807970779778823)).epsilon(1e-15));
  CHECK(1.0 - p_at(*map, 0.7) == Approx(1e-6 * (1.0 - 0.8807970779778823)).epsilon(1e-6));
  CHECK(1.0 - p_at(*map, 0.65) == Approx(1e-6 * (1.0 - 1.0 / (1.0 + std::exp(-5.0 / 3)))).epsilon(1e-6));
  CHECK(p_at(*map, 0.65) < p_at(*map, 0.7));  // the weak form ties them at 1
  CHECK(p_at(*map, 0.05) > 0.0);              // and 0.05 with 0.1 at 0
  CHECK(p_at(*map, 0.05) < p_at(*map, 0.1));
  CHECK(p_at(*map, 0.3) == Approx(0.4).epsilon(1e-5));
}

TEST_CASE("centered isotonic: monotone, strictly increasing between its end points, the strict form everywhere",
          "[centered_isotonic]") {
  std::mt19937_64 g(140417);
  for (int round = 0; round < 20; ++round) {
    std::vector<double> s, y;
    for (int i = 0; i < 300; ++i) {
      const double p = plumb::test::uniform01(g);
      s.push_back(std::round(p * 50) / 50);  // many ties of score, so PAV pools
      y.push_back(plumb::test::uniform01(g) < 0.2 + 0.5 * p ? 1.0 : 0.0);
    }
    const FitData data{s, y, {}, Scale::probability};
    const auto weak = plumb::fit_map("centered_isotonic", data);
    const auto strict = plumb::fit_map("centered_isotonic", data, strict_options());
    const auto& w = dynamic_cast<const plumb::CenteredIsotonicMap&>(*weak);
    const double first = w.point_score().front(), last = w.point_score().back();
    for (int k = 0; k < 1000; ++k) {
      const double a = -0.1 + 1.2 * k / 1000.0, b = -0.1 + 1.2 * (k + 1) / 1000.0;
      INFO("round " << round << ", scores " << a << " and " << b);
      CHECK(p_at(*weak, a) <= p_at(*weak, b));
      if (a >= first && b <= last) CHECK(p_at(*weak, a) < p_at(*weak, b));
      CHECK(p_at(*strict, a) < p_at(*strict, b));
    }
  }
}

namespace {

struct Half {
  std::vector<double> score, label;
};

// data/holdout.csv (the invented demo): risk (column 4) and missed (column 5).
void read_demo(Half& first, Half& second) {
  std::ifstream in(std::string(PLUMB_TEST_SOURCE_DIR) + "/../data/holdout.csv");
  REQUIRE(in);
  std::string line;
  std::getline(in, line);
  REQUIRE(line == "parcel_id,depot,route_km,risk,missed");
  std::vector<double> score, label;
  while (std::getline(in, line)) {
    std::stringstream row(line);
    std::string cell[5];
    for (std::string& c : cell) std::getline(row, c, ',');
    score.push_back(std::stod(cell[3]));
    label.push_back(std::stod(cell[4]));
  }
  REQUIRE(score.size() == 20000);
  const std::size_t n = score.size() / 2;
  first.score.assign(score.begin(), score.begin() + n);
  first.label.assign(label.begin(), label.begin() + n);
  second.score.assign(score.begin() + n, score.end());
  second.label.assign(label.begin() + n, label.end());
}

std::vector<double> mapped(const plumb::CalibrationMap& map, const std::vector<double>& score) {
  std::vector<double> out;
  for (double s : score) out.push_back(map.map(s).probability);
  return out;
}

}  // namespace

TEST_CASE("centered isotonic, strict: the demo's ranking kept at plain isotonic's log loss", "[centered_isotonic]") {
  // The targets (issue 14): on data the map did not see, the AUC of
  // the mapped scores within 0.001 of the raw scores' AUC, and the mean log
  // loss within 1% of plain isotonic's. Each half of the demo in turn fits,
  // the other measures.
  Half a, b;
  read_demo(a, b);
  for (int turn = 0; turn < 2; ++turn) {
    const Half& fit = turn == 0 ? a : b;
    const Half& test = turn == 0 ? b : a;
    INFO("fitted on half " << turn + 1);
    const FitData fit_data{fit.score, fit.label, {}, Scale::probability};
    const FitData test_data{test.score, test.label, {}, Scale::probability};
    const auto iso = plumb::fit_map("isotonic", fit_data);
    const auto cir = plumb::fit_map("centered_isotonic", fit_data);
    const auto strict = plumb::fit_map("centered_isotonic", fit_data, strict_options());
    const double raw_auc = plumb::auc(test.score, test.label);
    const double iso_auc = plumb::auc(mapped(*iso, test.score), test.label);
    const double cir_auc = plumb::auc(mapped(*cir, test.score), test.label);
    const double strict_auc = plumb::auc(mapped(*strict, test.score), test.label);
    const double iso_ll = plumb::mean_log_loss(*iso, test_data);
    const double cir_ll = plumb::mean_log_loss(*cir, test_data);
    const double strict_ll = plumb::mean_log_loss(*strict, test_data);
    WARN("AUC raw " << raw_auc << ", isotonic " << iso_auc << ", centered " << cir_auc << ", strict " << strict_auc
                    << "; log loss isotonic " << iso_ll << ", centered " << cir_ll << ", strict " << strict_ll);
    CHECK(std::abs(strict_auc - raw_auc) <= 0.001);
    CHECK(strict_ll <= 1.01 * iso_ll);
    CHECK(cir_ll <= 1.01 * iso_ll);
    // Plain isotonic's ties cost ranking on the same rows; the centered line
    // costs less of it.
    CHECK(iso_auc < raw_auc);
    CHECK(std::abs(cir_auc - raw_auc) < std::abs(iso_auc - raw_auc));
  }
}

TEST_CASE("centered isotonic: the artifact's parameters are checked on load", "[centered_isotonic]") {
  const std::vector<double> s{0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7};
  const std::vector<double> y{0, 1, 0, 1, 0, 1, 1};
  const auto map = plumb::fit_map("centered_isotonic", FitData{s, y, {}, Scale::probability}, strict_options());
  const nlohmann::json good = map->parameters();
  CHECK(good.at("increase") == "strict");
  CHECK(good.at("tilt") == plumb::centered_isotonic_tilt);
  auto load = [](const nlohmann::json& p) { plumb::load_map("centered_isotonic", Scale::probability, p, "m.json"); };
  CHECK_FALSE(plumb::test::error_kind([&] { load(good); }));
  auto broken = [&](const char* key, nlohmann::json value) {
    nlohmann::json p = good;
    p[key] = std::move(value);
    return plumb::test::error_kind([&] { load(p); });
  };
  CHECK(broken("increase", "sometimes") == plumb::ErrorKind::artifact);
  CHECK(broken("tilt", 0.0) == plumb::ErrorKind::artifact);           // strict without a slope
  CHECK(broken("point_value", {0.0, 0.5, 0.5}) == plumb::ErrorKind::artifact);  // a flat stretch
  CHECK(broken("point_score", {0.1, 0.65, 0.35}) == plumb::ErrorKind::artifact);
  CHECK(broken("point_score", {0.0, 0.35, 0.65}) == plumb::ErrorKind::artifact);  // below the fitted range
  CHECK(broken("point_weight", {1.0, 4.0}) == plumb::ErrorKind::artifact);
  nlohmann::json weak = good;
  weak["increase"] = "weak";
  CHECK(plumb::test::error_kind([&] { load(weak); }) == plumb::ErrorKind::artifact);  // weak with a slope
  weak["tilt"] = 0.0;
  CHECK_FALSE(plumb::test::error_kind([&] { load(weak); }));
}

TEST_CASE("centered isotonic: the map is the line through its points at any score (the search's guide)",
          "[centered_isotonic]") {
  // The demo's 51 points (enough for the map's search guide): every score
  // maps to the straight line between the two points around it, found here
  // by a plain scan.
  Half a, b;
  read_demo(a, b);
  const auto map = plumb::fit_map("centered_isotonic", FitData{a.score, a.label, {}, Scale::probability});
  const auto& m = dynamic_cast<const plumb::CenteredIsotonicMap&>(*map);
  const std::vector<double>&x = m.point_score(), &y = m.point_value();
  REQUIRE(x.size() >= 16);
  std::mt19937_64 g(2017);
  std::vector<double> scores = x;  // the points themselves, and random scores
  for (int k = 0; k < 20000; ++k) scores.push_back(plumb::test::uniform01(g));
  for (double s : scores) {
    double expected = y.front();
    if (s >= x.back()) expected = y.back();
    else
      for (std::size_t i = 0; i + 1 < x.size(); ++i)
        if (x[i] <= s && s < x[i + 1]) expected = y[i] + (s - x[i]) / (x[i + 1] - x[i]) * (y[i + 1] - y[i]);
    INFO("score " << s);
    CHECK(m.map(s).probability == Approx(expected).margin(1e-15));
  }
}
