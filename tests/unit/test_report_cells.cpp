// The report on per-forecast cells against the row-by-row forms: one sort
// into cells (make_forecast_cells), PAV, AUC and the calibration regression
// read from cells, and report --tally's cell report (build_report_of_cells)
// against build_report on the rows the cells stand for. Invented data with
// many ties, with and without weights.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <numeric>
#include <random>
#include <vector>

#include "plumb/auc.hpp"
#include "plumb/binning.hpp"
#include "plumb/calibration_regression.hpp"
#include "plumb/error.hpp"
#include "plumb/forecast_cells.hpp"
#include "plumb/pav.hpp"
#include "plumb/report.hpp"

namespace {

struct Rows {
  std::vector<double> p, y, w;
};

// n rows whose forecasts take `levels` values (many ties); labels drawn with
// a miscalibrated probability; weights in [0.2, 3] when weighted.
Rows tied_rows(std::size_t n, std::size_t levels, bool weighted, std::uint64_t seed) {
  std::mt19937_64 gen(seed);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  Rows r;
  for (std::size_t i = 0; i < n; ++i) {
    const double p = std::floor(u(gen) * static_cast<double>(levels)) / static_cast<double>(levels - 1);
    r.p.push_back(std::min(1.0, p));
    r.y.push_back(u(gen) < 0.1 + 0.7 * r.p.back() ? 1.0 : 0.0);
    if (weighted) r.w.push_back(0.2 + 2.8 * u(gen));
  }
  return r;
}

}  // namespace

TEST_CASE("Forecast cells: the order is a stable sort by forecast and the cells sum their rows",
          "[report][cells]") {
  Rows r = tied_rows(5000, 37, true, 11);
  r.p[3] = -0.0;  // -0 and +0 are one forecast
  r.p[4] = 0.0;
  const plumb::ForecastCells c = plumb::make_forecast_cells(r.p, r.y, r.w);
  std::vector<std::size_t> expected(r.p.size());
  std::iota(expected.begin(), expected.end(), std::size_t{0});
  std::stable_sort(expected.begin(), expected.end(), [&](std::size_t a, std::size_t b) { return r.p[a] < r.p[b]; });
  CHECK(std::vector<std::size_t>(c.order.begin(), c.order.end()) == expected);
  REQUIRE(c.size() == 37);
  double weight = 0.0, total = 0.0;
  std::uint64_t rows = 0;
  for (std::size_t k = 0; k < c.size(); ++k) {
    weight += c.weight[k];
    rows += c.rows[k];
    CHECK(std::abs(c.positives[k] + c.negatives[k] - c.weight[k]) <= 1e-12 * c.weight[k]);
  }
  for (double w : r.w) total += w;
  CHECK(rows == r.p.size());
  CHECK(std::abs(weight - total) <= 1e-12 * total);
}

TEST_CASE("Forecast cells: PAV from cells gives pav_fit's blocks bit for bit", "[report][cells][pav]") {
  for (bool weighted : {false, true}) {
    const Rows r = tied_rows(4000, 50, weighted, 21);
    const plumb::ForecastCells c = plumb::make_forecast_cells(r.p, r.y, r.w);
    const auto rows = plumb::pav_fit(r.p, r.y, r.w);
    const auto cells = plumb::pav_fit_cells(c.forecast, c.positives, c.weight);
    REQUIRE(rows.size() == cells.size());
    for (std::size_t b = 0; b < rows.size(); ++b) {
      CHECK(rows[b].score_lo == cells[b].score_lo);
      CHECK(rows[b].score_hi == cells[b].score_hi);
      CHECK(rows[b].value == cells[b].value);
      CHECK(rows[b].weight == cells[b].weight);
    }
  }
}

