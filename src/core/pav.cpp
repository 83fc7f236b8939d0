#include "plumb/pav.hpp"

#include <algorithm>
#include <numeric>

#include "plumb/error.hpp"

namespace plumb {
namespace {

void check_lengths(std::span<const double> x, std::span<const double> y, std::span<const double> w) {
  if (x.size() != y.size() || (!w.empty() && w.size() != x.size()))
    throw Error(ErrorKind::internal, "pav_fit: score, label and weight columns differ in length");
}

// A block under construction keeps the weighted sum of y rather than its
// mean, so that pooling is exact addition and the total is preserved.
// `mean` is wy / w, divided once when the block is made: the comparisons
// read it instead of dividing again (the same quotient, so the same fit).
struct Pool {
  double lo, hi, wy, w, mean;
};

// The pooling stack: distinct scores are pushed in ascending order with
// their weighted label sum and weight.
class Pooler {
 public:
  Pooler() { stack_.reserve(64); }
  void push(double score, double wy, double wsum) {
    if (!(wsum > 0.0)) return;
    Pool cur{score, score, wy, wsum, wy / wsum};
    // Merge backwards while the previous block's mean exceeds this one's.
    // Means are compared as quotients: cross-multiplying (wy * w) overflows
    // or underflows for weights beyond about 1e150 or below 1e-150.
    while (!stack_.empty() && stack_.back().mean > cur.mean) {
      const Pool& prev = stack_.back();
      const double pooled_wy = prev.wy + cur.wy, pooled_w = prev.w + cur.w;
      cur = Pool{prev.lo, cur.hi, pooled_wy, pooled_w, pooled_wy / pooled_w};
      stack_.pop_back();
    }
    stack_.push_back(cur);
  }
  std::vector<PavBlock> blocks() const {
    std::vector<PavBlock> out;
    out.reserve(stack_.size());
    for (const Pool& p : stack_) out.push_back(PavBlock{p.lo, p.hi, p.mean, p.w});
    // Division can break monotonicity by one ulp between nearly equal means.
    for (std::size_t i = 1; i < out.size(); ++i) out[i].value = std::max(out[i].value, out[i - 1].value);
    return out;
  }

 private:
  std::vector<Pool> stack_;
};

// PAV over rows visited in score order through `order` (or 0..n-1 when empty).
std::vector<PavBlock> fit_in_order(std::span<const double> x, std::span<const double> y,
                                   std::span<const double> w, const std::vector<std::size_t>* order) {
  const std::size_t n = x.size();
  Pooler pooler;
  std::size_t k = 0;
  while (k < n) {
    // Pool every row of one distinct score first: ties get one fitted value.
    const std::size_t first = order ? (*order)[k] : k;
    const double score = x[first];
    double wy = 0.0, wsum = 0.0;
    for (; k < n; ++k) {
      const std::size_t i = order ? (*order)[k] : k;
      if (x[i] != score) break;
      const double wi = w.empty() ? 1.0 : w[i];
      wy += wi * y[i];
      wsum += wi;
    }
    pooler.push(score, wy, wsum);
  }
  return pooler.blocks();
}

}  // namespace

std::vector<PavBlock> pav_fit(std::span<const double> x, std::span<const double> y,
                              std::span<const double> w) {
  check_lengths(x, y, w);
  std::vector<std::size_t> order(x.size());
  std::iota(order.begin(), order.end(), std::size_t{0});
  // Stable, so tied rows are pooled in input order whatever order the rows
  // came in; sorted input (cross-fitting's folds) skips the sort.
  if (!std::is_sorted(x.begin(), x.end()))
    std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return x[a] < x[b]; });
  return fit_in_order(x, y, w, &order);
}

std::vector<PavBlock> pav_fit_sorted(std::span<const double> x, std::span<const double> y,
                                     std::span<const double> w) {
  check_lengths(x, y, w);
  return fit_in_order(x, y, w, nullptr);
}

std::vector<double> pav_values(std::span<const double> x, std::span<const double> y,
                               std::span<const double> w) {
  const std::vector<PavBlock> blocks = pav_fit(x, y, w);
  std::vector<double> out(x.size(), 0.0);
  for (std::size_t i = 0; i < x.size(); ++i) {
    // The block whose range holds x[i]; rows of zero weight whose score has no
    // block take the value of the nearest block to their left (or the first).
    auto it = std::upper_bound(blocks.begin(), blocks.end(), x[i],
                               [](double s, const PavBlock& b) { return s < b.score_lo; });
    out[i] = it == blocks.begin() ? (blocks.empty() ? 0.0 : blocks.front().value) : std::prev(it)->value;
  }
  return out;
}

}  // namespace plumb

namespace plumb {

std::vector<PavBlock> pav_fit_cells(std::span<const double> score, std::span<const double> weighted_label,
                                    std::span<const double> weight) {
  if (score.size() != weighted_label.size() || score.size() != weight.size())
    throw Error(ErrorKind::internal, "pav_fit_cells: score, label and weight columns differ in length");
  Pooler pooler;
  for (std::size_t c = 0; c < score.size(); ++c) pooler.push(score[c], weighted_label[c], weight[c]);
  return pooler.blocks();
}

}  // namespace plumb
