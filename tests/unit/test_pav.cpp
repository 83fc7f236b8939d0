// Property tests of the weighted pool-adjacent-violators fit on seeded
// random inputs with ties and zero weights (invented data; the checks
// against R live in tests/reference/test_isotonic_reference.cpp).
//
// Random numbers come straight from std::mt19937_64, whose output sequence
// the C++ standard fixes; the transforms to uniforms and integers are our
// own, because the std distributions differ between standard libraries.
#include <catch2/catch.hpp>
#include <algorithm>
#include <cmath>
#include <cstdint>
#include <numeric>
#include <random>
#include <vector>

#include "plumb/error.hpp"
#include "plumb/pav.hpp"
#include "support/test_helpers.hpp"

using plumb::PavBlock;

namespace {

using plumb::test::below;
using plumb::test::error_kind;
using plumb::test::uniform01;


struct Rows {
  std::vector<double> x, y, w;
};

// n rows with scores on a grid of `levels` values (ties when n > levels),
// labels 0/1 or continuous in [0, 1], and weights mixing zeros, small
// integers and continuous values. `zero_share` of the rows get weight 0.
Rows random_rows(std::mt19937_64& g, std::size_t n, std::size_t levels, bool binary, double zero_share = 0.1) {
  Rows r;
  for (std::size_t i = 0; i < n; ++i) {
    const double x = static_cast<double>(below(g, levels)) / static_cast<double>(levels);
    // A noisy increasing trend, so that the fit has both pooled and single blocks.
    const double p = 0.15 + 0.7 * x;
    const double y = binary ? (uniform01(g) < p ? 1.0 : 0.0) : std::clamp(p + 0.6 * (uniform01(g) - 0.5), 0.0, 1.0);
    const double u = uniform01(g);
    const double w = u < zero_share ? 0.0 : (u < 0.4 ? static_cast<double>(1 + below(g, 3)) : 5.0 * uniform01(g) + 1e-3);
    r.x.push_back(x);
    r.y.push_back(y);
    r.w.push_back(w);
  }
  return r;
}

// Distinct scores of positive total weight with their weight and weighted
// label sums, in increasing score order (computed without the code under test).
struct Groups {
  std::vector<double> score, w, wy;
};

Groups groups_of(const Rows& r) {
  std::vector<std::size_t> order(r.x.size());
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return r.x[a] < r.x[b]; });
  Groups gr;
  for (std::size_t k = 0; k < order.size();) {
    const double s = r.x[order[k]];
    double w = 0.0, wy = 0.0;
    for (; k < order.size() && r.x[order[k]] == s; ++k) {
      const double wi = r.w.empty() ? 1.0 : r.w[order[k]];
      w += wi;
      wy += wi * r.y[order[k]];
    }
    if (w > 0.0) {
      gr.score.push_back(s);
      gr.w.push_back(w);
      gr.wy.push_back(wy);
    }
  }
  return gr;
}

// The isotonic least-squares solution by the min-max formula
// value_i = max_{j<=i} min_{k>=i} Av(j..k), Av the weighted mean of groups
// j..k (Barlow, Bartholomew, Bremner and Brunk 1972, Theorem 1.4; Robertson,
// Wright and Dykstra 1988, Theorem 1.4.4; theorem numbers from memory).
// O(m^3): for small inputs only.
std::vector<double> min_max_solution(const Groups& gr) {
  const std::size_t m = gr.score.size();
  std::vector<double> out(m);
  for (std::size_t i = 0; i < m; ++i) {
    double best = -INFINITY;
    for (std::size_t j = 0; j <= i; ++j) {
      double lowest = INFINITY;
      for (std::size_t k = i; k < m; ++k) {
        double w = 0.0, wy = 0.0;
        for (std::size_t t = j; t <= k; ++t) {
          w += gr.w[t];
          wy += gr.wy[t];
        }
        lowest = std::min(lowest, wy / w);
      }
      best = std::max(best, lowest);
    }
    out[i] = best;
  }
  return out;
}

// The fitted value of the block holding score s (blocks from pav_fit).
double value_at(const std::vector<PavBlock>& blocks, double s) {
  for (const PavBlock& b : blocks)
    if (b.score_lo <= s && s <= b.score_hi) return b.value;
  FAIL("score " << s << " lies in no block");
  return NAN;
}

