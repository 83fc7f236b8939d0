#pragma once
// Weighted isotonic regression by pool-adjacent-violators
// (Ayer, Brunk, Ewing, Reid and Silverman 1955; Barlow et al. 1972).
#include <cstddef>
#include <span>
#include <vector>

namespace plumb {

// One constant piece of the isotonic fit: every input score in
// [score_lo, score_hi] is fitted with `value`; `weight` is the total weight
// of the rows pooled into the block.
struct PavBlock {
  double score_lo;
  double score_hi;
  double value;
  double weight;
};

// Weighted least-squares non-decreasing fit of `y` on `x`.
//
// Inputs: x, y of equal length; `w` empty (all weights 1) or of the same
// length with every weight >= 0 and finite. x need not be sorted.
// Rows with equal x are pooled first (one block per distinct score, with the
// weighted mean of y), so ties never get different fitted values. Rows of
// zero weight take no part in the fit; a distinct score all of whose rows
// have zero weight is dropped.
// Guarantees: blocks are ordered by score, score ranges are disjoint, values
// are non-decreasing, and sum(weight * value) equals sum(w * y) up to
// rounding. Cost: one sort, then O(n).
// Throws plumb::Error(internal) on mismatched lengths.
std::vector<PavBlock> pav_fit(std::span<const double> x, std::span<const double> y,
                              std::span<const double> w = {});

// The same fit for rows already sorted by x (non-decreasing); no sort is
// done. Callers that sort once and fit many subsets (cross-fitting) use this.
std::vector<PavBlock> pav_fit_sorted(std::span<const double> x, std::span<const double> y,
                                     std::span<const double> w = {});

// The same fit from one cell per distinct score, ascending: weighted_label[c]
// is the cell's sum w y and weight[c] its sum w, each summed over the cell's
// rows in their order (ForecastCells). Gives the blocks pav_fit gives for
// those rows, bit for bit, in O(cells). Cells of zero weight are dropped.
std::vector<PavBlock> pav_fit_cells(std::span<const double> score, std::span<const double> weighted_label,
                                    std::span<const double> weight);

// The fitted value at each input row, in the input's row order.
std::vector<double> pav_values(std::span<const double> x, std::span<const double> y,
                               std::span<const double> w = {});

}  // namespace plumb
