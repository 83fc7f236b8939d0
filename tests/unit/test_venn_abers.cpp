// Venn-Abers predictors (Vovk and Petej 2014) and their cross form (Vovk,
// Petej and Fedorova 2015): small cases worked by hand, the precomputed knots
// against a refit per test score (plumb's PAV on the calibration rows with
// the test row added), the interval around the isotonic fit, the artifact
// round trip, and the validity property in a simulation with a known truth.
//
// The definition (Vovk and Petej 2014, section 2, as we know it): for a test
// score s, p0 is the isotonic fit at s of the calibration rows plus (s, 0),
// p1 that of the rows plus (s, 1); the merged probability is
// p1 / (1 - p0 + p1). The cross form's merge (Vovk, Petej and Fedorova 2015,
// the log-loss rule, from memory): G1 / (G0 + G1), G1 the geometric mean of
// the folds' p1 and G0 that of the folds' 1 - p0.
#include <catch2/catch.hpp>
#include <cmath>
#include <cstdint>
#include <random>
#include <string>
#include <vector>

#include "plumb/calibration_map.hpp"
#include "plumb/error.hpp"
#include "plumb/map_registry.hpp"
#include "plumb/maps/venn_abers_map.hpp"
#include "plumb/pav.hpp"
#include "plumb/report.hpp"

using plumb::FitData;
using plumb::MapOptions;
using plumb::Scale;

namespace {

// A uniform double in [0, 1) from 53 bits of the engine (the engine's
// sequence is fixed by the standard; std's distributions are not).
double uniform(std::mt19937_64& g) { return static_cast<double>(g() >> 11) * 0x1.0p-53; }

// The value at the test row of PAV on the calibration rows with (s, label)
// added: the refit the precomputation replaces.
double refit(const std::vector<double>& x, const std::vector<double>& y, const std::vector<double>& w, double s,
             double label) {
  std::vector<double> xs = x, ys = y, ws = w;
  xs.push_back(s);
  ys.push_back(label);
  ws.push_back(1.0);
  for (const plumb::PavBlock& b : plumb::pav_fit(xs, ys, ws))
    if (b.score_lo <= s && s <= b.score_hi) return b.value;
  FAIL("the test row is in no block");
  return -1.0;
}

}  // namespace

TEST_CASE("venn_abers: three calibration rows, worked by hand", "[venn_abers]") {
  // Rows (0.1, 0), (0.2, 1), (0.3, 0). By hand, pooling adjacent violators:
  //  s = 0.25, label 0: 0, 1, 0, 0 -> 0, (1 + 0 + 0) / 3: p0 = 1/3;
  //            label 1: 0, 1, 1, 0 -> 0, (1 + 1 + 0) / 3: p1 = 2/3; p = (2/3) / (4/3) = 1/2.
  //  s = 0.05, label 0: 0, 0, 1, 0 -> 0, 0, 1/2: p0 = 0;
  //            label 1: 1, 0, 1, 0 -> 1/2, 1/2: p1 = 1/2; p = (1/2) / (3/2) = 1/3.
  //  s = 0.2 (a calibration score: the test row joins it), label 0: 0, (1 + 0)/2, 0
  //            -> 0, 1/3: p0 = 1/3; label 1: 0, 1, 0 -> 0, 2/3: p1 = 2/3; p = 1/2.
  //  s = 0.4, label 0: 0, 1, 0, 0 -> 0, (1 + 0 + 0) / 3: p0 = 1/3;
  //            label 1: 0, 1, 0, 1 -> 0, 1/2, 1: p1 = 1; p = 1 / (5/3) = 3/5.
  const std::vector<double> s{0.1, 0.2, 0.3}, y{0, 1, 0};
  const auto map = plumb::fit_map("venn_abers", FitData{s, y, {}, Scale::probability});
  REQUIRE(map->has_interval());
  struct Case {
    double s, p0, p1, p;
  };
  for (const Case& c : {Case{0.25, 1.0 / 3, 2.0 / 3, 0.5}, Case{0.05, 0.0, 0.5, 1.0 / 3},
                        Case{0.2, 1.0 / 3, 2.0 / 3, 0.5}, Case{0.4, 1.0 / 3, 1.0, 0.6}}) {
    INFO("score " << c.s);
    const auto i = map->interval(c.s);
    CHECK(i[0] == Approx(c.p0).margin(1e-15));
    CHECK(i[1] == Approx(c.p1).margin(1e-15));
    CHECK(map->map(c.s).probability == Approx(c.p).margin(1e-15));
  }
  CHECK(map->map(0.05).outside_fit_range);
  CHECK_FALSE(map->map(0.25).outside_fit_range);
}