TEST_CASE("Forecast cells: AUC from cells equals the pairwise definition", "[report][cells][auc]") {
  // Mann-Whitney form (Hanley and McNeil 1982): the weighted share of
  // (positive, negative) pairs ranked right, ties counting one half,
  // computed over all pairs of rows.
  const Rows r = tied_rows(800, 13, true, 31);
  double wins = 0.0, pos = 0.0, neg = 0.0;
  for (std::size_t i = 0; i < r.p.size(); ++i) {
    if (r.y[i] == 1.0) pos += r.w[i]; else neg += r.w[i];
    if (r.y[i] != 1.0) continue;
    for (std::size_t j = 0; j < r.p.size(); ++j) {
      if (r.y[j] != 0.0) continue;
      wins += r.w[i] * r.w[j] * (r.p[i] > r.p[j] ? 1.0 : r.p[i] == r.p[j] ? 0.5 : 0.0);
    }
  }
  const plumb::ForecastCells c = plumb::make_forecast_cells(r.p, r.y, r.w);
  CHECK(std::abs(plumb::auc_cells(c.positives, c.negatives) - wins / (pos * neg)) <= 1e-12);
}

TEST_CASE("Forecast cells: the calibration regression on cells has the row fit's maximum", "[report][cells]") {
  // Both solve the same weighted logistic likelihood (Cox 1958); only the
  // order of the sums differs, so they agree far below the solver's
  // tolerance.
  for (bool weighted : {false, true}) {
    const Rows r = tied_rows(6000, 40, weighted, 41);
    const auto rows = plumb::calibration_regression(r.p, r.y, r.w);
    const auto cells = plumb::calibration_regression(plumb::make_forecast_cells(r.p, r.y, r.w));
    CHECK(std::abs(rows.slope - cells.slope) <= 1e-10);
    CHECK(std::abs(rows.intercept_free - cells.intercept_free) <= 1e-10);
    CHECK(std::abs(rows.intercept_at_unit_slope - cells.intercept_at_unit_slope) <= 1e-9);
    CHECK(rows.clipped == cells.clipped);
    CHECK(cells.converged);
  }
}

TEST_CASE("Forecast cells: equal-mass binning in a given order equals make_binning's", "[report][cells]") {
  const Rows r = tied_rows(3000, 29, true, 51);
  const plumb::ForecastCells c = plumb::make_forecast_cells(r.p, r.y, r.w);
  const auto a = plumb::make_binning(r.p, r.w, plumb::BinningKind::equal_mass, 7);
  const auto b = plumb::make_binning_ordered(r.p, r.w, plumb::BinningKind::equal_mass, 7, c.order);
  CHECK(a.bin_of_row == b.bin_of_row);
  CHECK(a.edge_lo == b.edge_lo);
  CHECK(a.edge_hi == b.edge_hi);
  double total = 0.0;
  for (double w : r.w) total += w;
  const auto m = plumb::make_mass_binning_of_cells(c, total, 7);
  CHECK(a.bin_of_row == m.bin_of_row);
  CHECK(a.edge_lo == m.edge_lo);
  CHECK(a.edge_hi == m.edge_hi);
}

