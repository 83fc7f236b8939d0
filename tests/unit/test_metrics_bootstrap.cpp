// Bootstrap and consistency band on seeded invented data.
#include <catch2/catch.hpp>

#include <cmath>
#include <iostream>
#include <random>
#include <vector>

#include "plumb/bootstrap.hpp"
#include "plumb/calibration_error.hpp"

namespace {

// A forecaster calibrated by construction: label ~ Bernoulli(forecast).
void calibrated(std::size_t n, std::uint64_t seed, std::vector<double>& p, std::vector<double>& y) {
  std::mt19937_64 gen(seed);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  for (std::size_t i = 0; i < n; ++i) {
    p.push_back(u(gen));
    y.push_back(u(gen) < p.back() ? 1.0 : 0.0);
  }
}

}  // namespace

TEST_CASE("Bootstrap: the same seed gives identical intervals, another seed others",
          "[metrics][bootstrap]") {
  std::vector<double> p, y;
  calibrated(3000, 5, p, y);
  plumb::BootstrapOptions o;
  o.replicates = 100;
  o.seed = 42;
  const auto a = plumb::bootstrap_metrics(p, y, {}, o);
  const auto b = plumb::bootstrap_metrics(p, y, {}, o);
  CHECK(a.ece.lo == b.ece.lo);
  CHECK(a.ece.hi == b.ece.hi);
  CHECK(a.brier.lo == b.brier.lo);
  CHECK(a.mcb_brier.hi == b.mcb_brier.hi);
  CHECK(a.auc.lo == b.auc.lo);
  CHECK(a.auc.used == 100);
  o.seed = 43;
  const auto c = plumb::bootstrap_metrics(p, y, {}, o);
  CHECK(c.brier.lo != a.brier.lo);
  CHECK(a.brier.lo < a.brier.hi);
  CHECK(a.auc.lo < a.auc.hi);
  o.replicates = 0;
  CHECK_THROWS(plumb::bootstrap_metrics(p, y, {}, o));
}

TEST_CASE("Bootstrap and consistency band give the same numbers on any number of threads",
          "[metrics][bootstrap]") {
  std::vector<double> p, y, w;
  calibrated(2000, 11, p, y);
  for (std::size_t i = 0; i < p.size(); ++i) w.push_back(0.5 + static_cast<double>(i % 4));
  plumb::BootstrapOptions o;
  o.replicates = 37;  // not a multiple of the thread counts below
  o.seed = 5;
  o.threads = 1;
  const auto one = plumb::bootstrap_metrics(p, y, w, o);
  const auto binning = plumb::make_binning(p, w, plumb::BinningKind::equal_mass, 10);
  const auto band_one = plumb::consistency_band(p, w, binning, o);
  for (std::size_t threads : {2u, 3u, 8u, 0u}) {
    INFO("threads " << threads);
    o.threads = threads;
    const auto many = plumb::bootstrap_metrics(p, y, w, o);
    CHECK(many.ece.lo == one.ece.lo);
    CHECK(many.ece.hi == one.ece.hi);
    CHECK(many.l2_debiased.hi == one.l2_debiased.hi);
    CHECK(many.brier.lo == one.brier.lo);
    CHECK(many.mcb_brier.lo == one.mcb_brier.lo);
    CHECK(many.mcb_brier.hi == one.mcb_brier.hi);
    CHECK(many.auc.hi == one.auc.hi);
    const auto band = plumb::consistency_band(p, w, binning, o);
    REQUIRE(band.size() == band_one.size());
    for (std::size_t b = 0; b < band.size(); ++b) {
      CHECK(band[b].lo == band_one[b].lo);
      CHECK(band[b].hi == band_one[b].hi);
    }
  }
}