TEST_CASE("venn_abers: the knots equal a refit per test score, ties and weights included", "[venn_abers]") {
  std::mt19937_64 g(20261203);
  for (int round = 0; round < 40; ++round) {
    INFO("round " << round);
    const std::size_t n = 2 + g() % 60;
    std::vector<double> x(n), y(n), w(n);
    const double steep = 4.0 * uniform(g);
    for (std::size_t i = 0; i < n; ++i) {
      x[i] = std::floor(uniform(g) * 12.0) / 12.0;  // heavy ties
      y[i] = uniform(g) < 0.2 + 0.6 * std::pow(x[i], steep) ? 1.0 : 0.0;
      w[i] = round % 2 == 0 ? 1.0 : 0.25 + 3.0 * uniform(g);
    }
    y[0] = 0.0;  // both classes, as every fit requires
    y[1] = 1.0;
    const auto map = plumb::fit_map("venn_abers", FitData{x, y, w, Scale::probability});
    // Every knot and a point in every gap (and beyond both ends).
    std::vector<double> tests;
    for (int k = 0; k <= 24; ++k) tests.push_back(k / 24.0);
    for (double t : tests) {
      INFO("score " << t);
      const auto i = map->interval(t);
      CHECK(i[0] == Approx(refit(x, y, w, t, 0.0)).margin(1e-12));
      CHECK(i[1] == Approx(refit(x, y, w, t, 1.0)).margin(1e-12));
      CHECK(map->map(t).probability == Approx(i[1] / (1.0 - i[0] + i[1])).margin(1e-15));
    }
  }
}

TEST_CASE("venn_abers: the interval holds the isotonic fit at each calibration score", "[venn_abers]") {
  // Why it must (our argument, not quoted): adding the test row with the
  // label y* equal to the isotonic value v at its score leaves the fit as it
  // was (the fit's optimality conditions still hold with a zero residual);
  // the test row's fitted value is non-decreasing in its label; so
  // p0 <= v <= p1, where 0 <= v <= 1.
  std::mt19937_64 g(7);
  std::vector<double> x(500), y(500);
  for (std::size_t i = 0; i < x.size(); ++i) {
    x[i] = std::round(uniform(g) * 200.0) / 200.0;
    y[i] = uniform(g) < x[i] * x[i] ? 1.0 : 0.0;
  }
  const FitData data{x, y, {}, Scale::probability};
  const auto va = plumb::fit_map("venn_abers", data);
  MapOptions step;
  step.isotonic_interpolate = false;
  const auto iso = plumb::fit_map("isotonic", data, step);
  for (double s : plumb::venn_abers_points(data).score) {
    INFO("score " << s);
    const auto i = va->interval(s);
    const double v = iso->map(s).probability;
    CHECK(i[0] <= v);
    CHECK(v <= i[1]);
    // and the merged probability lies in the interval (p1/(1 - p0 + p1) is
    // between p0 and p1 whenever 0 <= p0 <= p1 <= 1).
    CHECK(i[0] <= va->map(s).probability);
    CHECK(va->map(s).probability <= i[1]);
  }
}

