#include "plumb/maps/venn_abers_map.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <limits>
#include <numeric>
#include <string>

#include "core/json_fields.hpp"
#include "plumb/error.hpp"
#include "plumb/number_text.hpp"

namespace plumb {

namespace {

// A pooled block of the PAV fit: its total weight and weighted label sum.
struct Pool {
  double w = 0.0, y = 0.0;
};
// a's mean above b's, compared without dividing (weights are positive).
bool above(const Pool& a, const Pool& b) { return a.y * b.w > b.y * a.w; }

// A PAV stack: its blocks bottom to top, and the running sums of their
// weights and label sums from the bottom, so that the sums of the top a
// blocks are one subtraction.
struct Stack {
  std::vector<Pool> block;
  std::vector<double> cw{0.0}, cy{0.0};
  void push(const Pool& p) {
    block.push_back(p);
    cw.push_back(cw.back() + p.w);
    cy.push_back(cy.back() + p.y);
  }
  void pop() {
    block.pop_back();
    cw.pop_back();
    cy.pop_back();
  }
  std::size_t size() const { return block.size(); }
  // The a-th block from the top (0: the top).
  const Pool& from_top(std::size_t a) const { return block[block.size() - 1 - a]; }
  Pool top_sum(std::size_t a) const {
    const std::size_t n = block.size();
    return {cw[n] - cw[n - a], cy[n] - cy[n - a]};
  }
};

Pool plus(Pool a, const Pool& b) { return {a.w + b.w, a.y + b.y}; }

// The value of the test row's block: `b` (the test row, with the point it
// shares a score with) pooled with the top blocks of `left` (the PAV stack
// of the points below, values rising to its top) while the one below is
// above it, and with those of `right` (the stack of the points above,
// values falling to its top, i.e. rising rightwards) while the one above is
// below it. Pooling adjacent violators in any order ends at the isotonic
// fit, and the stacks are each the fit of their side, so the block found is
// the test row's block in the fit of all rows. The stacks are only read.
//
// Up to `linear_steps` poolings one by one (the common case: a test row
// pools with a few blocks); beyond, by binary searches over the stacks'
// running sums, O(log^2 k). For b right blocks pooled, the left blocks to
// pool are the top A(b), where A(b) is the first depth a whose block is not
// above the mean of b, the top a left blocks and the top b right blocks
// (that test turns from true to false once as a grows: the blocks fall
// with depth while the mean stays at or above the last one pooled). The
// right blocks to pool are the top b*, b* the first b whose block is not
// below that mean h(b) (pooling a right block below h never raises h, and
// the blocks rise with depth, so that test too turns once). Each pooling
// on the way is of a violating pair, so (A(b*), b*) is the fit's block.
double test_block_value(const Pool test, const Stack& left, const Stack& right, std::size_t linear_steps) {
  Pool b = test;
  std::size_t l = 0, r = 0;  // blocks pooled from each side
  for (std::size_t steps = 0;; ++steps) {
    if (steps == linear_steps) break;
    if (l < left.size() && above(left.from_top(l), b)) {
      b = plus(b, left.from_top(l));
      ++l;
    } else if (r < right.size() && above(b, right.from_top(r))) {
      b = plus(b, right.from_top(r));
      ++r;
    } else {
      return std::clamp(b.y / b.w, 0.0, 1.0);
    }
  }
  // The pooled block of the test row, the top a left and top rb right blocks.
  auto pooled = [&](std::size_t a, std::size_t rb) { return plus(plus(test, left.top_sum(a)), right.top_sum(rb)); };
  auto left_count = [&](std::size_t rb) {
    std::size_t lo = 0, hi = left.size();
    while (lo < hi) {
      const std::size_t mid = lo + (hi - lo) / 2;
      if (above(left.from_top(mid), pooled(mid, rb)))
        lo = mid + 1;
      else
        hi = mid;
    }
    return lo;
  };
  std::size_t lo = 0, hi = right.size();
  while (lo < hi) {
    const std::size_t mid = lo + (hi - lo) / 2;
    if (above(pooled(left_count(mid), mid), right.from_top(mid)))
      lo = mid + 1;
    else
      hi = mid;
  }
  const Pool m = pooled(left_count(lo), lo);
  return std::clamp(m.y / m.w, 0.0, 1.0);
}

// splitmix64 (Steele, Lea and Flood 2014): the cross form's fixed-seed
// dealing of rows into folds.
std::uint64_t splitmix(std::uint64_t& state) {
  std::uint64_t z = (state += 0x9E3779B97F4A7C15ull);
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
  return z ^ (z >> 31);
}
constexpr std::uint64_t fold_seed = 0x706C756D62564121ull;

double merged(double p0, double p1) { return p1 / (1.0 - p0 + p1); }

void fill_diagnostics(CalibrationMap& map, FitDiagnostics& d, const FitData& data, std::string note) {
  d.iterations = 1;
  d.converged = true;
  d.log_loss = mean_log_loss(map, data);
  d.notes.push_back(std::move(note));
}

}  // namespace

VennAbersPoints venn_abers_points(const FitData& data) {
  std::vector<std::size_t> order(data.score.size());
  std::iota(order.begin(), order.end(), std::size_t{0});
  if (!std::is_sorted(data.score.begin(), data.score.end()))
    std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return data.score[a] < data.score[b]; });
  VennAbersPoints p;
  for (std::size_t i : order) {
    const double w = data.weight.empty() ? 1.0 : data.weight[i];
    if (!(w > 0.0)) continue;
    if (p.score.empty() || p.score.back() != data.score[i]) {
      p.score.push_back(data.score[i]);
      p.weight.push_back(0.0);
      p.label_sum.push_back(0.0);
    }
    p.weight.back() += w;
    p.label_sum.back() += w * data.label[i];
  }
  return p;
}

