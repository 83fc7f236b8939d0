// Property tests of the metric core on seeded invented data: identities that
// hold by derivation (docs/methods_metrics.md) and brute-force recomputation.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <random>
#include <vector>

#include "plumb/auc.hpp"
#include "plumb/binning.hpp"
#include "plumb/calibration_error.hpp"
#include "plumb/calibration_regression.hpp"
#include "plumb/corp.hpp"
#include "plumb/error.hpp"
#include "plumb/goodness_of_fit.hpp"
#include "plumb/murphy.hpp"
#include "plumb/reliability.hpp"
#include "plumb/scores.hpp"

namespace {

struct Rows {
  std::vector<double> p, y, w;
};

// Forecasts from `levels` distinct values (0 = continuous), labels drawn from
// a distorted version of the forecast so the forecaster is miscalibrated.
Rows simulate(std::size_t n, std::uint64_t seed, bool weighted, int levels = 0) {
  std::mt19937_64 gen(seed);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  Rows r;
  for (std::size_t i = 0; i < n; ++i) {
    double p = u(gen);
    if (levels > 0) p = (std::floor(p * levels) + 0.5) / levels;
    const double truth = std::pow(p, 1.4);
    r.p.push_back(p);
    r.y.push_back(u(gen) < truth ? 1.0 : 0.0);
    if (weighted) r.w.push_back(u(gen) < 0.1 ? 0.0 : 0.25 + 2.0 * u(gen));
  }
  return r;
}

double weight_of(const Rows& r, std::size_t i) { return r.w.empty() ? 1.0 : r.w[i]; }

}  // namespace

TEST_CASE("Brier score and log loss match their definitions row by row", "[metrics]") {
  const Rows r = simulate(500, 11, true);
  double W = 0, b = 0, l = 0;
  for (std::size_t i = 0; i < r.p.size(); ++i) {
    const double w = weight_of(r, i);
    W += w;
    b += w * (r.p[i] - r.y[i]) * (r.p[i] - r.y[i]);
    // Definition: Brier (1950); log loss -[y ln p + (1-y) ln(1-p)].
    l += w * -(r.y[i] * std::log(r.p[i]) + (1 - r.y[i]) * std::log(1 - r.p[i]));
  }
  CHECK(plumb::brier_score(r.p, r.y, r.w) == Approx(b / W).epsilon(1e-13));
  CHECK(plumb::log_loss(r.p, r.y, r.w) == Approx(l / W).epsilon(1e-13));
  // A confident miss is clipped to a large finite loss, -ln(1e-12).
  const std::vector<double> p{0.0}, y{1.0};
  CHECK(plumb::log_loss(p, y) == Approx(-std::log(1e-12)).epsilon(1e-12));
  CHECK_THROWS_AS(plumb::brier_score(r.p, std::vector<double>(3, 0.0)), plumb::Error);
}

TEST_CASE("Murphy: REL - RES + UNC equals Brier when forecasts are constant in bins",
          "[metrics]") {
  for (bool weighted : {false, true}) {
    const Rows r = simulate(2000, 21, weighted, 10);
    const auto bins = plumb::make_binning(r.p, r.w, plumb::BinningKind::equal_width, 10);
    const auto m = plumb::murphy_decomposition(r.p, r.y, r.w, bins);
    CHECK(std::abs(m.within_bin_variance) < 1e-15);
    CHECK(std::abs(m.within_bin_covariance) < 1e-15);
    // Murphy (1973): BS = REL - RES + UNC.
    CHECK(std::abs(m.reliability - m.resolution + m.uncertainty - m.brier) < 1e-13);
    CHECK(m.brier == Approx(plumb::brier_score(r.p, r.y, r.w)).epsilon(1e-14));
  }
}

