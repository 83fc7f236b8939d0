#pragma once
// Resampling uncertainty for the report: a seeded Poisson bootstrap of the
// headline metrics, and the consistency band of a reliability curve under
// the hypothesis of calibration (Broecker and Smith 2007).
#include <cstddef>
#include <cstdint>
#include <random>
#include <span>
#include <vector>

#include "plumb/binning.hpp"
#include "plumb/forecast_cells.hpp"
#include "plumb/reliability.hpp"

namespace plumb {

struct BootstrapOptions {
  std::size_t replicates = 300;
  // Worker threads for the replicates (0: one per core). Every replicate has
  // its own seeded generator, so results do not depend on this.
  std::size_t threads = 0;
  std::uint64_t seed = 1;
  double confidence = 0.95;  // two-sided level of every interval
  BinningKind binning = BinningKind::equal_width;  // bins for the ECE
  std::size_t bins = 10;
};

// Percentile interval: the (1 - confidence)/2 and (1 + confidence)/2
// quantiles of the replicates, with linear interpolation between order
// statistics (Hyndman and Fan 1996 type 7, R's default). NaN replicates
// (e.g. AUC of a replicate with one class) are left out.
struct BootstrapInterval {
  double lo = 0.0;
  double hi = 0.0;
  std::size_t used = 0;  // replicates that gave a finite value
};

struct BootstrapResult {
  BootstrapInterval ece;          // plug-in ECE, bins re-made in each replicate
  BootstrapInterval l2_debiased;  // sqrt(max(0, debiased squared l2)), same bins
  BootstrapInterval brier;
  BootstrapInterval mcb_brier;    // CORP miscalibration of the Brier score
  BootstrapInterval auc;
};

// Poisson bootstrap (each row's weight multiplied by an independent
// Poisson(1) count, the usual large-n stand-in for multinomial resampling).
// The rows are sorted by forecast once and, without weights, the rows of
// one forecast and label merged into a cell of n rows whose replicate
// weight is one Poisson(n) draw (the law of the sum of n Poisson(1)); each
// replicate is then one pass over the cells for every metric (bins, Brier,
// PAV via pav_fit_sorted, AUC with tie groups), so a replicate costs O(cells)
// and no re-sort. Within a cell the sum of squared row weights (for the
// debiased l2's effective sizes) is its expectation given the cell's total
// t, t + t(t - 1)/n. With weights every row is a cell.
// Poisson(n) is one draw per cell and replicate whatever n (count_draws.hpp:
// inversion for n <= 64, Hörmann's PTRS above, both exact in law).
// Determinism: replicate r draws from std::mt19937_64 seeded with
// splitmix64(seed + (r + 1) * 0x9E3779B97F4A7C15) and visits the cells in
// order, so the intervals depend only on (rows, options), not on the thread
// count.
// replicates == 0 gives Error(usage).
BootstrapResult bootstrap_metrics(std::span<const double> forecast,
                                  std::span<const double> label,
                                  std::span<const double> weight,
                                  const BootstrapOptions& options);
// The same with the rows' cells (forecast_cells.hpp) made for these rows
// already: no sort of its own; same numbers.
BootstrapResult bootstrap_metrics(std::span<const double> forecast,
                                  std::span<const double> label,
                                  std::span<const double> weight,
                                  const BootstrapOptions& options, const ForecastCells& cells);

// The same from cells of rows, in ascending forecast (ties in any fixed
// order): cell c stands for count[c] rows of forecast p[c], label y[c] and
// weight base[c] each; what bootstrap_metrics builds from rows (one cell
// per forecast and label without weights, one per row with them) and
// report --tally reads from a tally of unweighted rows.
// The cells bootstrap_metrics resamples, for bootstrap_metrics_of_cells:
// without weights one per forecast and label (count rows of weight 1), with
// weights one per row, in the order of `cells` (made for these rows).
struct BootstrapCells {
  std::vector<double> p, y, base;
  std::vector<std::uint64_t> count;
};
BootstrapCells bootstrap_cells(std::span<const double> forecast, std::span<const double> label,
                               std::span<const double> weight, const ForecastCells& cells);

BootstrapResult bootstrap_metrics_of_cells(std::span<const double> p, std::span<const double> y,
                                           std::span<const double> base, std::span<const std::uint64_t> count,
                                           const BootstrapOptions& options);

// The conventions above, for the report's other bootstraps (class_report.hpp)
// so that every interval of a report is drawn alike: replicate r's
// generator (std::mt19937_64 seeded with splitmix64(seed + (r + 1) *
// 0x9E3779B97F4A7C15)), one Poisson(1) count from it by inversion of the
// distribution function (one 64-bit draw each), and the percentile interval
// of the replicates' values (non-finite values left out).
std::mt19937_64 bootstrap_generator(std::uint64_t seed, std::size_t replicate);
std::uint64_t poisson1_draw(std::mt19937_64& generator);
// The same count from the generator's 64-bit draw `bits` itself
// (poisson1_draw(g) == poisson1_of_bits(g()) for a copy of g), for callers
// that look most draws up in a table of their leading bits first.
std::uint64_t poisson1_of_bits(std::uint64_t bits);
// A Poisson(1) count from 32 uniform bits u: the inverse of the
// distribution function at u / 2^32, so each count's probability lies
// within 2^-32 of e^-1 / k!. The multi-class report draws two rows' counts
// from one 64-bit draw this way (class_report.hpp).
std::uint64_t poisson1_of_u32(std::uint32_t u);
BootstrapInterval bootstrap_percentile_interval(std::vector<double> values, double confidence);

// Consistency band under calibration (Broecker and Smith 2007): keep the
// forecasts and weights (hence the bins), redraw every label as
// Bernoulli(forecast), recompute each bin's observed frequency, and take the
// percentile interval per bin. A calibrated forecaster's observed
// frequencies fall inside the band with about `confidence` probability per
// bin. Bins of zero weight get {NaN, NaN}. Replicate r uses the generator of
// bootstrap_metrics with seed ^ 0xC2B2AE3D27D4EB4F. With weights each row
// draws one uniform; without, the rows of one forecast are one cell whose
// positives are one Binomial(rows, forecast) draw (count_draws.hpp:
// inversion, or Hörmann's BTRS beyond 64 rows when the rarer outcome's mean
// is 10 or more; exact in law).
std::vector<Interval> consistency_band(std::span<const double> forecast,
                                       std::span<const double> weight,
                                       const Binning& binning,
                                       const BootstrapOptions& options);
// The same with the rows' cells made already: no sort; same numbers.
std::vector<Interval> consistency_band(std::span<const double> forecast,
                                       std::span<const double> weight,
                                       const Binning& binning,
                                       const BootstrapOptions& options, const ForecastCells& cells);

// The band of unweighted rows given as one cell per distinct forecast,
// ascending: count[c] rows of forecast[c] in bin bin[c]; bin_weight[b] the
// rows (weight) in bin b. Same numbers as consistency_band on those rows.
std::vector<Interval> consistency_band_of_cells(std::span<const double> forecast,
                                                std::span<const std::uint64_t> count,
                                                std::span<const std::uint32_t> bin,
                                                std::span<const double> bin_weight,
                                                const BootstrapOptions& options);

}  // namespace plumb