std::vector<VennAbersPoints> venn_abers_folds(const VennAbersPoints& all, int folds) {
  // Deal every row (a whole-number weight of a point's label counts rows)
  // into a fold, point by point in score order, negatives before positives.
  std::vector<VennAbersPoints> fold(static_cast<std::size_t>(folds));
  std::uint64_t state = fold_seed;
  double rows = 0.0;
  std::vector<double> w(fold.size()), y(fold.size());
  for (std::size_t i = 0; i < all.score.size(); ++i) {
    const double positives = all.label_sum[i], negatives = all.weight[i] - all.label_sum[i];
    for (double count : {negatives, positives})
      if (!(count == std::floor(count)) || count > 9.0e15)
        throw Error(ErrorKind::fit, "cross_venn_abers deals rows into folds and needs whole-number weights", {},
                    shortest_text(count), "whole-number weights, or --map venn_abers");
    std::fill(w.begin(), w.end(), 0.0);
    std::fill(y.begin(), y.end(), 0.0);
    for (int label = 0; label < 2; ++label) {
      const auto n = static_cast<std::uint64_t>(label == 0 ? negatives : positives);
      for (std::uint64_t r = 0; r < n; ++r) {
        const std::size_t f = static_cast<std::size_t>(splitmix(state) % static_cast<std::uint64_t>(folds));
        w[f] += 1.0;
        y[f] += label;
      }
    }
    rows += negatives + positives;
    for (std::size_t f = 0; f < fold.size(); ++f) {
      if (w[f] == 0.0) continue;
      fold[f].score.push_back(all.score[i]);
      fold[f].weight.push_back(w[f]);
      fold[f].label_sum.push_back(y[f]);
    }
  }
  for (const VennAbersPoints& f : fold)
    if (f.score.empty())
      throw Error(ErrorKind::fit, "a fold of cross_venn_abers holds no rows", {},
                  count_text(static_cast<std::uint64_t>(rows)) + " rows for " + std::to_string(folds) + " folds",
                  "more rows than --venn-folds");
  return fold;
}