TEST_CASE("Bootstrap on a large calibrated forecaster covers the debiased estimate",
          "[metrics][bootstrap]") {
  std::vector<double> p, y;
  calibrated(200000, 7, p, y);
  plumb::BootstrapOptions o;
  o.replicates = 200;
  o.seed = 9;
  const auto point = plumb::calibration_error(p, y, {}, o.binning, o.bins);
  const auto boot = plumb::bootstrap_metrics(p, y, {}, o);
  std::cout << "calibrated n=2e5: ece " << point.ece << " interval [" << boot.ece.lo << ", "
            << boot.ece.hi << "], l2 debiased " << point.l2_debiased << " interval ["
            << boot.l2_debiased.lo << ", " << boot.l2_debiased.hi << "]\n";
  // The debiased l2 estimate and its interval, on the same (l2) scale.
  CHECK(boot.l2_debiased.lo <= point.l2_debiased);
  CHECK(point.l2_debiased <= boot.l2_debiased.hi);
  // The plug-in ECE interval covers the plug-in estimate and stays small.
  CHECK(boot.ece.lo <= point.ece);
  CHECK(point.ece <= boot.ece.hi);
  CHECK(boot.ece.hi < 0.01);
  // Issue 3's check: the plug-in ECE interval covers the debiased estimate
  // (here the root of the debiased squared l2, the figure set beside ECE).
  CHECK(boot.ece.lo <= point.l2_debiased);
  CHECK(point.l2_debiased <= boot.ece.hi);
}

TEST_CASE("Consistency band holds each bin's mean forecast", "[metrics][bootstrap]") {
  std::vector<double> p, y;
  calibrated(5000, 13, p, y);
  const auto bins = plumb::make_binning(p, {}, plumb::BinningKind::equal_mass, 10);
  const auto sums = plumb::bin_sums(p, y, {}, bins);
  plumb::BootstrapOptions o;
  o.replicates = 400;
  const auto band = plumb::consistency_band(p, {}, bins, o);
  REQUIRE(band.size() == 10);
  std::size_t inside = 0;
  for (std::size_t b = 0; b < 10; ++b) {
    // Under calibration the expected observed frequency is the mean forecast.
    CHECK(band[b].lo < sums[b].mean_forecast());
    CHECK(sums[b].mean_forecast() < band[b].hi);
    CHECK(band[b].hi - band[b].lo < 0.15);
    inside += band[b].lo <= sums[b].observed() && sums[b].observed() <= band[b].hi;
  }
  CHECK(inside >= 7);  // about 95% per bin for a calibrated forecaster
}

TEST_CASE("Bootstrap of tied unweighted rows by cells agrees with the bootstrap row by row",
          "[metrics][bootstrap]") {
  // Without weights, the rows of one forecast and label are one cell whose
  // replicate weight is drawn as one Poisson(count); with weights (here all
  // 1, the same rows) every row draws its own Poisson(1). The sum of n
  // independent Poisson(1) counts is Poisson(n), so both are the same
  // bootstrap and their intervals differ by Monte Carlo error only (about
  // 2% of an interval's width at 2000 replicates; the bound is 10%).
  std::mt19937_64 gen(11);
  std::uniform_int_distribution<int> level(1, 20);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  std::vector<double> p, y;
  for (int i = 0; i < 4000; ++i) {
    p.push_back(level(gen) / 21.0);
    y.push_back(u(gen) < 0.8 * p.back() + 0.05 ? 1.0 : 0.0);
  }
  const std::vector<double> ones(p.size(), 1.0);
  plumb::BootstrapOptions o;
  o.replicates = 2000;
  o.seed = 3;
  const auto cells = plumb::bootstrap_metrics(p, y, {}, o);
  o.seed = 4;
  const auto rows = plumb::bootstrap_metrics(p, y, ones, o);
  auto agree = [](const plumb::BootstrapInterval& a, const plumb::BootstrapInterval& b) {
    const double width = b.hi - b.lo;
    REQUIRE(width > 0.0);
    CHECK(std::abs(a.lo - b.lo) < 0.1 * width);
    CHECK(std::abs(a.hi - b.hi) < 0.1 * width);
  };
  agree(cells.brier, rows.brier);
  agree(cells.ece, rows.ece);
  agree(cells.l2_debiased, rows.l2_debiased);
  agree(cells.mcb_brier, rows.mcb_brier);
  agree(cells.auc, rows.auc);
}