TEST_CASE("Murphy with within-bin terms is exact in general, checked by brute force",
          "[metrics]") {
  for (auto kind : {plumb::BinningKind::equal_width, plumb::BinningKind::equal_mass}) {
    for (bool weighted : {false, true}) {
      const Rows r = simulate(3000, 31, weighted);
      const std::size_t k = 7;
      const auto bins = plumb::make_binning(r.p, r.w, kind, k);
      const auto m = plumb::murphy_decomposition(r.p, r.y, r.w, bins);
      // Brute force from the definitions, bin by bin, with plain loops.
      double W = 0, Y = 0;
      std::vector<double> Wk(k), Fk(k), Ok(k);
      for (std::size_t i = 0; i < r.p.size(); ++i) {
        const double w = weight_of(r, i);
        const auto b = bins.bin_of_row[i];
        W += w;
        Y += w * r.y[i];
        Wk[b] += w;
        Fk[b] += w * r.p[i];
        Ok[b] += w * r.y[i];
      }
      double rel = 0, res = 0, wbv = 0, wbc = 0, bs = 0;
      const double o = Y / W;
      for (std::size_t b = 0; b < k; ++b) {
        if (Wk[b] == 0) continue;
        Fk[b] /= Wk[b];
        Ok[b] /= Wk[b];
        rel += Wk[b] * (Fk[b] - Ok[b]) * (Fk[b] - Ok[b]) / W;
        res += Wk[b] * (Ok[b] - o) * (Ok[b] - o) / W;
      }
      for (std::size_t i = 0; i < r.p.size(); ++i) {
        const double w = weight_of(r, i);
        const auto b = bins.bin_of_row[i];
        wbv += w * (r.p[i] - Fk[b]) * (r.p[i] - Fk[b]) / W;
        wbc += w * (r.p[i] - Fk[b]) * (r.y[i] - Ok[b]) / W;
        bs += w * (r.p[i] - r.y[i]) * (r.p[i] - r.y[i]) / W;
      }
      CHECK(m.reliability == Approx(rel).epsilon(1e-12));
      CHECK(m.resolution == Approx(res).epsilon(1e-12));
      CHECK(m.uncertainty == Approx(o * (1 - o)).epsilon(1e-13));
      CHECK(m.within_bin_variance == Approx(wbv).epsilon(1e-12));
      CHECK(m.within_bin_covariance == Approx(wbc).margin(1e-14));
      // Stephenson, Coelho and Jolliffe (2008) generalised decomposition:
      // BS = REL - RES + UNC + WBV - 2 WBC.
      const double rebuilt = m.reliability - m.resolution + m.uncertainty +
                             m.within_bin_variance - 2 * m.within_bin_covariance;
      CHECK(std::abs(rebuilt - bs) < 1e-13);
      // The three-term form is not exact here, so the within-bin terms matter.
      CHECK(std::abs(m.reliability - m.resolution + m.uncertainty - bs) > 1e-4);
    }
  }
}