namespace {

// Unit-weight rows as report --tally reads a tally (one entry per forecast,
// ascending), and those rows in the order the report replays them (per
// entry its label-0 rows, then its label-1 rows). Some forecasts have rows
// of one label only.
void tally_like(std::size_t levels, std::uint64_t seed, plumb::TallyCells& cells, Rows& rows) {
  std::mt19937_64 gen(seed);
  std::uniform_int_distribution<int> count(0, 40);
  for (std::size_t k = 0; k < levels; ++k) {
    const double p = static_cast<double>(k) / static_cast<double>(levels - 1);
    int n[2];
    for (int l = 0; l < 2; ++l) n[l] = count(gen) * (l == 1 ? 1 : 2) / 2 + (k % 3 == 0 ? 0 : 1);
    if (n[0] + n[1] == 0) continue;
    cells.forecast.push_back(p);
    cells.negatives.push_back(n[0]);
    cells.positives.push_back(n[1]);
    for (int l = 0; l < 2; ++l) {
      rows.p.insert(rows.p.end(), static_cast<std::size_t>(n[l]), p);
      rows.y.insert(rows.y.end(), static_cast<std::size_t>(n[l]), static_cast<double>(l));
    }
  }
}

void check_same(const plumb::ScoreSummary& a, const plumb::ScoreSummary& b, double tolerance) {
  auto same = [tolerance](double x, double y) {
    if (std::isnan(x) || std::isnan(y)) return std::isnan(x) && std::isnan(y);
    return tolerance == 0.0 ? x == y : std::abs(x - y) <= tolerance * std::max(1.0, std::abs(x));
  };
  CHECK(a.rows == b.rows);
  CHECK(same(a.weight, b.weight));
  CHECK(same(a.positives, b.positives));
  CHECK(same(a.mean_forecast, b.mean_forecast));
  CHECK(same(a.brier, b.brier));
  CHECK(same(a.log_loss, b.log_loss));
  CHECK(same(a.auc, b.auc));
  CHECK(same(a.murphy.reliability, b.murphy.reliability));
  CHECK(same(a.murphy.resolution, b.murphy.resolution));
  CHECK(same(a.murphy.within_bin_variance, b.murphy.within_bin_variance));
  CHECK(same(a.murphy.within_bin_covariance, b.murphy.within_bin_covariance));
  CHECK(same(a.corp_brier.mcb, b.corp_brier.mcb));
  CHECK(same(a.corp_brier.dsc, b.corp_brier.dsc));
  CHECK(same(a.corp_log_loss.mcb, b.corp_log_loss.mcb));
  CHECK(same(a.ece_equal_width.ece, b.ece_equal_width.ece));
  CHECK(same(a.ece_equal_width.l2_debiased, b.ece_equal_width.l2_debiased));
  CHECK(same(a.ece_equal_mass.ece, b.ece_equal_mass.ece));
  CHECK(same(a.ece_equal_mass.l2_squared_debiased, b.ece_equal_mass.l2_squared_debiased));
  CHECK(same(a.hosmer_lemeshow.statistic, b.hosmer_lemeshow.statistic));
  CHECK(same(a.spiegelhalter.z, b.spiegelhalter.z));
  CHECK(a.histogram == b.histogram);
  REQUIRE(a.table.bins.size() == b.table.bins.size());
  for (std::size_t k = 0; k < a.table.bins.size(); ++k) {
    CHECK(same(a.table.bins[k].observed, b.table.bins[k].observed));
    CHECK(same(a.table.bins[k].edge_hi, b.table.bins[k].edge_hi));
    CHECK(same(a.table.bins[k].effective_size, b.table.bins[k].effective_size));
  }
  REQUIRE(a.pav_curve.size() == b.pav_curve.size());
  for (std::size_t k = 0; k < a.pav_curve.size(); ++k) CHECK(same(a.pav_curve[k].value, b.pav_curve[k].value));
  // The regression is solved on cells in both, from sums in another order.
  CHECK(std::abs(a.regression.slope - b.regression.slope) <= 1e-12 * std::max(1.0, std::abs(a.regression.slope)));
  REQUIRE(a.bootstrap.has_value() == b.bootstrap.has_value());
  if (a.bootstrap) {
    CHECK(same(a.bootstrap->ece.lo, b.bootstrap->ece.lo));
    CHECK(same(a.bootstrap->auc.hi, b.bootstrap->auc.hi));
    CHECK(same(a.bootstrap->mcb_brier.hi, b.bootstrap->mcb_brier.hi));
    REQUIRE(a.band.size() == b.band.size());
    for (std::size_t k = 0; k < a.band.size(); ++k) CHECK(same(a.band[k].lo, b.band[k].lo));
  }
}

}  // namespace

TEST_CASE("Report on cells of unit-weight rows: the figures of the rows, bit for bit", "[report][cells]") {
  plumb::TallyCells cells;
  Rows rows;
  tally_like(61, 7, cells, rows);
  for (plumb::BinningKind kind : {plumb::BinningKind::equal_width, plumb::BinningKind::equal_mass}) {
    plumb::ReportOptions o;
    o.bootstrap = 30;
    o.threads = 1;
    o.binning = kind;
    o.bins = 8;
    o.hl_groups = kind == plumb::BinningKind::equal_mass ? 8 : 10;
    const plumb::ForecastColumn column{"p", rows.p};
    const plumb::Report a = plumb::build_report(std::span(&column, 1), rows.y, {}, {}, {}, {}, o);
    const plumb::ForecastCellColumn cell_column{"p", cells};
    const plumb::Report b = plumb::build_report_of_cells(std::span(&cell_column, 1), {}, o);
    check_same(a.scores[0].overall, b.scores[0].overall, 0.0);
  }
}