VennAbersKnots venn_abers_knots(std::span<const double> score, std::span<const double> weight,
                                std::span<const double> label_sum, std::size_t linear_steps) {
  const std::size_t k = score.size();
  VennAbersKnots out;
  out.score.assign(score.begin(), score.end());
  out.p0_at.resize(k);
  out.p1_at.resize(k);
  out.p0_between.resize(k + 1);
  out.p1_between.resize(k + 1);

  // The PAV stack of the points from the left, with a log of what each push
  // pooled, so that the pushes can be undone from the right: the stack of
  // points 0..j-1 for j = k down to 0, in O(k) all told.
  Stack left;
  std::vector<Pool> pooled_log;           // the blocks each push pooled, in pop order
  std::vector<std::size_t> pooled_count;  // per push
  pooled_count.reserve(k);
  for (std::size_t i = 0; i < k; ++i) {
    Pool b{weight[i], label_sum[i]};
    std::size_t n = 0;
    // Pool while the block below is not below the new one: equal means
    // pool too, which changes no value and keeps the stack short.
    while (left.size() > 0 && !above(b, left.from_top(0))) {
      pooled_log.push_back(left.from_top(0));
      b = plus(b, left.from_top(0));
      left.pop();
      ++n;
    }
    left.push(b);
    pooled_count.push_back(n);
  }

  // The PAV stack of the points from the right (points j..k-1), top leftmost.
  Stack right;
  const Pool zero{1.0, 0.0}, one{1.0, 1.0};
  for (std::size_t j = k + 1; j-- > 0;) {
    // Here left holds points 0..j-1 and right points j..k-1.
    out.p0_between[j] = test_block_value(zero, left, right, linear_steps);
    out.p1_between[j] = test_block_value(one, left, right, linear_steps);
    if (j == 0) break;
    const std::size_t i = j - 1;
    // Undo the push of point i.
    left.pop();
    for (std::size_t n = pooled_count[i]; n-- > 0;) {
      left.push(pooled_log.back());
      pooled_log.pop_back();
    }
    // The test row at point i's score.
    out.p0_at[i] = test_block_value(Pool{weight[i] + 1.0, label_sum[i]}, left, right, linear_steps);
    out.p1_at[i] = test_block_value(Pool{weight[i] + 1.0, label_sum[i] + 1.0}, left, right, linear_steps);
    // Point i onto the right stack.
    Pool b{weight[i], label_sum[i]};
    while (right.size() > 0 && !above(right.from_top(0), b)) {
      b = plus(b, right.from_top(0));
      right.pop();
    }
    right.push(b);
  }
  return out;
}

VennAbersSteps venn_abers_steps(const VennAbersKnots& knots, std::span<const double> probability_at,
                                std::span<const double> probability_between) {
  VennAbersSteps out;
  const std::size_t k = knots.score.size();
  const bool with_p = !probability_between.empty();
  // Place q: gap q / 2 when q is even, knot (q - 1) / 2 when odd.
  auto values = [&](std::size_t q) {
    const std::size_t j = q / 2;
    if (q % 2 == 0)
      return std::array<double, 3>{knots.p0_between[j], knots.p1_between[j], with_p ? probability_between[j] : 0.0};
    return std::array<double, 3>{knots.p0_at[j], knots.p1_at[j], with_p ? probability_at[j] : 0.0};
  };
  std::array<double, 3> last = values(0);
  auto push = [&](const std::array<double, 3>& v) {
    out.p0.push_back(v[0]);
    out.p1.push_back(v[1]);
    if (with_p) out.probability.push_back(v[2]);
  };
  push(last);
  for (std::size_t q = 1; q <= 2 * k; ++q) {
    const std::array<double, 3> v = values(q);
    if (v == last) continue;
    // A run starting at knot j starts at its score (closed); one starting
    // in gap j, above knot j - 1 (open).
    out.step_score.push_back(q % 2 == 1 ? knots.score[q / 2] : knots.score[q / 2 - 1]);
    out.step_closed.push_back(q % 2 == 1 ? 1 : 0);
    push(v);
    last = v;
  }
  return out;
}