TEST_CASE("CORP: MCB - DSC + UNC equals the score for Brier and log loss", "[metrics]") {
  for (bool weighted : {false, true}) {
    const Rows r = simulate(4000, 41, weighted, weighted ? 0 : 50);
    const auto c = plumb::corp_decomposition(r.p, r.y, r.w);
    CHECK(c.brier.score == Approx(plumb::brier_score(r.p, r.y, r.w)).epsilon(1e-13));
    CHECK(c.log_loss.score == Approx(plumb::log_loss(r.p, r.y, r.w)).epsilon(1e-13));
    for (const auto& t : {c.brier, c.log_loss}) {
      CHECK(std::abs(t.mcb - t.dsc + t.unc - t.score) < 1e-13);
      // Dimitriadis, Gneiting and Jordan (2021): MCB >= 0 and DSC >= 0 for the PAV fit.
      CHECK(t.mcb > 0.0);  // the simulated forecaster is miscalibrated
      CHECK(t.dsc > 0.0);
    }
    double W = 0, Y = 0;
    for (std::size_t i = 0; i < r.p.size(); ++i) {
      W += weight_of(r, i);
      Y += weight_of(r, i) * r.y[i];
    }
    CHECK(c.brier.unc == Approx(Y / W * (1 - Y / W)).epsilon(1e-12));
    // The recalibrated forecasts are a non-decreasing function of the forecast.
    std::vector<std::size_t> idx(r.p.size());
    for (std::size_t i = 0; i < idx.size(); ++i) idx[i] = i;
    std::sort(idx.begin(), idx.end(), [&](auto a, auto b) { return r.p[a] < r.p[b]; });
    bool monotone = true;
    for (std::size_t k = 1; k < idx.size(); ++k) {
      if (weight_of(r, idx[k]) == 0 || weight_of(r, idx[k - 1]) == 0) continue;
      if (c.recalibrated[idx[k]] < c.recalibrated[idx[k - 1]]) monotone = false;
    }
    CHECK(monotone);
  }
  // A forecaster that is its own PAV fit has no miscalibration.
  const std::vector<double> p{0.0, 0.5, 0.5, 1.0}, y{0, 0, 1, 1};
  const auto c = plumb::corp_decomposition(p, y);
  CHECK(std::abs(c.brier.mcb) < 1e-15);
  CHECK(c.brier.dsc == Approx(0.25 - 0.125));
}

TEST_CASE("ECE and MCE vanish for a forecaster calibrated by construction", "[metrics]") {
  for (auto kind : {plumb::BinningKind::equal_width, plumb::BinningKind::equal_mass}) {
    for (bool weighted : {false, true}) {
      Rows r = simulate(3000, 51, weighted);
      // Replace each forecast by its group's observed frequency: every new
      // distinct forecast equals the frequency of its rows, and a bin that
      // merges several such values still has mean forecast = frequency.
      const auto groups = plumb::make_binning(r.p, r.w, plumb::BinningKind::equal_width, 13);
      const auto sums = plumb::bin_sums(r.p, r.y, r.w, groups);
      for (std::size_t i = 0; i < r.p.size(); ++i) r.p[i] = sums[groups.bin_of_row[i]].observed();
      const auto ce = plumb::calibration_error(r.p, r.y, r.w, kind, 10);
      CHECK(ce.binning == kind);
      CHECK(ce.ece < 1e-14);
      CHECK(ce.mce < 1e-14);
      CHECK(ce.l2_plugin < 1e-14);
      CHECK(ce.l2_squared_debiased < 0.0);  // only the variance correction remains
      CHECK(ce.l2_debiased == 0.0);
    }
  }
}

TEST_CASE("ECE, MCE and the debiased l2 estimate follow their definitions", "[metrics]") {
  const Rows r = simulate(1000, 61, false);
  const auto ce = plumb::calibration_error(r.p, r.y, r.w, plumb::BinningKind::equal_width, 5);
  double ece = 0, mce = 0, l2 = 0, deb = 0;
  for (int b = 0; b < 5; ++b) {
    double n = 0, f = 0, o = 0;
    for (std::size_t i = 0; i < r.p.size(); ++i) {
      if (std::min(4, static_cast<int>(r.p[i] * 5)) != b) continue;
      n += 1;
      f += r.p[i];
      o += r.y[i];
    }
    f /= n;
    o /= n;
    ece += n / 1000 * std::abs(f - o);
    mce = std::max(mce, std::abs(f - o));
    l2 += n / 1000 * (f - o) * (f - o);
    // Kumar, Liang and Ma (2019), debiased squared l2 per bin (from memory).
    deb += n / 1000 * ((f - o) * (f - o) - o * (1 - o) / (n - 1));
  }
  CHECK(ce.nonempty_bins == 5);
  CHECK(ce.ece == Approx(ece).epsilon(1e-12));
  CHECK(ce.mce == Approx(mce).epsilon(1e-12));
  CHECK(ce.l2_plugin == Approx(std::sqrt(l2)).epsilon(1e-12));
  CHECK(ce.l2_squared_debiased == Approx(deb).epsilon(1e-12));
  CHECK(ce.l2_debiased < ce.l2_plugin);
}