// Weighted SSE of per-group values against the rows.
double weighted_sse(const Groups& gr, const Rows& r, const std::vector<double>& group_value) {
  double sse = 0.0;
  for (std::size_t i = 0; i < r.x.size(); ++i) {
    const double wi = r.w.empty() ? 1.0 : r.w[i];
    if (!(wi > 0.0)) continue;
    const auto g = static_cast<std::size_t>(std::lower_bound(gr.score.begin(), gr.score.end(), r.x[i]) -
                                            gr.score.begin());
    const double d = r.y[i] - group_value[g];
    sse += wi * d * d;
  }
  return sse;
}

void check_block_structure(const std::vector<PavBlock>& blocks) {
  for (std::size_t i = 0; i < blocks.size(); ++i) {
    CHECK(blocks[i].score_lo <= blocks[i].score_hi);
    CHECK(blocks[i].weight > 0.0);
    if (i > 0) {
      CHECK(blocks[i].score_lo > blocks[i - 1].score_hi);  // ordered and disjoint
      CHECK(blocks[i].value >= blocks[i - 1].value);       // non-decreasing
    }
  }
}

}  // namespace

TEST_CASE("pav: a fit worked by hand", "[pav]") {
  // Worked by hand from the pool-adjacent-violators rule (Ayer et al. 1955):
  // y = 1 3 2 4 3 5 pools (3, 2) to 2.5 and (4, 3) to 3.5.
  const std::vector<double> x{1, 2, 3, 4, 5, 6}, y{1, 3, 2, 4, 3, 5};
  const auto blocks = plumb::pav_fit(x, y);
  REQUIRE(blocks.size() == 4);
  const double lo[] = {1, 2, 4, 6}, hi[] = {1, 3, 5, 6}, value[] = {1, 2.5, 3.5, 5}, weight[] = {1, 2, 2, 1};
  for (std::size_t i = 0; i < 4; ++i) {
    CHECK(blocks[i].score_lo == lo[i]);
    CHECK(blocks[i].score_hi == hi[i]);
    CHECK(blocks[i].value == value[i]);
    CHECK(blocks[i].weight == weight[i]);
  }
  // Weights move the pooled value to the weighted mean: (3*1 + 2*3)/4 = 2.25.
  const std::vector<double> w{1, 1, 3, 1, 1, 1};
  CHECK(value_at(plumb::pav_fit(x, y, w), 2.0) == Approx(2.25).epsilon(1e-15));
  // A decreasing sequence pools into one block at the mean.
  const std::vector<double> down{5, 4, 3, 2, 1, 0};
  const auto one = plumb::pav_fit(x, down);
  REQUIRE(one.size() == 1);
  CHECK(one[0].value == Approx(2.5).epsilon(1e-15));
  CHECK(one[0].score_lo == 1.0);
  CHECK(one[0].score_hi == 6.0);
}

TEST_CASE("pav: edge cases", "[pav]") {
  const std::vector<double> none;
  CHECK(plumb::pav_fit(none, none).empty());
  CHECK(plumb::pav_values(none, none).empty());
  const std::vector<double> x{0.3, 0.1}, y{1.0, 0.0}, zero{0.0, 0.0};
  CHECK(plumb::pav_fit(x, y, zero).empty());  // no row of positive weight
  const auto single = plumb::pav_fit(std::vector<double>{0.4}, std::vector<double>{1.0});
  REQUIRE(single.size() == 1);
  CHECK(single[0].value == 1.0);
  CHECK(single[0].weight == 1.0);
}