TEST_CASE("Report on cells out of forecast order: the figures of their rows in that order, bit for bit",
          "[report][cells]") {
  // A tally's entries come in ascending forecast, distinct, and the report
  // then reads their sums in place; entries in another order (descending),
  // or repeating a forecast (as a map that sends two scores to one value
  // makes them), are sorted and summed per forecast. Either way the figures
  // are those of the rows.
  enum class Layout { ascending, descending, repeated };
  for (const Layout layout : {Layout::ascending, Layout::descending, Layout::repeated}) {
    plumb::TallyCells cells;
    Rows rows;
    std::mt19937_64 gen(19);
    std::uniform_int_distribution<int> count(0, 30);
    const std::size_t levels = 41;
    for (std::size_t j = 0; j < levels; ++j) {
      const std::size_t k = layout == Layout::descending ? levels - 1 - j : j;
      // Repeated: every forecast twice in a row, as two entries.
      const double p = layout == Layout::repeated ? static_cast<double>(k / 2) / static_cast<double>(levels / 2)
                                                  : static_cast<double>(k) / static_cast<double>(levels - 1);
      int n[2];
      for (int l = 0; l < 2; ++l) n[l] = count(gen) + (k % 4 == 0 ? 0 : 1);
      if (n[0] + n[1] == 0) continue;
      cells.forecast.push_back(p);
      cells.negatives.push_back(n[0]);
      cells.positives.push_back(n[1]);
      for (int l = 0; l < 2; ++l) {
        rows.p.insert(rows.p.end(), static_cast<std::size_t>(n[l]), p);
        rows.y.insert(rows.y.end(), static_cast<std::size_t>(n[l]), static_cast<double>(l));
      }
    }
    for (plumb::BinningKind kind : {plumb::BinningKind::equal_width, plumb::BinningKind::equal_mass}) {
      INFO("layout " << static_cast<int>(layout) << ", binning " << static_cast<int>(kind));
      plumb::ReportOptions o;
      o.bootstrap = 20;
      o.threads = 1;
      o.binning = kind;
      o.bins = 6;
      o.hl_groups = 7;
      const plumb::ForecastColumn column{"p", rows.p};
      const plumb::Report a = plumb::build_report(std::span(&column, 1), rows.y, {}, {}, {}, {}, o);
      const plumb::ForecastCellColumn cell_column{"p", cells};
      const plumb::Report b = plumb::build_report_of_cells(std::span(&cell_column, 1), {}, o);
      check_same(a.scores[0].overall, b.scores[0].overall, 0.0);
      // The regression, fitted on the per-forecast sums read in place (or
      // summed), is the fit on the rows' ForecastCells to the bit.
      const plumb::CalibrationRegression direct =
          plumb::calibration_regression(plumb::make_forecast_cells(rows.p, rows.y, {}));
      CHECK(b.scores[0].overall.regression.slope == direct.slope);
      CHECK(b.scores[0].overall.regression.intercept_free == direct.intercept_free);
      CHECK(b.scores[0].overall.regression.intercept_at_unit_slope == direct.intercept_at_unit_slope);
      CHECK(b.scores[0].overall.regression.clipped == direct.clipped);
    }
  }
}