TEST_CASE("Equal-mass bins hold about equal weight and never split ties", "[metrics]") {
  Rows r = simulate(1000, 71, false, 40);
  const auto bins = plumb::make_binning(r.p, r.w, plumb::BinningKind::equal_mass, 10);
  for (std::size_t i = 0; i < r.p.size(); ++i)
    for (std::size_t j = 0; j < r.p.size(); ++j)
      if (r.p[i] == r.p[j]) REQUIRE(bins.bin_of_row[i] == bins.bin_of_row[j]);
      else if (r.p[i] < r.p[j]) REQUIRE(bins.bin_of_row[i] <= bins.bin_of_row[j]);
  const auto sums = plumb::bin_sums(r.p, r.y, r.w, bins);
  for (const auto& s : sums) CHECK(std::abs(static_cast<double>(s.rows) - 100.0) <= 40.0);
  const std::vector<double> distinct{0.1, 0.2, 0.3, 0.4};
  const auto four = plumb::make_binning(distinct, {}, plumb::BinningKind::equal_mass, 4);
  CHECK(four.bin_of_row == std::vector<std::uint32_t>{0, 1, 2, 3});
  CHECK_THROWS_AS(plumb::make_binning(distinct, {}, plumb::BinningKind::equal_mass, 0),
                  plumb::Error);
}

TEST_CASE("AUC: 1 for a perfect ranking, 0.5 for constant forecasts", "[metrics]") {
  const std::vector<double> p{0.1, 0.2, 0.3, 0.7, 0.8, 0.9}, y{0, 0, 0, 1, 1, 1};
  CHECK(plumb::auc(p, y) == 1.0);
  const std::vector<double> flat(6, 0.4);
  CHECK(plumb::auc(flat, y) == 0.5);
  const std::vector<double> reversed{0.9, 0.8, 0.7, 0.3, 0.2, 0.1};
  CHECK(plumb::auc(reversed, y) == 0.0);
  CHECK(std::isnan(plumb::auc(p, std::vector<double>(6, 1.0))));
}

TEST_CASE("AUC equals the O(n^2) weighted Mann-Whitney count with ties", "[metrics]") {
  std::mt19937_64 gen(81);
  std::uniform_int_distribution<int> level(0, 6);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  for (int trial = 0; trial < 20; ++trial) {
    std::vector<double> p, y, w;
    for (int i = 0; i < 60; ++i) {
      p.push_back(level(gen) / 6.0);
      y.push_back(u(gen) < 0.2 + 0.1 * p.back() * 6 ? 1.0 : 0.0);
      w.push_back(u(gen) < 0.1 ? 0.0 : u(gen) * 3);
    }
    // Hanley and McNeil (1982): AUC = P(positive outranks negative), ties 1/2.
    double num = 0, pos = 0, neg = 0;
    for (std::size_t i = 0; i < p.size(); ++i) {
      pos += w[i] * y[i];
      neg += w[i] * (1 - y[i]);
      for (std::size_t j = 0; j < p.size(); ++j) {
        if (y[i] != 1 || y[j] != 0) continue;
        num += w[i] * w[j] * (p[i] > p[j] ? 1.0 : p[i] == p[j] ? 0.5 : 0.0);
      }
    }
    CHECK(plumb::auc(p, y, w) == Approx(num / (pos * neg)).epsilon(1e-13));
    // A strictly increasing transform keeps the ranking and the AUC.
    std::vector<double> q;
    for (double x : p) q.push_back(x * x * 0.5 + 0.1);
    CHECK(plumb::auc(q, y, w) == Approx(plumb::auc(p, y, w)).epsilon(1e-15));
  }
}