TEST_CASE("venn_abers: p0 and p1 never fall from place to place, and the artifact form reloads exactly",
          "[venn_abers]") {
  std::mt19937_64 g(11);
  std::vector<double> x(3000), y(3000);
  for (std::size_t i = 0; i < x.size(); ++i) {
    x[i] = uniform(g);
    y[i] = uniform(g) < x[i] ? 1.0 : 0.0;
  }
  MapOptions three;
  three.venn_folds = 3;
  for (const char* kind : {"venn_abers", "cross_venn_abers"}) {
    INFO(kind);
    const auto map = plumb::fit_map(kind, FitData{x, y, {}, Scale::probability}, three);
    const auto back = plumb::load_map(kind, Scale::probability, map->parameters(), "test");
    CHECK(back->parameters() == map->parameters());
    double last_p = 0.0, last_lo = 0.0, last_hi = 0.0;
    for (int k = 0; k <= 4000; ++k) {
      const double s = k / 4000.0;
      const auto i = map->interval(s);
      const double p = map->map(s).probability;
      CHECK(back->map(s).probability == p);
      CHECK(p >= last_p);
      CHECK(i[0] >= last_lo);
      CHECK(i[1] >= last_hi);
      CHECK(i[0] <= i[1]);
      CHECK(p > 0.0);
      CHECK(p < 1.0);
      last_p = p;
      last_lo = i[0];
      last_hi = i[1];
    }
  }
}

TEST_CASE("cross_venn_abers: the folds' refits merged by the published rule", "[venn_abers]") {
  std::mt19937_64 g(5);
  std::vector<double> x(400), y(400);
  for (std::size_t i = 0; i < x.size(); ++i) {
    x[i] = std::round(uniform(g) * 50.0) / 50.0;
    y[i] = uniform(g) < 0.1 + 0.8 * x[i] ? 1.0 : 0.0;
  }
  const FitData data{x, y, {}, Scale::probability};
  MapOptions o;
  o.venn_folds = 4;
  const auto map = plumb::fit_map("cross_venn_abers", data, o);
  const auto folds = plumb::venn_abers_folds(plumb::venn_abers_points(data), 4);
  REQUIRE(folds.size() == 4);
  double rows = 0.0;
  for (const auto& f : folds)
    for (double w : f.weight) rows += w;
  CHECK(rows == 400.0);  // every row dealt once
  for (int k = 0; k <= 60; ++k) {
    const double s = k / 60.0 + (k % 3 == 0 ? 0.0 : 0.004);  // knots and gaps
    INFO("score " << s);
    double log_g1 = 0.0, log_g0 = 0.0, mean0 = 0.0, mean1 = 0.0;
    for (const auto& f : folds) {
      // The fold's rows as weighted rows, refitted with the test row.
      std::vector<double> fx, fy, fw;
      for (std::size_t j = 0; j < f.score.size(); ++j) {
        if (f.weight[j] - f.label_sum[j] > 0) {
          fx.push_back(f.score[j]);
          fy.push_back(0.0);
          fw.push_back(f.weight[j] - f.label_sum[j]);
        }
        if (f.label_sum[j] > 0) {
          fx.push_back(f.score[j]);
          fy.push_back(1.0);
          fw.push_back(f.label_sum[j]);
        }
      }
      const double p0 = refit(fx, fy, fw, s, 0.0), p1 = refit(fx, fy, fw, s, 1.0);
      log_g1 += std::log(p1) / 4;
      log_g0 += std::log(1.0 - p0) / 4;
      mean0 += p0 / 4;
      mean1 += p1 / 4;
    }
    const double g1 = std::exp(log_g1), g0 = std::exp(log_g0);
    CHECK(map->map(s).probability == Approx(g1 / (g0 + g1)).margin(1e-12));
    CHECK(map->interval(s)[0] == Approx(mean0).margin(1e-12));
    CHECK(map->interval(s)[1] == Approx(mean1).margin(1e-12));
  }
}

TEST_CASE("cross_venn_abers: refusals", "[venn_abers]") {
  const std::vector<double> x{0.1, 0.2, 0.3}, y{0, 1, 0}, half{0.5, 1.0, 1.0};
  MapOptions o;
  o.venn_folds = 5;
  // Fewer rows than folds leaves a fold empty.
  CHECK_THROWS_AS(plumb::fit_map("cross_venn_abers", FitData{x, y, {}, Scale::probability}, o), plumb::Error);
  // A fractional weight cannot be dealt as rows.
  try {
    std::vector<double> xx(50), yy(50), ww(50, 1.0);
    for (std::size_t i = 0; i < xx.size(); ++i) {
      xx[i] = static_cast<double>(i) / 50.0;
      yy[i] = i % 2 == 0 ? 1.0 : 0.0;
    }
    ww[3] = 0.5;
    plumb::fit_map("cross_venn_abers", FitData{xx, yy, ww, Scale::probability}, o);
    FAIL("a weight of 0.5 was taken");
  } catch (const plumb::Error& e) {
    CHECK(e.kind() == plumb::ErrorKind::fit);
    CHECK(e.expected().find("--map venn_abers") != std::string::npos);
  }
}

