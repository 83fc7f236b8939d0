#pragma once
// Binning of forecasts for reliability tables, ECE, the Murphy decomposition
// and the Hosmer-Lemeshow groups, and the per-bin weighted sums they share.
#include <cstddef>
#include <cstdint>
#include <span>
#include <string_view>
#include <vector>

#include "plumb/forecast_cells.hpp"

namespace plumb {

// equal_width: bin b holds forecasts p with min(k - 1, floor(k * p)) == b, so
//   bin b covers [b/k, (b+1)/k) and the last bin also holds p = 1.
// equal_mass: rows are taken in order of forecast; all rows with the same
//   forecast (a tie group) go to one bin, namely
//   min(k - 1, floor(k * (W_before + W_group / 2) / W_total)), where W_before
//   is the weight of all rows with a smaller forecast. Groups therefore hold
//   about equal weight (equal counts without weights), ties are never split,
//   and heavy ties can leave a bin empty.
enum class BinningKind { equal_width, equal_mass };

std::string_view to_string(BinningKind kind) noexcept;

// Which bin each row is in, and each bin's nominal range.
struct Binning {
  BinningKind kind = BinningKind::equal_width;
  std::size_t bin_count = 0;            // k, as requested; empty bins are kept
  std::vector<std::uint32_t> bin_of_row;  // one per input row, each < bin_count
  // Nominal range of bin b: [edge_lo[b], edge_hi[b]]. equal_width: b/k and
  // (b+1)/k. equal_mass: smallest and largest forecast in the bin (NaN when
  // the bin is empty).
  std::vector<double> edge_lo;
  std::vector<double> edge_hi;
};

// Inputs for all bin functions: `forecast` in [0, 1]; `weight` empty (all 1)
// or of the same length, finite and >= 0. `bins` >= 1.
// Throws plumb::Error(usage) on bins == 0 and Error(internal) on mismatched
// lengths. Cost: equal_width O(n), equal_mass one sort O(n log n).
// The equal-width bin of one forecast among `bins`: floor(bins * p), with
// p = 1 in the last bin (and anything not above 0 in the first).
std::uint32_t equal_width_bin(double forecast, std::size_t bins) noexcept;

Binning make_binning(std::span<const double> forecast, std::span<const double> weight,
                     BinningKind kind, std::size_t bins);

// The same for rows already sorted by forecast (non-decreasing): O(n), no
// sort. The bootstrap re-bins every replicate through this.
Binning make_binning_sorted(std::span<const double> forecast, std::span<const double> weight,
                            BinningKind kind, std::size_t bins);

// Weighted sums of one bin. Weights act as frequency weights throughout.
// The same with the rows' order by forecast given (a stable order, as
// ForecastCells::order), so equal_mass needs no sort of its own.
Binning make_binning_ordered(std::span<const double> forecast, std::span<const double> weight,
                             BinningKind kind, std::size_t bins, std::span<const std::uint32_t> order);

// The equal-mass binning of the rows the cells were made from (forecast_cells.hpp),
// in O(cells) plus one pass to label the rows: the same bins as
// make_binning(..., equal_mass, bins), since a cell's weight is its rows'
// weight summed in the order make_binning sums them. `total` is the rows'
// weight summed in row order (as make_binning sums it).
Binning make_mass_binning_of_cells(const ForecastCells& cells, double total, std::size_t bins);

// The same bins found from the cells alone: the edges, and each cell's bin
// in `cell_bin` when it is given; bin_of_row is left empty (the report finds
// each row's bin from its forecast).
Binning mass_binning_of_cell_sums(const ForecastCells& cells, double total, std::size_t bins,
                                  std::vector<std::uint32_t>* cell_bin = nullptr);

struct BinSums {
  std::size_t rows = 0;     // rows in the bin (zero-weight rows included)
  double weight = 0.0;      // sum w
  double weight_sq = 0.0;   // sum w^2 (for the Kish effective sample size)
  double forecast = 0.0;    // sum w p
  double label = 0.0;       // sum w y
  double forecast_min = 0.0;  // smallest / largest forecast (NaN when rows == 0)
  double forecast_max = 0.0;

  double mean_forecast() const noexcept { return forecast / weight; }
  double observed() const noexcept { return label / weight; }
  // Kish (1965) effective sample size (sum w)^2 / sum w^2; equals rows when
  // all weights are 1.
  double effective_size() const noexcept { return weight * weight / weight_sq; }
};

// The sums of every bin of `binning`, in bin order (bin_count entries).
// `label` holds 0/1 (values in [0, 1] are accepted and summed as they are).
std::vector<BinSums> bin_sums(std::span<const double> forecast, std::span<const double> label,
                              std::span<const double> weight, const Binning& binning);

}  // namespace plumb