TEST_CASE("Hosmer-Lemeshow equals the two-class chi-square sum", "[metrics]") {
  const Rows r = simulate(800, 91, true);
  const auto hl = plumb::hosmer_lemeshow(r.p, r.y, r.w, 10);
  const auto bins = plumb::make_binning(r.p, r.w, plumb::BinningKind::equal_mass, 10);
  const auto sums = plumb::bin_sums(r.p, r.y, r.w, bins);
  double two_class = 0;
  std::size_t used = 0;
  for (const auto& s : sums) {
    if (s.weight == 0) continue;
    ++used;
    const double e1 = s.forecast, o1 = s.label, e0 = s.weight - e1, o0 = s.weight - o1;
    two_class += (o1 - e1) * (o1 - e1) / e1 + (o0 - e0) * (o0 - e0) / e0;
  }
  CHECK(hl.used_groups == used);
  CHECK(hl.df == static_cast<double>(used) - 2);
  CHECK(hl.statistic == Approx(two_class).epsilon(1e-12));
  CHECK(hl.p_value > 0.0);
  CHECK(hl.p_value < 1.0);
}

TEST_CASE("Reliability table rows carry Wilson intervals around the observed frequency",
          "[metrics]") {
  const Rows r = simulate(1500, 101, true);
  const auto t = plumb::reliability_table(r.p, r.y, r.w, plumb::BinningKind::equal_width, 10);
  REQUIRE(t.bins.size() == 10);
  double rows = 0;
  for (const auto& b : t.bins) {
    rows += static_cast<double>(b.rows);
    CHECK(b.observed_lo <= b.observed);
    CHECK(b.observed <= b.observed_hi);
    CHECK(b.gap == Approx(b.mean_forecast - b.observed));
    CHECK(b.effective_size <= static_cast<double>(b.rows));
    CHECK(b.mean_forecast >= b.edge_lo);
    CHECK(b.mean_forecast <= b.edge_hi);
  }
  CHECK(rows == 1500);
  // Wilson (1927): with unit weights the interval is centred at
  // (o + z^2/2n)/(1 + z^2/n), not at o.
  const auto ci = plumb::wilson_interval(0.0, 10, 0.95);
  CHECK(ci.lo == 0.0);
  CHECK(ci.hi > 0.2);
  CHECK_THROWS_AS(plumb::wilson_interval(0.5, 10, 1.0), plumb::Error);
}

TEST_CASE("Calibration regression recovers a known distortion", "[metrics]") {
  // Labels drawn from logit P = 0.3 + 0.7 logit(p): slope 0.7, intercept 0.3.
  std::mt19937_64 gen(111);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  std::vector<double> p, y;
  for (int i = 0; i < 200000; ++i) {
    const double x = 0.02 + 0.96 * u(gen);
    const double l = std::log(x / (1 - x));
    p.push_back(x);
    y.push_back(u(gen) < 1 / (1 + std::exp(-(0.3 + 0.7 * l))) ? 1.0 : 0.0);
  }
  const auto cr = plumb::calibration_regression(p, y);
  CHECK(cr.converged);
  // Margins of about four standard errors at this size.
  CHECK(cr.slope == Approx(0.7).margin(0.03));
  CHECK(cr.intercept_free == Approx(0.3).margin(0.03));
  CHECK(cr.clipped == 0);
  // The offset intercept solves sum (y - sigmoid(a + l)) = 0.
  double g = 0;
  for (std::size_t i = 0; i < p.size(); ++i) {
    const double l = std::log(p[i] / (1 - p[i]));
    g += y[i] - 1 / (1 + std::exp(-(cr.intercept_at_unit_slope + l)));
  }
  CHECK(std::abs(g) < 1e-6);
  const double citl = plumb::calibration_in_the_large(p, y);
  double mean_gap = 0;
  for (std::size_t i = 0; i < p.size(); ++i) mean_gap += (p[i] - y[i]) / p.size();
  CHECK(citl == Approx(mean_gap).epsilon(1e-10));
}