TEST_CASE("Consistency band of tied unweighted rows by cells agrees with the band row by row",
          "[metrics][bootstrap]") {
  // A cell of n rows of forecast f draws Binomial(n, f) positives at once;
  // row by row (unit weights) each row draws its own Bernoulli(f): the same
  // law. Forecasts on a grid of 12 values near 0, near 1 and between, with
  // 20 to 150 rows each, on both sides of 1/2 and of the 64-row switch to
  // row-by-row draws.
  std::vector<double> p;
  const double levels[] = {0.001, 0.02, 0.1, 0.25, 0.4, 0.5, 0.55, 0.7, 0.85, 0.93, 0.99, 0.9995};
  const int counts[] = {60, 130, 40, 90, 50, 20, 64, 100, 33, 45, 150, 55};
  for (int i = 0; i < 12; ++i)
    for (int k = 0; k < counts[i]; ++k) p.push_back(levels[i]);
  const std::vector<double> ones(p.size(), 1.0);
  const auto bins = plumb::make_binning(p, {}, plumb::BinningKind::equal_width, 10);
  plumb::BootstrapOptions o;
  o.replicates = 4000;
  o.seed = 8;
  const auto cells = plumb::consistency_band(p, {}, bins, o);
  o.seed = 9;
  const auto rows = plumb::consistency_band(p, ones, bins, o);
  REQUIRE(cells.size() == rows.size());
  for (std::size_t b = 0; b < cells.size(); ++b) {
    const double width = rows[b].hi - rows[b].lo;
    // Quantiles of a discrete law: allow one step of 1/(rows in the bin) too.
    double in_bin = 0;
    for (std::size_t i = 0; i < p.size(); ++i) in_bin += bins.bin_of_row[i] == b;
    if (in_bin == 0) continue;
    const double slack = 0.1 * width + 1.0 / in_bin + 1e-12;
    CHECK(std::abs(cells[b].lo - rows[b].lo) <= slack);
    CHECK(std::abs(cells[b].hi - rows[b].hi) <= slack);
  }
}

TEST_CASE("Bootstrap over cells of thousands of rows covers the population's Brier score and AUC",
          "[metrics][bootstrap]") {
  // 30 forecast levels (j + 1/2) / 30 with 3000 rows each, labels drawn as
  // Bernoulli(forecast): a calibrated forecaster whose population figures
  // are known exactly. Every cell (a level's negatives or positives) holds
  // hundreds to thousands of rows, so each replicate draws its weights by
  // PTRS (count_draws.hpp), not by inversion.
  //   Brier: E[(p - Y)^2] = E[p (1 - p)] for Y ~ Bernoulli(p).
  //   AUC: P(p of a positive > p of a negative) + P(tie) / 2, the positives
  //   at level j weighing p_j, the negatives 1 - p_j (Hanley and McNeil
  //   1982's definition of the area).
  // The 99% percentile interval must cover both, and its width must be that
  // of the normal interval of a mean, 2 z sd / sqrt(n) with z = 2.5758 (the
  // standard normal's 0.995 quantile) and sd the sample standard deviation
  // of (p - y)^2, within 15% (Monte Carlo error of 1000 replicates' tails:
  // a few percent).
  constexpr int levels = 30, per_level = 3000;
  std::mt19937_64 gen(2024);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  std::vector<double> p, y;
  double population_brier = 0.0, positive_mass = 0.0, negative_mass = 0.0;
  for (int j = 0; j < levels; ++j) {
    const double f = (j + 0.5) / levels;
    population_brier += f * (1.0 - f) / levels;
    positive_mass += f;
    negative_mass += 1.0 - f;
    for (int k = 0; k < per_level; ++k) {
      p.push_back(f);
      y.push_back(u(gen) < f ? 1.0 : 0.0);
    }
  }
  double population_auc = 0.0;
  for (int i = 0; i < levels; ++i)
    for (int j = 0; j < levels; ++j) {
      const double fi = (i + 0.5) / levels, fj = (j + 0.5) / levels;
      population_auc += fi * (1.0 - fj) * (i > j ? 1.0 : i == j ? 0.5 : 0.0);
    }
  population_auc /= positive_mass * negative_mass;

  plumb::BootstrapOptions o;
  o.replicates = 1000;
  o.seed = 17;
  o.confidence = 0.99;
  const auto boot = plumb::bootstrap_metrics(p, y, {}, o);
  INFO("Brier " << population_brier << " in [" << boot.brier.lo << ", " << boot.brier.hi << "]; AUC "
                << population_auc << " in [" << boot.auc.lo << ", " << boot.auc.hi << "]");
  CHECK(boot.brier.lo <= population_brier);
  CHECK(population_brier <= boot.brier.hi);
  CHECK(boot.auc.lo <= population_auc);
  CHECK(population_auc <= boot.auc.hi);

  const double n = static_cast<double>(p.size());
  double mean = 0.0, sq = 0.0;
  for (std::size_t i = 0; i < p.size(); ++i) mean += (p[i] - y[i]) * (p[i] - y[i]) / n;
  for (std::size_t i = 0; i < p.size(); ++i) {
    const double d = (p[i] - y[i]) * (p[i] - y[i]) - mean;
    sq += d * d;
  }
  const double normal_width = 2.0 * 2.5758 * std::sqrt(sq / (n - 1.0)) / std::sqrt(n);
  INFO("width " << boot.brier.hi - boot.brier.lo << " against the normal interval's " << normal_width);
  CHECK(std::abs((boot.brier.hi - boot.brier.lo) / normal_width - 1.0) < 0.15);
}