VennAbersMap::VennAbersMap(Scale scale, VennAbersSteps steps, int folds, double fitted_lo, double fitted_hi,
                           std::size_t knots, double calibration_weight)
    : scale_(scale),
      s_(std::move(steps)),
      folds_(folds),
      lo_(fitted_lo),
      hi_(fitted_hi),
      knots_(knots),
      calibration_weight_(calibration_weight) {
  if (s_.probability.empty()) {
    s_.probability.resize(s_.p0.size());
    for (std::size_t r = 0; r < s_.p0.size(); ++r) s_.probability[r] = merged(s_.p0[r], s_.p1[r]);
  }
  const std::vector<double>& x = s_.step_score;
  if (x.size() < 16 || x.size() > std::numeric_limits<std::uint32_t>::max()) return;
  const double width = x.back() - x.front();
  const std::size_t buckets = std::min<std::size_t>(4 * x.size(), std::size_t{1} << 16);
  if (!(std::isfinite(width) && width > 0.0)) return;
  guide_origin_ = x.front();
  guide_scale_ = static_cast<double>(buckets) / width;
  if (!std::isfinite(guide_scale_)) return;
  guide_.resize(buckets);
  for (std::size_t b = 0; b < buckets; ++b) {
    const double start = guide_origin_ + static_cast<double>(b) / guide_scale_;
    const auto after = std::upper_bound(x.begin(), x.end(), start);
    guide_[b] = static_cast<std::uint32_t>(after == x.begin() ? 0 : after - x.begin() - 1);
  }
}

std::size_t VennAbersMap::step_of(double score) const noexcept {
  const std::vector<double>& x = s_.step_score;
  if (x.empty() || score < x.front()) return 0;
  // c: the number of step scores at or below the score (the last such is
  // x[c - 1]), found as the isotonic map finds its block: the guide's
  // bucket, a few steps to the exact one, else a binary search from there.
  // The answer does not depend on the guide.
  std::size_t j = 0;
  if (!guide_.empty()) {
    const double at = (score - guide_origin_) * guide_scale_;
    const std::size_t b = at < static_cast<double>(guide_.size()) ? static_cast<std::size_t>(at) : guide_.size() - 1;
    j = guide_[b];
    while (j > 0 && x[j] > score) --j;
    for (int steps = 0; j + 1 < x.size() && x[j + 1] <= score; ++j)
      if (++steps == 8) break;
  }
  if (!(j + 1 == x.size() || x[j + 1] > score)) {
    const double* base = x.data() + j;
    for (std::size_t n = x.size() - j; n > 1;) {
      const std::size_t half = n / 2;
      base = base[half] <= score ? base + half : base;
      n -= half;
    }
    j = static_cast<std::size_t>(base - x.data());
  }
  std::size_t c = j + 1;
  // An open step at exactly this score is not passed (a closed one at the
  // same score, just before it, is).
  if (x[c - 1] == score && !s_.step_closed[c - 1]) --c;
  return c;
}

Mapped VennAbersMap::map(double score) const noexcept {
  return {s_.probability[step_of(score)], score < lo_ || score > hi_, false};
}

std::array<double, 2> VennAbersMap::interval(double score) const noexcept {
  const std::size_t r = step_of(score);
  return {s_.p0[r], s_.p1[r]};
}