TEST_CASE("pav: structure, weighted total and block means on random weighted inputs with ties", "[pav]") {
  std::mt19937_64 g(0x9a71'0001);
  for (int trial = 0; trial < 200; ++trial) {
    const std::size_t n = 1 + below(g, 400);
    const std::size_t levels = 1 + below(g, 60);
    const Rows r = random_rows(g, n, levels, trial % 2 == 0);
    const auto blocks = plumb::pav_fit(r.x, r.y, r.w);
    INFO("trial " << trial << " n " << n << " levels " << levels);
    check_block_structure(blocks);

    // Barlow et al. (1972): the fit preserves the weighted total, and each
    // block's value is the weighted mean of the rows it pools.
    double wy = 0.0, w = 0.0, fitted = 0.0, block_w = 0.0;
    for (std::size_t i = 0; i < n; ++i) {
      wy += r.w[i] * r.y[i];
      w += r.w[i];
    }
    for (const PavBlock& b : blocks) {
      fitted += b.weight * b.value;
      block_w += b.weight;
      double bw = 0.0, bwy = 0.0;
      for (std::size_t i = 0; i < n; ++i)
        if (b.score_lo <= r.x[i] && r.x[i] <= b.score_hi) {
          bw += r.w[i];
          bwy += r.w[i] * r.y[i];
        }
      CHECK(b.weight == Approx(bw).epsilon(1e-12));
      CHECK(b.value == Approx(bwy / bw).epsilon(1e-12).margin(1e-15));
    }
    CHECK(block_w == Approx(w).epsilon(1e-12));
    CHECK(fitted == Approx(wy).epsilon(1e-9).margin(1e-12));

    // Every row of positive weight lies in a block; the fitted values are
    // non-decreasing in the score and equal on tied scores.
    const auto values = plumb::pav_values(r.x, r.y, r.w);
    REQUIRE(values.size() == n);
    for (std::size_t i = 0; i < n; ++i)
      if (r.w[i] > 0.0) CHECK(value_at(blocks, r.x[i]) == values[i]);
    std::vector<std::size_t> order(n);
    std::iota(order.begin(), order.end(), std::size_t{0});
    std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return r.x[a] < r.x[b]; });
    for (std::size_t k = 1; k < n; ++k) {
      const std::size_t i = order[k - 1], j = order[k];
      if (r.x[i] == r.x[j])
        CHECK(values[i] == values[j]);
      else
        CHECK(values[i] <= values[j]);
    }
  }
}

