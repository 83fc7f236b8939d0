#pragma once
// The rows of one forecast column sorted once and gathered into one cell per
// distinct forecast: what the report's rank-based metrics (binning by mass,
// PAV/CORP, AUC, Hosmer-Lemeshow), its calibration regression and its
// bootstrap read instead of sorting the rows again each.
#include <cstddef>
#include <cstdint>
#include <span>
#include <vector>

namespace plumb {

struct ForecastCells {
  // Row indices in ascending forecast, ties in input order (what a stable
  // sort by forecast gives; -0 and +0 are one forecast). 32-bit indices
  // (half the memory of the row order on 10^7 rows): at most 2^32 - 1 rows.
  std::vector<std::uint32_t> order;
  // One entry per distinct forecast, ascending. forecast is the value of the
  // cell's first row in `order`. weight, positives (sum w y), negatives
  // (sum w (1 - y)) and weight_sq (sum w^2) are summed over the cell's rows
  // in `order`, which is the order in which a row-by-row pass over the
  // sorted rows adds them, so sums taken per cell equal those bit for bit.
  std::vector<double> forecast, weight, positives, negatives, weight_sq;
  std::vector<std::uint64_t> rows;   // rows in the cell (zero-weight rows included)
  std::vector<std::uint64_t> first;  // the cell's first position in `order`; first[cells] = rows

  std::size_t size() const noexcept { return forecast.size(); }
};

// Rows given per score (report --tally reads its tally so): entry c stands
// for rows of forecast[c], negatives[c] the weight of those of label 0 and
// positives[c] of those of label 1, rows[c] rows in all (zero-weight rows
// included) whose squared weights sum to weight_sq[c]. With unit_weights
// every row weighs 1: negatives and positives are row counts (whole
// numbers), and rows and weight_sq are left empty. Entries may come in any
// order and may repeat a forecast (a map can send two scores to one
// forecast). A sum over the rows is taken entry by entry, an entry's label-0
// rows before its label-1 rows; with unit_weights row by row, with the same
// rounding as over the rows themselves, otherwise each label's weight once,
// with the entry's rows and squared weights counted on its first label.
struct TallyCells {
  std::vector<double> forecast, negatives, positives, weight_sq;
  std::vector<std::uint64_t> rows;
  bool unit_weights = true;
  std::size_t size() const noexcept { return forecast.size(); }
};

// Row indices in ascending forecast, ties in input order: the order a
// stable sort by value gives, by an LSD radix sort of the bit patterns
// (-0 read as +0). Every forecast must be >= 0 (any finite or infinite
// non-negative value; not NaN); throws plumb::Error(usage) beyond 2^32 - 1
// rows.
std::vector<std::uint32_t> sorted_forecast_order(std::span<const double> forecast);

// Sorts the rows (an LSD radix sort of the forecasts' bit patterns, stable)
// and gathers the cells. Throws plumb::Error(usage) beyond 2^32 - 1 rows. `label` 0/1 (or in [0, 1]), `weight` empty (all 1)
// or one per row; forecasts must be in [0, 1] (check_metric_input's rule).
ForecastCells make_forecast_cells(std::span<const double> forecast, std::span<const double> label,
                                  std::span<const double> weight);

}  // namespace plumb