std::unique_ptr<CalibrationMap> VennAbersMap::fit(const FitData& data, const MapOptions&) {
  const VennAbersPoints p = venn_abers_points(data);
  if (p.score.empty()) throw Error(ErrorKind::fit, "no rows of positive weight to fit");
  const double total = std::accumulate(p.weight.begin(), p.weight.end(), 0.0);
  auto map = std::make_unique<VennAbersMap>(data.scale, venn_abers_steps(venn_abers_knots(p.score, p.weight, p.label_sum)),
                                            0, p.score.front(), p.score.back(), p.score.size(), total);
  fill_diagnostics(*map, map->diagnostics_, data,
                   count_text(p.score.size()) + " knots in " + count_text(map->s_.p0.size()) + " steps");
  return map;
}

std::unique_ptr<CalibrationMap> VennAbersMap::fit_cross(const FitData& data, const MapOptions& options) {
  const int folds = options.venn_folds;
  if (folds < 2) throw Error(ErrorKind::usage, "too few folds for cross_venn_abers", {}, std::to_string(folds), "2 or more");
  const VennAbersPoints all = venn_abers_points(data);
  if (all.score.empty()) throw Error(ErrorKind::fit, "no rows of positive weight to fit");
  const std::vector<VennAbersPoints> fold = venn_abers_folds(all, folds);
  std::vector<VennAbersKnots> knots;
  for (const VennAbersPoints& f : fold) knots.push_back(venn_abers_knots(f.score, f.weight, f.label_sum));

  // Every fold's p0/p1 at each place of the union of the folds' scores
  // (every distinct score): a score of the fold is at its knot, any other
  // place in the fold's gap that holds it. Walked with one index per fold.
  const std::size_t k = all.score.size();
  VennAbersKnots out;
  out.score = all.score;
  out.p0_at.assign(k, 0.0);
  out.p1_at.assign(k, 0.0);
  out.p0_between.assign(k + 1, 0.0);
  out.p1_between.assign(k + 1, 0.0);
  std::vector<double> log_g1_at(k, 0.0), log_g0_at(k, 0.0), log_g1_between(k + 1, 0.0), log_g0_between(k + 1, 0.0);
  const double per = 1.0 / folds;
  for (const VennAbersKnots& f : knots) {
    std::size_t next = 0;  // the fold's first knot not below the current score
    for (std::size_t j = 0; j <= k; ++j) {
      // Gap j of the union lies strictly between all.score[j-1] and
      // all.score[j]: in the fold's gap `next`.
      const double g0 = f.p0_between[next], g1 = f.p1_between[next];
      out.p0_between[j] += per * g0;
      out.p1_between[j] += per * g1;
      log_g0_between[j] += per * std::log1p(-g0);
      log_g1_between[j] += per * std::log(g1);
      if (j == k) break;
      const bool on_knot = next < f.score.size() && f.score[next] == all.score[j];
      const double a0 = on_knot ? f.p0_at[next] : g0, a1 = on_knot ? f.p1_at[next] : g1;
      out.p0_at[j] += per * a0;
      out.p1_at[j] += per * a1;
      log_g0_at[j] += per * std::log1p(-a0);
      log_g1_at[j] += per * std::log(a1);
      if (on_knot) ++next;
    }
  }
  auto merge = [](double log_g0, double log_g1) {
    const double g0 = std::exp(log_g0), g1 = std::exp(log_g1);
    return g1 / (g0 + g1);
  };
  std::vector<double> p_at(k), p_between(k + 1);
  for (std::size_t j = 0; j < k; ++j) p_at[j] = merge(log_g0_at[j], log_g1_at[j]);
  for (std::size_t j = 0; j <= k; ++j) p_between[j] = merge(log_g0_between[j], log_g1_between[j]);
  // Sums of non-decreasing terms in one order never fall, but log and exp
  // from the math library need not be monotone to the last bit: a value
  // that falls by an ulp from place to place is held at the one before.
  auto hold = [&](std::vector<double>& at, std::vector<double>& between) {
    double last = 0.0;
    for (std::size_t j = 0; j <= k; ++j) {
      between[j] = std::max(between[j], last);
      last = between[j];
      if (j == k) break;
      at[j] = std::max(at[j], last);
      last = at[j];
    }
  };
  hold(out.p0_at, out.p0_between);
  hold(out.p1_at, out.p1_between);
  hold(p_at, p_between);
  const double total = std::accumulate(all.weight.begin(), all.weight.end(), 0.0);
  auto map = std::make_unique<VennAbersMap>(data.scale, venn_abers_steps(out, p_at, p_between), folds,
                                            all.score.front(), all.score.back(), k, total);
  fill_diagnostics(*map, map->diagnostics_, data,
                   std::to_string(folds) + " folds, " + count_text(k) + " knots in " + count_text(map->s_.p0.size()) +
                       " steps");
  return map;
}