TEST_CASE("venn_abers: validity in a simulation with a known truth", "[venn_abers]") {
  // Vovk and Petej (2014): when calibration and test rows are exchangeable,
  // the probability of the test row's true label, p_Y (p1 when y = 1, p0
  // when y = 0), is perfectly calibrated, so E[y - p_Y] = 0; the merged p
  // lies in [p0, p1], so E[y - p] lies within the mean interval width of 0.
  // Truth: s uniform on [0, 1], P(y = 1 | s) = s^2, which the raw score
  // misses (E[y - s] = 1/3 - 1/2), so the same bound fails for it.
  // 2,000 calibration sets of 100 rows, 10 test rows each; the standard
  // error is taken from the spread of the per-set means (rows of one set
  // share a calibration set), and the bound is 4.5 standard errors (a
  // chance below 1e-5 for a true mean of 0; the seed is fixed).
  std::mt19937_64 g(42);
  const int sets = 2000, n = 100, m = 10;
  std::vector<double> set_mean_true(sets), set_mean_merged(sets), set_mean_raw(sets);
  double width = 0.0;
  for (int r = 0; r < sets; ++r) {
    std::vector<double> x(n), y(n);
    for (int i = 0; i < n; ++i) {
      x[i] = uniform(g);
      y[i] = uniform(g) < x[i] * x[i] ? 1.0 : 0.0;
    }
    const auto map = plumb::fit_map("venn_abers", FitData{x, y, {}, Scale::probability});
    double sum_true = 0.0, sum_merged = 0.0, sum_raw = 0.0;
    for (int t = 0; t < m; ++t) {
      const double s = uniform(g), label = uniform(g) < s * s ? 1.0 : 0.0;
      const auto i = map->interval(s);
      sum_true += label - (label == 1.0 ? i[1] : i[0]);
      sum_merged += label - map->map(s).probability;
      sum_raw += label - s;
      width += i[1] - i[0];
    }
    set_mean_true[r] = sum_true / m;
    set_mean_merged[r] = sum_merged / m;
    set_mean_raw[r] = sum_raw / m;
  }
  width /= sets * m;
  auto mean_and_se = [&](const std::vector<double>& v) {
    double mean = 0.0, ss = 0.0;
    for (double d : v) mean += d / sets;
    for (double d : v) ss += (d - mean) * (d - mean);
    return std::pair{mean, std::sqrt(ss / (sets - 1) / sets)};
  };
  const auto [true_mean, true_se] = mean_and_se(set_mean_true);
  const auto [merged_mean, merged_se] = mean_and_se(set_mean_merged);
  const auto [raw_mean, raw_se] = mean_and_se(set_mean_raw);
  WARN("E[y - p_Y] " << true_mean << " (se " << true_se << "), E[y - p] " << merged_mean << " (se " << merged_se
                     << "), mean width " << width << ", raw E[y - s] " << raw_mean);
  CHECK(std::abs(true_mean) <= 4.5 * true_se);
  CHECK(std::abs(merged_mean) <= 4.5 * merged_se + width);
  CHECK(std::abs(raw_mean) > 4.5 * raw_se + width);  // the check has power
}

