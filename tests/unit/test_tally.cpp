// Tallies (plumb/tally.hpp) on seeded random rows (invented data): merging
// is exact for unweighted rows, the tally is the fit's per-score sums, and
// the logit grid keeps the bound docs/tally-format.md derives:
// |p' - p| <= H/8, since the logistic slope p(1 - p) is at most 1/4 and
// rounding moves the log-odds by at most H/2.
#include <catch2/catch.hpp>
#include <cmath>
#include <limits>
#include <random>
#include <vector>

#include "plumb/calibration_map.hpp"
#include "plumb/error.hpp"
#include "plumb/tally.hpp"

using plumb::FitData;
using plumb::Scale;
using plumb::Tally;

namespace {

struct Rows {
  std::vector<double> score, label, weight;
  FitData data() const { return FitData{score, label, weight, Scale::probability}; }
};

Rows random_rows(std::mt19937_64& g, std::size_t n, bool weighted) {
  std::uniform_int_distribution<int> digit(0, 200);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  Rows r;
  for (std::size_t i = 0; i < n; ++i) {
    const double s = digit(g) / 200.0;
    r.score.push_back(s);
    r.label.push_back(u(g) < s ? 1.0 : 0.0);
    if (weighted) r.weight.push_back(0.25 * static_cast<double>(digit(g) % 9));  // 0 to 2, exact quarters
  }
  return r;
}

Tally tally_of(const Rows& r) {
  Tally t;
  t.score_column = "s";
  t.label_column = "y";
  tally_scores(r.data(), t);
  t.rows = r.score.size();
  return t;
}

Rows slice(const Rows& r, std::size_t from, std::size_t to) {
  Rows s;
  s.score.assign(r.score.begin() + static_cast<long>(from), r.score.begin() + static_cast<long>(to));
  s.label.assign(r.label.begin() + static_cast<long>(from), r.label.begin() + static_cast<long>(to));
  if (!r.weight.empty())
    s.weight.assign(r.weight.begin() + static_cast<long>(from), r.weight.begin() + static_cast<long>(to));
  return s;
}

bool same_sums(const Tally& a, const Tally& b) {
  return a.score == b.score && a.count == b.count && a.negative == b.negative && a.positive == b.positive &&
         a.rows == b.rows;
}

}  // namespace

TEST_CASE("tally: merged shards equal the tally of all rows, in any order", "[tally]") {
  std::mt19937_64 g(0x7a11'0001);
  for (int trial = 0; trial < 30; ++trial) {
    const Rows all = random_rows(g, 100 + static_cast<std::size_t>(trial) * 37, trial % 2 == 1);
    const std::size_t n = all.score.size(), a = n / 3, b = 2 * n / 3;
    const Tally t0 = tally_of(slice(all, 0, a)), t1 = tally_of(slice(all, a, b)), t2 = tally_of(slice(all, b, n));
    const Tally whole = tally_of(all);
    const Tally left = plumb::merge_tallies(plumb::merge_tallies(t0, t1), t2);
    const Tally right = plumb::merge_tallies(t2, plumb::merge_tallies(t1, t0));
    INFO("trial " << trial);
    CHECK(same_sums(left, whole));
    CHECK(same_sums(right, whole));
    // The fit's entries: exactly tally_by_score of the rows.
    const plumb::ScoreTally st = plumb::to_score_tally(left), direct = plumb::tally_by_score(all.data());
    CHECK(st.score == direct.score);
    CHECK(st.label == direct.label);
    CHECK(st.weight == direct.weight);
  }
}

TEST_CASE("tally: -0 and +0 are one score, written +0", "[tally]") {
  const std::vector<double> score{-0.0, 0.0, 0.5}, label{0, 1, 1};
  Tally t;
  tally_scores(FitData{score, label, {}, Scale::probability}, t);
  REQUIRE(t.score.size() == 2);
  CHECK_FALSE(std::signbit(t.score[0]));
  CHECK(t.count[0] == 2);
}

TEST_CASE("tally: merging refuses tallies that differ in what they count", "[tally]") {
  Tally a, b;
  a.score_column = b.score_column = "risk";
  CHECK(plumb::merge_conflict(a, b).empty());
  b.grid_step = 0.01;
  CHECK(plumb::merge_conflict(a, b).find("grid") != std::string::npos);
  b.grid_step.reset();
  b.positive_rule = "'late' is positive";
  CHECK(plumb::merge_conflict(a, b).find("label rule") != std::string::npos);
  CHECK_THROWS_AS(plumb::merge_tallies(a, b), plumb::Error);
}

TEST_CASE("tally: the logit grid moves no probability by more than step/8", "[tally][grid]") {
  std::mt19937_64 g(0x7a11'0002);
  std::uniform_real_distribution<double> z(-40.0, 40.0), e(-320.0, -1.0);
  // A few units in the last place for the two conversions.
  constexpr double slack = 8 * std::numeric_limits<double>::epsilon();
  for (double step : {1e-6, 1e-3, 0.05, 0.5, 2.0}) {
    double worst = 0.0;
    for (int i = 0; i < 20000; ++i) {
      double p = i % 3 == 0 ? std::pow(10.0, e(g)) : plumb::sigmoid(z(g));
      if (i % 7 == 0) p = 1.0 - std::pow(10.0, -1.0 - (i % 16));  // up to 1 - 1e-16
      const double q = plumb::round_to_logit_grid(p, Scale::probability, step);
      REQUIRE(q >= 0.0);
      REQUIRE(q <= 1.0);
      worst = std::max(worst, std::fabs(q - p) / (step / 8 + slack));
    }
    INFO("step " << step);
    CHECK(worst <= 1.0);
    // The bound is nearly reached: the worst case is p near 1/2, where the
    // slope is 1/4, and a draw near the middle of a grid cell.
    if (step <= 0.05) CHECK(worst > 0.5);
  }
  CHECK(plumb::round_to_logit_grid(0.0, Scale::probability, 0.1) == 0.0);
  CHECK(plumb::round_to_logit_grid(1.0, Scale::probability, 0.1) == 1.0);
  CHECK(plumb::round_to_logit_grid(0.26, Scale::logit, 0.1) == Approx(0.3).epsilon(1e-15));
  CHECK(plumb::round_to_logit_grid(1e308, Scale::logit, 0.001) == 1e308);
}