nlohmann::json VennAbersMap::parameters() const {
  nlohmann::json closed = nlohmann::json::array();
  for (unsigned char c : s_.step_closed) closed.push_back(c != 0);
  nlohmann::json out = {{"calibration_weight", calibration_weight_},
                        {"knots", knots_},
                        {"fitted_score_lo", lo_},
                        {"fitted_score_hi", hi_},
                        {"step_score", s_.step_score},
                        {"step_closed", closed},
                        {"p0", s_.p0},
                        {"p1", s_.p1}};
  if (folds_ > 0) {
    out["folds"] = folds_;
    out["probability"] = s_.probability;
  }
  return out;
}

namespace {

// Reads the members both forms share and checks them: R >= 1 steps, step
// scores non-decreasing (a score twice only as a closed step then an open
// one) inside [fitted_score_lo, fitted_score_hi] (in [0, 1] on the
// probability scale), p0 and p1 in [0, 1], each non-decreasing from step to
// step, p0 <= p1 in each step.
struct Shared {
  VennAbersSteps steps;
  double lo = 0.0, hi = 0.0, weight = 0.0;
  std::size_t knots = 0;
};
Shared read_shared(Scale scale, const nlohmann::json& p, const std::string& where) {
  namespace jf = json_fields;
  Shared r;
  r.weight = jf::require_finite(p, "calibration_weight", where, "parameters.calibration_weight");
  if (!(r.weight > 0.0)) jf::fail(where, "parameters.calibration_weight", "is not positive");
  const std::uint64_t knots = jf::require_count(p, "knots", where, "parameters.knots");
  if (knots == 0) jf::fail(where, "parameters.knots", "is 0", "at least one knot");
  r.knots = static_cast<std::size_t>(knots);
  r.lo = jf::require_finite(p, "fitted_score_lo", where, "parameters.fitted_score_lo");
  r.hi = jf::require_finite(p, "fitted_score_hi", where, "parameters.fitted_score_hi");
  if (!(r.lo <= r.hi)) jf::fail(where, "parameters.fitted_score_hi", "is below fitted_score_lo");
  if (scale == Scale::probability && (r.lo < 0.0 || r.hi > 1.0))
    jf::fail(where, "parameters.fitted_score_lo", "lies outside [0, 1] on the probability scale");
  VennAbersSteps& s = r.steps;
  s.step_score = jf::require_finite_array(p, "step_score", where, "parameters.step_score");
  const nlohmann::json& closed = jf::require(p, "step_closed", where, "parameters.step_closed");
  if (!closed.is_array()) jf::fail(where, "parameters.step_closed", "is not an array", "an array of booleans");
  for (const nlohmann::json& c : closed) {
    if (!c.is_boolean()) jf::fail(where, "parameters.step_closed", "holds a value that is not a boolean");
    s.step_closed.push_back(c.get<bool>() ? 1 : 0);
  }
  s.p0 = jf::require_finite_array(p, "p0", where, "parameters.p0");
  s.p1 = jf::require_finite_array(p, "p1", where, "parameters.p1");
  const std::size_t n = s.p0.size();
  if (n == 0) jf::fail(where, "parameters.p0", "is empty", "at least one step");
  if (s.p1.size() != n || s.step_score.size() + 1 != n || s.step_closed.size() + 1 != n)
    jf::fail(where, "parameters", "has step arrays of the wrong lengths",
             "p0 and p1 of one length, step_score and step_closed one shorter");
  for (std::size_t r2 = 0; r2 + 1 < n; ++r2) {
    const std::string at = "[" + std::to_string(r2) + "]";
    const double x = s.step_score[r2];
    if (!(x >= r.lo && x <= r.hi))
      jf::fail(where, "parameters.step_score" + at, "lies outside [fitted_score_lo, fitted_score_hi]");
    if (r2 > 0) {
      const double before = s.step_score[r2 - 1];
      const bool ordered = x > before || (x == before && s.step_closed[r2 - 1] && !s.step_closed[r2]);
      if (!ordered)
        jf::fail(where, "parameters.step_score" + at, "does not lie above the previous step",
                 "steps in increasing score order");
    }
  }
  for (std::size_t r2 = 0; r2 < n; ++r2) {
    const std::string at = "[" + std::to_string(r2) + "]";
    for (const auto* v : {&s.p0, &s.p1}) {
      const std::string path = std::string("parameters.") + (v == &s.p0 ? "p0" : "p1") + at;
      if (!((*v)[r2] >= 0.0 && (*v)[r2] <= 1.0)) jf::fail(where, path, "lies outside [0, 1]", "a probability");
      if (r2 > 0 && !((*v)[r2] >= (*v)[r2 - 1]))
        jf::fail(where, path, "is below the previous step's value", "non-decreasing values");
    }
    if (!(s.p0[r2] <= s.p1[r2])) jf::fail(where, "parameters.p1" + at, "is below p0 there", "p0 <= p1");
  }
  return r;
}

}  // namespace