TEST_CASE("Report on weighted cells: each cell one row of its weight gives the rows' figures", "[report][cells]") {
  // With one row per cell the cell's weight is the row's and weight_sq its
  // square, so every sum is the rows' sum up to rounding.
  const Rows r = tied_rows(2000, 2000, true, 61);
  plumb::TallyCells cells;
  cells.unit_weights = false;
  std::vector<std::size_t> order(r.p.size());
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return r.p[a] < r.p[b]; });
  Rows sorted;
  for (std::size_t i : order) {
    cells.forecast.push_back(r.p[i]);
    cells.negatives.push_back(r.y[i] == 0.0 ? r.w[i] : 0.0);
    cells.positives.push_back(r.y[i] == 1.0 ? r.w[i] : 0.0);
    cells.weight_sq.push_back(r.w[i] * r.w[i]);
    cells.rows.push_back(1);
    sorted.p.push_back(r.p[i]);
    sorted.y.push_back(r.y[i]);
    sorted.w.push_back(r.w[i]);
  }
  plumb::ReportOptions o;
  o.bootstrap = 0;
  const plumb::ForecastColumn column{"p", sorted.p};
  const plumb::Report a = plumb::build_report(std::span(&column, 1), sorted.y, sorted.w, {}, {}, {}, o);
  const plumb::ForecastCellColumn cell_column{"p", cells};
  const plumb::Report b = plumb::build_report_of_cells(std::span(&cell_column, 1), {}, o);
  check_same(a.scores[0].overall, b.scores[0].overall, 1e-12);

  o.bootstrap = 10;
  CHECK_THROWS_AS(plumb::build_report_of_cells(std::span(&cell_column, 1), {}, o), plumb::Error);
}

TEST_CASE("Report on weighted cells of several rows: the Kish sizes read the cells' squared weights",
          "[report][cells]") {
  // Two rows of weights 1 and 3 in one cell: effective size (1 + 3)^2 /
  // (1 + 9) = 1.6 (Kish 1965), not the 16 / 16 = 1 of one row of weight 4.
  // Here with a third row of label 1 and weight 1 at the same score.
  plumb::TallyCells cells;
  cells.unit_weights = false;
  cells.forecast = {0.05};
  cells.negatives = {4.0};
  cells.positives = {1.0};
  cells.weight_sq = {11.0};
  cells.rows = {3};
  plumb::ReportOptions o;
  o.bootstrap = 0;
  o.bins = 10;
  const plumb::ForecastCellColumn column{"p", cells};
  const plumb::Report r = plumb::build_report_of_cells(std::span(&column, 1), {}, o);
  const auto& bin = r.scores[0].overall.table.bins[0];
  CHECK(bin.rows == 3);
  CHECK(bin.weight == 5.0);
  CHECK(std::abs(bin.effective_size - 25.0 / 11.0) <= 1e-15);
  CHECK(std::abs(bin.observed - 0.2) <= 1e-15);
}

TEST_CASE("Report given counted cells (no row order): the figures of the rows sorted into cells, bit for bit",
          "[report][cells]") {
  // What report does for one unweighted column counted while read: the cells
  // without their row order, so the rows find their bins and PAV values
  // from their forecast and the bootstrap's cells come from the counts.
  const Rows r = tied_rows(4000, 53, false, 7);
  plumb::ForecastCells counted = plumb::make_forecast_cells(r.p, r.y, {});
  counted.order.clear();
  counted.first.clear();
  for (plumb::BinningKind kind : {plumb::BinningKind::equal_width, plumb::BinningKind::equal_mass})
    for (std::size_t threads : {std::size_t{1}, std::size_t{2}}) {
      plumb::ReportOptions o;
      o.bootstrap = 30;
      o.threads = threads;
      o.binning = kind;
      o.bins = 9;
      o.hl_groups = 7;
      const plumb::ForecastColumn sorted{"p", r.p};
      const plumb::ForecastColumn given{"p", r.p, &counted};
      const plumb::Report a = plumb::build_report(std::span(&sorted, 1), r.y, {}, {}, {}, {}, o);
      const plumb::Report b = plumb::build_report(std::span(&given, 1), r.y, {}, {}, {}, {}, o);
      check_same(a.scores[0].overall, b.scores[0].overall, 0.0);
      CHECK(a.scores[0].overall.regression.slope == b.scores[0].overall.regression.slope);
      CHECK(a.scores[0].overall.regression.intercept_at_unit_slope ==
            b.scores[0].overall.regression.intercept_at_unit_slope);
    }
}