TEST_CASE("venn_abers: the stored steps give the knots' values at every place", "[venn_abers]") {
  // The map keeps runs of equal values (VennAbersSteps); at each knot, in
  // each gap and beyond both ends it must give what venn_abers_knots gave.
  std::mt19937_64 g(3);
  std::vector<double> x(20000), y(20000);
  for (std::size_t i = 0; i < x.size(); ++i) {
    x[i] = std::round(uniform(g) * 5000.0) / 5000.0;
    y[i] = uniform(g) < 0.05 + 0.9 * x[i] ? 1.0 : 0.0;
  }
  const FitData data{x, y, {}, Scale::probability};
  const plumb::VennAbersPoints pts = plumb::venn_abers_points(data);
  const plumb::VennAbersKnots k = plumb::venn_abers_knots(pts.score, pts.weight, pts.label_sum);
  const auto map = plumb::fit_map("venn_abers", data);
  const auto& steps = dynamic_cast<const plumb::VennAbersMap&>(*map).steps();
  CHECK(steps.p0.size() < k.score.size() / 4);  // runs, not places
  for (std::size_t j = 0; j <= k.score.size(); ++j) {
    const double below = j == 0 ? k.score[0] - 1e-3 : j == k.score.size() ? k.score[j - 1] + 1e-3
                                                                            : 0.5 * (k.score[j - 1] + k.score[j]);
    INFO("gap " << j);
    CHECK(map->interval(below)[0] == k.p0_between[j]);
    CHECK(map->interval(below)[1] == k.p1_between[j]);
    if (j == k.score.size()) break;
    INFO("knot " << j);
    CHECK(map->interval(k.score[j])[0] == k.p0_at[j]);
    CHECK(map->interval(k.score[j])[1] == k.p1_at[j]);
  }
}

TEST_CASE("venn_abers: the binary searches over the stacks find the block the poolings one by one find",
          "[venn_abers]") {
  // venn_abers_knots pools one by one up to linear_steps, then searches;
  // with 0 steps every place takes the searches, with a huge cap none does.
  std::mt19937_64 g(99);
  for (int round = 0; round < 60; ++round) {
    INFO("round " << round);
    const std::size_t k = 1 + g() % 300;
    std::vector<double> x(k), w(k), ys(k);
    const bool whole = round % 3 != 0;
    for (std::size_t i = 0; i < k; ++i) {
      x[i] = static_cast<double>(i);
      // Smoothly rising frequencies with large weights (long poolings) or
      // noisy small cells, by turns.
      w[i] = whole ? static_cast<double>(round % 2 == 0 ? 1 + g() % 3 : 50 + g() % 50) : 0.1 + 5.0 * uniform(g);
      const double f = round % 2 == 0 ? uniform(g) : 0.2 + 0.5 * static_cast<double>(i) / static_cast<double>(k) +
                                                          0.02 * (uniform(g) - 0.5);
      ys[i] = whole ? std::round(f * w[i]) : f * w[i];
    }
    const plumb::VennAbersKnots a = plumb::venn_abers_knots(x, w, ys, 0), b = plumb::venn_abers_knots(x, w, ys, 1u << 30);
    for (std::size_t j = 0; j <= k; ++j) {
      CHECK(a.p0_between[j] == Approx(b.p0_between[j]).margin(1e-12));
      CHECK(a.p1_between[j] == Approx(b.p1_between[j]).margin(1e-12));
      if (whole) CHECK(a.p1_between[j] == b.p1_between[j]);  // sums of whole numbers are exact
      if (j == k) break;
      CHECK(a.p0_at[j] == Approx(b.p0_at[j]).margin(1e-12));
      CHECK(a.p1_at[j] == Approx(b.p1_at[j]).margin(1e-12));
    }
  }
}

TEST_CASE("interval width summary: mean and R's type 1 quantiles", "[venn_abers]") {
  // R: x <- c(0.05, 0.01, 0.03, 0.02, 0.04); mean(x) = 0.03;
  // quantile(x, c(0.5, 0.9), type = 1) = 0.03, 0.05 (Hyndman and Fan 1996,
  // definition 1: the inverse of the empirical distribution function;
  // R 4's quantile prints these values, and for rep(0.01, 3), 0.05 below).
  const std::vector<double> x{0.05, 0.01, 0.03, 0.02, 0.04};
  const plumb::IntervalWidth w = plumb::interval_width_summary(x);
  CHECK(w.mean == Approx(0.03).margin(1e-15));
  CHECK(w.median == 0.03);
  CHECK(w.p90 == 0.05);
  // Weights count rows: weight 3 on 0.01 is three rows of 0.01.
  const std::vector<double> y{0.01, 0.05}, wy{3.0, 1.0};
  const plumb::IntervalWidth v = plumb::interval_width_summary(y, wy);
  CHECK(v.mean == Approx(0.02).margin(1e-15));
  CHECK(v.median == 0.01);
  CHECK(v.p90 == 0.05);
}