TEST_CASE("pav: equals the min-max least-squares solution on small inputs", "[pav]") {
  // Independent route: the min-max formula (see min_max_solution above).
  std::mt19937_64 g(0x9a71'0002);
  for (int trial = 0; trial < 2000; ++trial) {
    const std::size_t n = 1 + below(g, 8);
    const Rows r = random_rows(g, n, 1 + below(g, 6), trial % 3 == 0, 0.15);
    const Groups gr = groups_of(r);
    const auto blocks = plumb::pav_fit(r.x, r.y, r.w);
    INFO("trial " << trial);
    if (gr.score.empty()) {
      CHECK(blocks.empty());
      continue;
    }
    const auto expected = min_max_solution(gr);
    for (std::size_t k = 0; k < gr.score.size(); ++k)
      CHECK(value_at(blocks, gr.score[k]) == Approx(expected[k]).epsilon(1e-12).margin(1e-14));
  }
}

TEST_CASE("pav: no monotone vector near the fit has lower weighted SSE", "[pav]") {
  // The isotonic fit minimises the weighted SSE over non-decreasing vectors
  // (Barlow et al. 1972). The SSE is convex, so checking directions towards
  // random monotone vectors, at several step lengths, probes optimality.
  std::mt19937_64 g(0x9a71'0003);
  for (int trial = 0; trial < 300; ++trial) {
    const std::size_t n = 2 + below(g, 40);
    const Rows r = random_rows(g, n, 2 + below(g, 12), trial % 2 == 0, 0.1);
    const Groups gr = groups_of(r);
    if (gr.score.empty()) continue;
    const auto blocks = plumb::pav_fit(r.x, r.y, r.w);
    std::vector<double> fit(gr.score.size());
    for (std::size_t k = 0; k < fit.size(); ++k) fit[k] = value_at(blocks, gr.score[k]);
    const double best = weighted_sse(gr, r, fit);
    INFO("trial " << trial);
    for (int probe = 0; probe < 50; ++probe) {
      std::vector<double> other(fit.size());
      if (probe % 2 == 0) {
        // Towards a random monotone vector: (1 - t) fit + t u stays monotone.
        std::vector<double> u(fit.size());
        for (double& v : u) v = uniform01(g);
        std::sort(u.begin(), u.end());
        const double t = std::pow(10.0, -4.0 * uniform01(g));
        for (std::size_t k = 0; k < fit.size(); ++k) other[k] = (1.0 - t) * fit[k] + t * u[k];
      } else {
        // Small random perturbation, sorted back into a monotone vector.
        for (std::size_t k = 0; k < fit.size(); ++k) other[k] = fit[k] + 0.05 * (uniform01(g) - 0.5);
        std::sort(other.begin(), other.end());
      }
      CHECK(weighted_sse(gr, r, other) >= best - 1e-12 * (1.0 + best));
    }
  }
}

TEST_CASE("pav: zero-weight rows take no part in the fit", "[pav]") {
  std::mt19937_64 g(0x9a71'0004);
  for (int trial = 0; trial < 100; ++trial) {
    const Rows base = random_rows(g, 1 + below(g, 200), 1 + below(g, 30), trial % 2 == 0, 0.0);
    // Add zero-weight rows: some on existing scores, some on new scores
    // (including below and above every fitted score), with arbitrary labels.
    Rows more = base;
    const std::size_t extra = 1 + below(g, 50);
    for (std::size_t k = 0; k < extra; ++k) {
      const double s = below(g, 2) == 0 ? base.x[below(g, base.x.size())] : 1.5 * uniform01(g) - 0.25;
      more.x.push_back(s);
      more.y.push_back(uniform01(g) < 0.5 ? 0.0 : 1.0);
      more.w.push_back(0.0);
    }
    // Shuffle so that the zero rows are mixed in.
    for (std::size_t i = more.x.size(); i > 1; --i) {
      const std::size_t j = below(g, i);
      std::swap(more.x[i - 1], more.x[j]);
      std::swap(more.y[i - 1], more.y[j]);
      std::swap(more.w[i - 1], more.w[j]);
    }
    const auto a = plumb::pav_fit(base.x, base.y, base.w);
    const auto b = plumb::pav_fit(more.x, more.y, more.w);
    INFO("trial " << trial);
    REQUIRE(a.size() == b.size());
    for (std::size_t i = 0; i < a.size(); ++i) {
      CHECK(a[i].score_lo == b[i].score_lo);
      CHECK(a[i].score_hi == b[i].score_hi);
      CHECK(a[i].value == Approx(b[i].value).epsilon(1e-12));
      CHECK(a[i].weight == Approx(b[i].weight).epsilon(1e-12));
    }
    // A zero-weight row whose score has no block gets the value of the
    // nearest block to its left, or of the first block (pav.hpp contract).
    const auto values = plumb::pav_values(more.x, more.y, more.w);
    for (std::size_t i = 0; i < more.x.size(); ++i) {
      const PavBlock* left = nullptr;
      for (const PavBlock& blk : b)
        if (blk.score_lo <= more.x[i]) left = &blk;
      CHECK(values[i] == (left ? left->value : b.front().value));
    }
  }
}

TEST_CASE("pav: pav_fit_sorted on sorted rows equals pav_fit", "[pav]") {
  std::mt19937_64 g(0x9a71'0005);
  for (int trial = 0; trial < 100; ++trial) {
    const Rows r = random_rows(g, 1 + below(g, 500), 1 + below(g, 80), trial % 2 == 0);
    std::vector<std::size_t> order(r.x.size());
    std::iota(order.begin(), order.end(), std::size_t{0});
    std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return r.x[a] < r.x[b]; });
    Rows s;
    for (std::size_t i : order) {
      s.x.push_back(r.x[i]);
      s.y.push_back(r.y[i]);
      s.w.push_back(r.w[i]);
    }
    const auto a = plumb::pav_fit(r.x, r.y, r.w);
    const auto b = plumb::pav_fit_sorted(s.x, s.y, s.w);
    INFO("trial " << trial);
    REQUIRE(a.size() == b.size());
    for (std::size_t i = 0; i < a.size(); ++i) {
      CHECK(a[i].score_lo == b[i].score_lo);
      CHECK(a[i].score_hi == b[i].score_hi);
      CHECK(a[i].value == Approx(b[i].value).epsilon(1e-12));
      CHECK(a[i].weight == Approx(b[i].weight).epsilon(1e-12));
    }
  }
  // Without weights every row counts once.
  const std::vector<double> x{0.1, 0.2, 0.2, 0.3}, y{1, 0, 0, 1}, ones{1, 1, 1, 1};
  const auto u = plumb::pav_fit_sorted(x, y);
  const auto v = plumb::pav_fit_sorted(x, y, ones);
  REQUIRE(u.size() == v.size());
  for (std::size_t i = 0; i < u.size(); ++i) CHECK(u[i].value == v[i].value);
}

TEST_CASE("pav: pav_values follows the input's row order", "[pav]") {
  std::mt19937_64 g(0x9a71'0006);
  for (int trial = 0; trial < 50; ++trial) {
    const Rows r = random_rows(g, 2 + below(g, 300), 1 + below(g, 40), trial % 2 == 0, 0.0);
    const std::size_t n = r.x.size();
    std::vector<std::size_t> perm(n);
    std::iota(perm.begin(), perm.end(), std::size_t{0});
    for (std::size_t i = n; i > 1; --i) std::swap(perm[i - 1], perm[below(g, i)]);
    Rows p;
    for (std::size_t i : perm) {
      p.x.push_back(r.x[i]);
      p.y.push_back(r.y[i]);
      p.w.push_back(r.w[i]);
    }
    const auto a = plumb::pav_values(r.x, r.y, r.w);
    const auto b = plumb::pav_values(p.x, p.y, p.w);
    const auto blocks = plumb::pav_fit(r.x, r.y, r.w);
    INFO("trial " << trial);
    for (std::size_t i = 0; i < n; ++i) {
      CHECK(b[i] == Approx(a[perm[i]]).epsilon(1e-12));
      CHECK(a[i] == value_at(blocks, r.x[i]));
    }
  }
}

TEST_CASE("pav: rescaling every weight by a constant leaves the fit unchanged", "[pav]") {
  // The weighted least-squares objective is only multiplied by the constant,
  // so its minimiser stays the same (follows from the definition; Barlow et
  // al. 1972). Extreme constants probe overflow and underflow in pooling.
  std::mt19937_64 g(0x9a71'0008);
  for (int trial = 0; trial < 50; ++trial) {
    const Rows r = random_rows(g, 2 + below(g, 300), 1 + below(g, 40), trial % 2 == 0);
    const auto base = plumb::pav_fit(r.x, r.y, r.w);
    for (double c : {1e-160, 1e-9, 3.0, 1e9, 1e160}) {
      Rows s = r;
      for (double& w : s.w) w *= c;
      const auto scaled = plumb::pav_fit(s.x, s.y, s.w);
      INFO("trial " << trial << " factor " << c);
      REQUIRE(scaled.size() == base.size());
      for (std::size_t i = 0; i < base.size(); ++i) {
        CHECK(scaled[i].score_lo == base[i].score_lo);
        CHECK(scaled[i].score_hi == base[i].score_hi);
        CHECK(scaled[i].value == Approx(base[i].value).epsilon(1e-12).margin(1e-15));
        CHECK(scaled[i].weight == Approx(base[i].weight * c).epsilon(1e-12));
      }
    }
  }
}

TEST_CASE("pav: preserves the weighted total on a large input", "[pav]") {
  std::mt19937_64 g(0x9a71'0007);
  const Rows r = random_rows(g, 200000, 5000, true);
  double wy = 0.0;
  for (std::size_t i = 0; i < r.x.size(); ++i) wy += r.w[i] * r.y[i];
  double fitted = 0.0;
  const auto blocks = plumb::pav_fit(r.x, r.y, r.w);
  check_block_structure(blocks);
  for (const PavBlock& b : blocks) fitted += b.weight * b.value;
  CHECK(fitted == Approx(wy).epsilon(1e-9));
}

TEST_CASE("pav: mismatched lengths throw", "[pav]") {
  const std::vector<double> x{0.1, 0.2, 0.3}, y2{0, 1}, y3{0, 1, 1}, w2{1, 1};
  using plumb::ErrorKind;
  CHECK(error_kind([&] { plumb::pav_fit(x, y2); }) == ErrorKind::internal);
  CHECK(error_kind([&] { plumb::pav_fit(x, y3, w2); }) == ErrorKind::internal);
  CHECK(error_kind([&] { plumb::pav_fit_sorted(x, y2); }) == ErrorKind::internal);
  CHECK(error_kind([&] { plumb::pav_fit_sorted(x, y3, w2); }) == ErrorKind::internal);
  CHECK(error_kind([&] { plumb::pav_values(x, y2); }) == ErrorKind::internal);
  CHECK(error_kind([&] { plumb::pav_values(x, y3, w2); }) == ErrorKind::internal);
}
