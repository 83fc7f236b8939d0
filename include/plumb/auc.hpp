#pragma once
// Area under the ROC curve as the Mann-Whitney probability
// (Hanley and McNeil 1982).
#include <span>

namespace plumb {

// With positive weight w_i y_i and negative weight w_i (1 - y_i) per row:
//   auc = sum_{i, j} w_i y_i w_j (1 - y_j) [1(p_i > p_j) + 1/2 1(p_i = p_j)]
//         / (sum w y * sum w (1 - y))
// the probability that a random positive outranks a random negative, ties
// counting one half. Equals wilcox.test's W / (n1 n0) without weights. Any
// non-decreasing map of the forecasts that keeps ties and order leaves it
// unchanged. NaN when either class has zero weight. O(n log n): one sort.
double auc(std::span<const double> forecast, std::span<const double> label,
           std::span<const double> weight = {});

// The same for rows already sorted by forecast (non-decreasing); O(n).
double auc_sorted(std::span<const double> forecast, std::span<const double> label,
                  std::span<const double> weight = {});

// The same from one cell per distinct forecast in ascending order, with the
// cell's positive weight sum w y and negative weight sum w (1 - y); O(cells).
double auc_cells(std::span<const double> positives, std::span<const double> negatives);

}  // namespace plumb