TEST_CASE("Consistency band over cells of thousands of rows has the binomial spread of each bin",
          "[metrics][bootstrap]") {
  // 10 forecast levels, one per equal-width bin, with 5000 rows each: a
  // bin's observed frequency under calibration is Binomial(5000, f) / 5000,
  // drawn by BTRS (count_draws.hpp). Its 95% band must hold the mean f and
  // be about 2 z sqrt(f (1 - f) / 5000) wide (the normal approximation to
  // the binomial, z = 1.96), within 15% and one step of 1/5000 for the
  // discreteness of the quantiles.
  std::vector<double> p;
  const double levels[] = {0.03, 0.12, 0.25, 0.31, 0.47, 0.5, 0.66, 0.74, 0.88, 0.97};
  for (const double f : levels)
    for (int k = 0; k < 5000; ++k) p.push_back(f);
  const auto bins = plumb::make_binning(p, {}, plumb::BinningKind::equal_width, 10);
  plumb::BootstrapOptions o;
  o.replicates = 2000;
  o.seed = 23;
  const auto band = plumb::consistency_band(p, {}, bins, o);
  REQUIRE(band.size() == 10);
  for (std::size_t b = 0; b < 10; ++b) {
    const double f = levels[b];
    const double normal_width = 2.0 * 1.96 * std::sqrt(f * (1.0 - f) / 5000.0);
    INFO("bin " << b << ": [" << band[b].lo << ", " << band[b].hi << "], normal width " << normal_width);
    CHECK(band[b].lo < f);
    CHECK(f < band[b].hi);
    CHECK(std::abs(band[b].hi - band[b].lo - normal_width) <= 0.15 * normal_width + 1.0 / 5000.0);
  }
}

TEST_CASE("Bootstrap of cells: a cell of no rows changes nothing", "[metrics][bootstrap]") {
  // bootstrap_metrics_of_cells takes any counts; a cell of count 0 stands
  // for no rows, so the intervals must be those without it (it draws no
  // uniform). It used to search an empty table.
  const std::vector<double> p = {0.1, 0.1, 0.3, 0.3, 0.5, 0.7, 0.7, 0.9};
  const std::vector<double> y = {0, 1, 0, 1, 1, 0, 1, 1};
  const std::vector<double> base(p.size(), 1.0);
  const std::vector<std::uint64_t> count = {40, 5, 30, 12, 20, 9, 31, 70};
  std::vector<double> p0 = p, y0 = y, base0 = base;
  std::vector<std::uint64_t> count0 = count;
  p0.insert(p0.begin() + 4, 0.5);
  y0.insert(y0.begin() + 4, 0.0);
  base0.insert(base0.begin() + 4, 1.0);
  count0.insert(count0.begin() + 4, 0);
  plumb::BootstrapOptions o;
  o.replicates = 50;
  o.seed = 31;
  for (const plumb::BinningKind kind : {plumb::BinningKind::equal_width, plumb::BinningKind::equal_mass}) {
    o.binning = kind;
    const auto a = plumb::bootstrap_metrics_of_cells(p, y, base, count, o);
    const auto b = plumb::bootstrap_metrics_of_cells(p0, y0, base0, count0, o);
    CHECK(a.brier.lo == b.brier.lo);
    CHECK(a.brier.hi == b.brier.hi);
    CHECK(a.auc.lo == b.auc.lo);
    CHECK(a.auc.hi == b.auc.hi);
    CHECK(a.ece.hi == b.ece.hi);
    CHECK(a.mcb_brier.hi == b.mcb_brier.hi);
  }
}