std::unique_ptr<CalibrationMap> VennAbersMap::from_parameters(Scale scale, const nlohmann::json& p,
                                                              const std::string& where) {
  if (p.is_object() && (p.contains("folds") || p.contains("probability")))
    json_fields::fail(where, p.contains("folds") ? "parameters.folds" : "parameters.probability",
                      "is present in an inductive venn_abers map", "no folds (the kind cross_venn_abers has them)");
  Shared r = read_shared(scale, p, where);
  return std::make_unique<VennAbersMap>(scale, std::move(r.steps), 0, r.lo, r.hi, r.knots, r.weight);
}

std::unique_ptr<CalibrationMap> VennAbersMap::from_parameters_cross(Scale scale, const nlohmann::json& p,
                                                                    const std::string& where) {
  namespace jf = json_fields;
  const std::int64_t folds = jf::require_integer(p, "folds", where, "parameters.folds");
  if (folds < 2 || folds > 1000) jf::fail(where, "parameters.folds", "lies outside [2, 1000]", "a number of folds");
  Shared r = read_shared(scale, p, where);
  r.steps.probability = jf::require_finite_array(p, "probability", where, "parameters.probability");
  if (r.steps.probability.size() != r.steps.p0.size())
    jf::fail(where, "parameters.probability", "has not one value per step", "as many values as p0");
  for (std::size_t i = 0; i < r.steps.probability.size(); ++i) {
    const double v = r.steps.probability[i];
    const std::string path = "parameters.probability[" + std::to_string(i) + "]";
    if (!(v > 0.0 && v < 1.0)) jf::fail(where, path, "lies outside (0, 1)", "a probability strictly inside");
    if (i > 0 && !(v >= r.steps.probability[i - 1]))
      jf::fail(where, path, "is below the previous step's value", "non-decreasing values");
  }
  return std::make_unique<VennAbersMap>(scale, std::move(r.steps), static_cast<int>(folds), r.lo, r.hi, r.knots,
                                        r.weight);
}

}  // namespace plumb
