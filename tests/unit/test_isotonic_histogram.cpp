// Property tests of the isotonic and histogram maps and of the map registry
// (fit_map, load_map) on seeded random inputs (invented data; the checks
// against R live in tests/reference/test_isotonic_reference.cpp).
//
// Random numbers come straight from std::mt19937_64 with our own transforms,
// because the std distributions differ between standard libraries.
#include <catch2/catch.hpp>
#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>
#include <random>
#include <string>
#include <vector>

#include "plumb/calibration_map.hpp"
#include "plumb/error.hpp"
#include "plumb/maps/histogram_map.hpp"
#include "plumb/maps/isotonic_map.hpp"
#include "plumb/pav.hpp"
#include "plumb/scale.hpp"
#include "support/test_helpers.hpp"

using plumb::ErrorKind;
using plumb::FitData;
using plumb::MapOptions;
using plumb::Scale;

namespace {

using plumb::test::below;
using plumb::test::error_kind;
using plumb::test::uniform01;


struct Rows {
  std::vector<double> score, label, weight;
  FitData data(Scale scale = Scale::probability) const { return FitData{score, label, weight, scale}; }
};

// 0/1 labels with P(1) rising in the score. levels == 0 draws continuous
// scores in [0, 1); otherwise scores lie on a grid of `levels` values.
// Weights: none when `weighted` is false, else in [0.5, 1.5) with
// `zero_share` of them 0.
Rows random_rows(std::mt19937_64& g, std::size_t n, std::size_t levels, bool weighted, double zero_share = 0.0) {
  Rows r;
  for (std::size_t i = 0; i < n; ++i) {
    const double s = levels == 0 ? uniform01(g)
                                 : static_cast<double>(below(g, levels)) / static_cast<double>(levels);
    r.score.push_back(s);
    r.label.push_back(uniform01(g) < 0.1 + 0.8 * s * s ? 1.0 : 0.0);
    if (weighted) r.weight.push_back(uniform01(g) < zero_share ? 0.0 : 0.5 + uniform01(g));
  }
  return r;
}

double weight_at(const Rows& r, std::size_t i) { return r.weight.empty() ? 1.0 : r.weight[i]; }

// Sorted distinct scores of positive total weight.
std::vector<double> fitted_scores(const Rows& r) {
  std::vector<double> s;
  for (std::size_t i = 0; i < r.score.size(); ++i)
    if (weight_at(r, i) > 0.0) s.push_back(r.score[i]);
  std::sort(s.begin(), s.end());
  s.erase(std::unique(s.begin(), s.end()), s.end());
  return s;
}

// Scores to probe a map with: every fitted score, points between them, and
// points outside the fitted range.
std::vector<double> probe_grid(const std::vector<double>& fitted) {
  std::vector<double> grid = fitted;
  for (std::size_t i = 1; i < fitted.size(); ++i)
    for (double f : {0.1, 0.5, 0.77}) grid.push_back(fitted[i - 1] + f * (fitted[i] - fitted[i - 1]));
  grid.push_back(fitted.front() - 0.5);
  grid.push_back(fitted.back() + 0.5);
  return grid;
}

// parameters() -> text -> parse -> load_map must give the same map, bit for bit.
void check_round_trip(const plumb::CalibrationMap& m, const std::vector<double>& grid) {
  const nlohmann::json parsed = nlohmann::json::parse(m.parameters().dump());
  const auto back = plumb::load_map(m.kind(), m.scale(), parsed, "round-trip");
  CHECK(back->kind() == m.kind());
  CHECK(back->scale() == m.scale());
  CHECK(back->monotone() == m.monotone());
  CHECK(back->parameters() == m.parameters());
  for (double s : grid) {
    const plumb::Mapped a = m.map(s), b = back->map(s);
    CHECK(a.probability == b.probability);  // bit-identical
    CHECK(a.outside_fit_range == b.outside_fit_range);
  }
}

std::optional<ErrorKind> load_kind(std::string_view kind, const nlohmann::json& p, Scale scale = Scale::probability) {
  return error_kind([&] { plumb::load_map(kind, scale, p, "test.json"); });
}

const plumb::IsotonicMap& as_isotonic(const plumb::CalibrationMap& m) {
  return dynamic_cast<const plumb::IsotonicMap&>(m);
}
const plumb::HistogramMap& as_histogram(const plumb::CalibrationMap& m) {
  return dynamic_cast<const plumb::HistogramMap&>(m);
}

}  // namespace

// ---------------------------------------------------------------- isotonic

TEST_CASE("isotonic: the map gives exactly the PAV value at every fitted score", "[isotonic]") {
  std::mt19937_64 g(0x150'0001);
  for (int trial = 0; trial < 40; ++trial) {
    const Rows r = random_rows(g, 50 + below(g, 2000), trial % 2 ? 0 : 1 + below(g, 100), true, 0.1);
    const auto m = plumb::fit_map("isotonic", r.data());
    // fit_map fits on the per-score sums (so that a fit on a tally is the
    // same): exactly PAV of tally_by_score, and PAV of the rows up to the
    // order of the weight additions.
    const plumb::ScoreTally sums = plumb::tally_by_score(r.data());
    const auto blocks = plumb::pav_fit(sums.score, sums.label, sums.weight);
    const auto values = plumb::pav_values(r.score, r.label, r.weight);
    INFO("trial " << trial);
    REQUIRE(as_isotonic(*m).blocks().size() == blocks.size());
    std::size_t b = 0;
    for (std::size_t i = 0; i < r.score.size(); ++i) {
      if (!(r.weight[i] > 0.0)) continue;
      const plumb::Mapped p = m->map(r.score[i]);
      b = static_cast<std::size_t>(std::upper_bound(blocks.begin(), blocks.end(), r.score[i],
                                                    [](double s, const plumb::PavBlock& k) { return s < k.score_lo; }) -
                                   blocks.begin()) - 1;
      CHECK(p.probability == blocks[b].value);
      CHECK(p.probability == Approx(values[i]).epsilon(1e-12).margin(1e-15));
      CHECK_FALSE(p.outside_fit_range);
      CHECK_FALSE(p.clipped);
    }
    CHECK(m->monotone());
    CHECK(m->kind() == "isotonic");
  }
}

TEST_CASE("isotonic: linear interpolation between blocks and step mode", "[isotonic]") {
  std::mt19937_64 g(0x150'0002);
  const Rows r = random_rows(g, 3000, 0, true, 0.05);
  MapOptions step_opt;
  step_opt.isotonic_interpolate = false;
  const auto lin = plumb::fit_map("isotonic", r.data());
  const auto step = plumb::fit_map("isotonic", r.data(), step_opt);
  const auto& blocks = as_isotonic(*lin).blocks();
  REQUIRE(blocks.size() > 5);
  CHECK(lin->parameters().at("between_blocks") == "linear");
  CHECK(step->parameters().at("between_blocks") == "step");
  for (std::size_t i = 1; i < blocks.size(); ++i) {
    const plumb::PavBlock& a = blocks[i - 1];
    const plumb::PavBlock& b = blocks[i];
    INFO("gap " << i);
    for (double f : {0.0, 0.25, 0.5, 0.9, 1.0}) {
      const double s = f == 0.0 ? a.score_hi : (f == 1.0 ? b.score_lo : a.score_hi + f * (b.score_lo - a.score_hi));
      // Straight line from (hi of the left block, its value) to (lo of the
      // right block, its value): the hand formula of linear interpolation.
      const double expected = a.value + (s - a.score_hi) / (b.score_lo - a.score_hi) * (b.value - a.value);
      CHECK(lin->map(s).probability == Approx(expected).epsilon(1e-12).margin(1e-15));
      CHECK_FALSE(lin->map(s).outside_fit_range);
      // Step mode holds the left block's value up to the next block.
      CHECK(step->map(s).probability == (f == 1.0 ? b.value : a.value));
      CHECK_FALSE(step->map(s).outside_fit_range);
    }
  }
}

TEST_CASE("isotonic: clamps outside the fitted range and says so", "[isotonic]") {
  std::mt19937_64 g(0x150'0003);
  const Rows r = random_rows(g, 500, 40, true);
  for (bool interpolate : {true, false}) {
    MapOptions opt;
    opt.isotonic_interpolate = interpolate;
    const auto m = plumb::fit_map("isotonic", r.data(), opt);
    const auto& blocks = as_isotonic(*m).blocks();
    const double lo = blocks.front().score_lo, hi = blocks.back().score_hi;
    CHECK(lo == *std::min_element(r.score.begin(), r.score.end()));
    CHECK(hi == *std::max_element(r.score.begin(), r.score.end()));
    for (double s : {lo - 1e-9, lo - 0.3, -1e300}) {
      const plumb::Mapped p = m->map(s);
      CHECK(p.probability == blocks.front().value);
      CHECK(p.outside_fit_range);
    }
    for (double s : {std::nextafter(hi, 2.0), hi + 0.3, 1e300}) {
      const plumb::Mapped p = m->map(s);
      CHECK(p.probability == blocks.back().value);
      CHECK(p.outside_fit_range);
    }
    CHECK_FALSE(m->map(lo).outside_fit_range);
    CHECK_FALSE(m->map(hi).outside_fit_range);
  }
}

TEST_CASE("isotonic: non-decreasing on a fine grid and on every scale", "[isotonic]") {
  std::mt19937_64 g(0x150'0004);
  for (Scale scale : {Scale::probability, Scale::logit, Scale::margin}) {
    Rows r = random_rows(g, 2000, 0, false);
    if (scale != Scale::probability)
      for (double& s : r.score) s = 8.0 * s - 4.0;
    const auto m = plumb::fit_map("isotonic", r.data(scale));
    CHECK(m->scale() == scale);
    const double lo = *std::min_element(r.score.begin(), r.score.end());
    const double hi = *std::max_element(r.score.begin(), r.score.end());
    double prev = -1.0;
    bool ok = true;
    for (int k = -100; k <= 10100; ++k) {
      const double p = m->map(lo + (hi - lo) * k / 10000.0).probability;
      ok = ok && p >= prev && p >= 0.0 && p <= 1.0;
      prev = p;
    }
    CHECK(ok);
  }
}

TEST_CASE("isotonic: the block found for a score is the last one starting at or before it, however the blocks lie",
          "[isotonic]") {
  // The lookup guides its search by buckets of the score range; the rule
  // it must keep (docs/methods.md) is the plain one: the value of the block
  // holding the score, or the interpolation from the block starting last at
  // or before it to the next. Checked against std::upper_bound on maps whose
  // blocks are spread evenly, crowded near one end, and spread over the
  // whole double range (margin scale), at every block end, its neighbouring
  // doubles and random scores.
  std::mt19937_64 gen(17);
  auto u01 = [&] { return static_cast<double>(gen() >> 11) * 0x1p-53; };
  for (int shape = 0; shape < 3; ++shape) {
    for (std::size_t count : {16u, 40u, 300u, 5000u}) {
      std::vector<double> ends;
      for (std::size_t k = 0; k < 2 * count; ++k) {
        const double v = u01();
        ends.push_back(shape == 0 ? v : shape == 1 ? std::pow(v, 12.0) : (v - 0.5) * 1e300);
      }
      std::sort(ends.begin(), ends.end());
      ends.erase(std::unique(ends.begin(), ends.end()), ends.end());
      if (ends.size() % 2) ends.pop_back();
      std::vector<plumb::PavBlock> blocks;
      for (std::size_t k = 0; k + 1 < ends.size(); k += 2) {
        plumb::PavBlock b;
        b.score_lo = ends[k];
        b.score_hi = ends[k + 1];
        b.value = static_cast<double>(k) / static_cast<double>(ends.size());
        b.weight = 1.0;
        blocks.push_back(b);
      }
      const plumb::Scale scale = shape == 2 ? plumb::Scale::margin : plumb::Scale::probability;
      const plumb::IsotonicMap map(scale, blocks, /*interpolate=*/true);
      std::vector<double> lo;
      for (const auto& b : blocks) lo.push_back(b.score_lo);
      std::vector<double> scores;
      for (double e : ends) {
        scores.push_back(e);
        scores.push_back(std::nextafter(e, -std::numeric_limits<double>::infinity()));
        scores.push_back(std::nextafter(e, std::numeric_limits<double>::infinity()));
      }
      for (int k = 0; k < 20000; ++k) scores.push_back(ends.front() + u01() * (ends.back() - ends.front()));
      std::size_t mismatches = 0;
      for (double s : scores) {
        if (s < blocks.front().score_lo || s > blocks.back().score_hi) continue;
        const std::size_t i = static_cast<std::size_t>(std::upper_bound(lo.begin(), lo.end(), s) - lo.begin()) - 1;
        const plumb::PavBlock& left = blocks[i];
        double want = left.value;
        if (s > left.score_hi) {
          const plumb::PavBlock& right = blocks[i + 1];
          const double gap = right.score_lo - left.score_hi;
          const double t = std::isfinite(gap) ? (s - left.score_hi) / gap
                                              : (0.5 * s - 0.5 * left.score_hi) /
                                                    (0.5 * right.score_lo - 0.5 * left.score_hi);
          want = std::clamp(left.value + t * (right.value - left.value), left.value, right.value);
        }
        mismatches += map(s) == want ? 0 : 1;
      }
      INFO("shape " << shape << ", " << blocks.size() << " blocks");
      CHECK(mismatches == 0);
    }
  }
}

TEST_CASE("isotonic: the fit's log loss is the weighted mean log loss of the map", "[isotonic]") {
  // Definition of log loss (Good 1952, from memory), probabilities clipped
  // to [1e-12, 1 - 1e-12] as documented in scale.hpp.
  std::mt19937_64 g(0x150'0005);
  const Rows r = random_rows(g, 1500, 60, true, 0.1);
  const auto m = plumb::fit_map("isotonic", r.data());
  double loss = 0.0, total = 0.0;
  for (std::size_t i = 0; i < r.score.size(); ++i) {
    const double p = std::clamp(m->map(r.score[i]).probability, 1e-12, 1.0 - 1e-12);
    loss -= r.weight[i] * (r.label[i] > 0.5 ? std::log(p) : std::log(1.0 - p));
    total += r.weight[i];
  }
  CHECK(m->diagnostics().log_loss == Approx(loss / total).epsilon(1e-12));
}

TEST_CASE("isotonic: parameters -> load_map round trip is bit-identical", "[isotonic]") {
  std::mt19937_64 g(0x150'0006);
  for (int trial = 0; trial < 20; ++trial) {
    const Scale scale = trial % 3 == 0 ? Scale::margin : Scale::probability;
    Rows r = random_rows(g, 20 + below(g, 3000), trial % 2 ? 0 : 1 + below(g, 50), trial % 4 < 2, 0.1);
    if (scale == Scale::margin)
      for (double& s : r.score) s = std::log(s + 1e-3) * 3.7;
    MapOptions opt;
    opt.isotonic_interpolate = trial % 5 != 0;
    const auto m = plumb::fit_map("isotonic", r.data(scale), opt);
    INFO("trial " << trial);
    check_round_trip(*m, probe_grid(fitted_scores(r)));
  }
}

TEST_CASE("isotonic: load_map rejects damaged parameters as artifact errors", "[isotonic]") {
  const nlohmann::json good = {{"between_blocks", "linear"},
                               {"block_score_lo", {0.1, 0.3, 0.6}},
                               {"block_score_hi", {0.2, 0.5, 0.6}},
                               {"block_value", {0.1, 0.4, 0.8}},
                               {"block_weight", {3.0, 2.0, 1.5}}};
  REQUIRE_NOTHROW(plumb::load_map("isotonic", Scale::probability, good, "test.json"));
  // The hand-made map behaves as written.
  const auto m = plumb::load_map("isotonic", Scale::probability, good, "test.json");
  CHECK(m->map(0.15).probability == 0.1);
  CHECK(m->map(0.25).probability == Approx(0.25).epsilon(1e-14));  // halfway from 0.1 to 0.4
  CHECK(m->map(0.55).probability == Approx(0.6).epsilon(1e-14));   // halfway from 0.4 to 0.8

  auto with = [&](const char* key, std::size_t i, double v) {
    nlohmann::json p = good;
    p[key][i] = v;
    return p;
  };
  const double nan = std::numeric_limits<double>::quiet_NaN();
  const double inf = std::numeric_limits<double>::infinity();
  // Non-monotone knots.
  CHECK(load_kind("isotonic", with("block_value", 1, 0.05)) == ErrorKind::artifact);
  CHECK(load_kind("isotonic", with("block_value", 2, 0.39)) == ErrorKind::artifact);
  // Non-finite values, in memory and after a text round trip (NaN prints as null).
  CHECK(load_kind("isotonic", with("block_value", 1, nan)) == ErrorKind::artifact);
  CHECK(load_kind("isotonic", with("block_score_hi", 2, inf)) == ErrorKind::artifact);
  CHECK(load_kind("isotonic", with("block_weight", 0, -inf)) == ErrorKind::artifact);
  CHECK(load_kind("isotonic", nlohmann::json::parse(with("block_score_lo", 0, nan).dump())) == ErrorKind::artifact);
  // Values outside [0, 1].
  CHECK(load_kind("isotonic", with("block_value", 0, -0.01)) == ErrorKind::artifact);
  CHECK(load_kind("isotonic", with("block_value", 2, 1.01)) == ErrorKind::artifact);
  // Overlapping or touching blocks, and a block whose ends are reversed.
  CHECK(load_kind("isotonic", with("block_score_lo", 1, 0.2)) == ErrorKind::artifact);
  CHECK(load_kind("isotonic", with("block_score_lo", 1, 0.15)) == ErrorKind::artifact);
  CHECK(load_kind("isotonic", with("block_score_lo", 2, 0.7)) == ErrorKind::artifact);
  // Non-positive block weight.
  CHECK(load_kind("isotonic", with("block_weight", 1, 0.0)) == ErrorKind::artifact);
  // Probability-scale scores outside [0, 1].
  CHECK(load_kind("isotonic", with("block_score_lo", 0, -0.1)) == ErrorKind::artifact);
  CHECK_NOTHROW(plumb::load_map("isotonic", Scale::margin, with("block_score_lo", 0, -0.1), "test.json"));
  // Mismatched array lengths.
  for (const char* key : {"block_score_lo", "block_score_hi", "block_value", "block_weight"}) {
    nlohmann::json p = good;
    p[key].erase(p[key].size() - 1);
    INFO(key);
    CHECK(load_kind("isotonic", p) == ErrorKind::artifact);
    p = good;
    p.erase(key);
    CHECK(load_kind("isotonic", p) == ErrorKind::artifact);  // missing
    p = good;
    p[key] = "0.1";
    CHECK(load_kind("isotonic", p) == ErrorKind::artifact);  // not an array
  }
  // No blocks at all; an unknown mode between blocks; not an object.
  nlohmann::json empty = good;
  for (const char* key : {"block_score_lo", "block_score_hi", "block_value", "block_weight"})
    empty[key] = nlohmann::json::array();
  CHECK(load_kind("isotonic", empty) == ErrorKind::artifact);
  nlohmann::json mode = good;
  mode["between_blocks"] = "cubic";
  CHECK(load_kind("isotonic", mode) == ErrorKind::artifact);
  CHECK(load_kind("isotonic", nlohmann::json::array()) == ErrorKind::artifact);
}

// ---------------------------------------------------------------- histogram

TEST_CASE("histogram: equal-mass bins on distinct continuous scores", "[histogram]") {
  std::mt19937_64 g(0x4157'0001);
  // Unweighted, 1000 distinct scores, 10 bins: the midpoint of row k's
  // cumulative weight is k + 1/2, so bin floor((k + 1/2) / 100) holds
  // exactly 100 rows (worked by hand from the rule in histogram_map.hpp).
  {
    const Rows r = random_rows(g, 1000, 0, false);
    REQUIRE(fitted_scores(r).size() == 1000);
    const auto m = plumb::fit_map("histogram", r.data());
    const auto& bins = as_histogram(*m).bins();
    REQUIRE(bins.size() == 10);
    for (const auto& b : bins) CHECK(b.weight == 100.0);
  }
  // Weighted: each bin's weight is within one row's weight of total / bins,
  // because a row joins the bin holding the midpoint of its weight.
  for (int bins_asked : {3, 10, 25}) {
    const Rows r = random_rows(g, 20000, 0, true);
    REQUIRE(fitted_scores(r).size() == 20000);
    MapOptions opt;
    opt.histogram_bins = bins_asked;
    const auto m = plumb::fit_map("histogram", r.data(), opt);
    const auto& bins = as_histogram(*m).bins();
    const double total = std::accumulate(r.weight.begin(), r.weight.end(), 0.0);
    const double w_max = *std::max_element(r.weight.begin(), r.weight.end());
    INFO("bins " << bins_asked);
    REQUIRE(bins.size() == static_cast<std::size_t>(bins_asked));
    double sum = 0.0;
    for (const auto& b : bins) {
      CHECK(std::abs(b.weight - total / bins_asked) <= w_max);
      sum += b.weight;
    }
    CHECK(sum == Approx(total).epsilon(1e-12));
  }
}

TEST_CASE("histogram: bin value is the weighted frequency of its rows; ties never straddle bins",
          "[histogram]") {
  // Weighted frequency of positives per bin, sum(w y) / sum(w) over the rows
  // whose score lies in the bin (Zadrozny and Elkan 2001), computed here.
  std::mt19937_64 g(0x4157'0002);
  for (int trial = 0; trial < 60; ++trial) {
    const std::size_t levels = trial % 3 == 0 ? 0 : 1 + below(g, 40);
    Rows rows = random_rows(g, 20 + below(g, 3000), levels, trial % 2 == 0, 0.1);
    // A row of each class at 0.5, so that both classes are always present.
    rows.score.insert(rows.score.end(), {0.5, 0.5});
    rows.label.insert(rows.label.end(), {0.0, 1.0});
    if (!rows.weight.empty()) rows.weight.insert(rows.weight.end(), {1.0, 1.0});
    const Rows* use = &rows;
    MapOptions opt;
    opt.histogram_bins = 1 + static_cast<int>(below(g, 30));
    INFO("trial " << trial << " levels " << levels << " bins " << opt.histogram_bins);
    const auto m = plumb::fit_map("histogram", use->data(), opt);
    const auto& bins = as_histogram(*m).bins();
    const auto distinct = fitted_scores(*use);
    CHECK(bins.size() <= static_cast<std::size_t>(opt.histogram_bins));
    CHECK(bins.size() <= distinct.size());
    // Ranges ordered and disjoint: rows of one score cannot be in two bins.
    for (std::size_t i = 0; i < bins.size(); ++i) {
      CHECK(bins[i].score_lo <= bins[i].score_hi);
      if (i > 0) CHECK(bins[i].score_lo > bins[i - 1].score_hi);
    }
    // Every fitted score lies in exactly one bin; bin ends are fitted scores.
    std::vector<double> num(bins.size(), 0.0), den(bins.size(), 0.0);
    for (std::size_t i = 0; i < use->score.size(); ++i) {
      const double w = weight_at(*use, i);
      if (!(w > 0.0)) continue;
      std::size_t hits = 0, at = 0;
      for (std::size_t b = 0; b < bins.size(); ++b)
        if (bins[b].score_lo <= use->score[i] && use->score[i] <= bins[b].score_hi) {
          ++hits;
          at = b;
        }
      REQUIRE(hits == 1);
      num[at] += w * use->label[i];
      den[at] += w;
    }
    for (std::size_t b = 0; b < bins.size(); ++b) {
      CHECK(std::binary_search(distinct.begin(), distinct.end(), bins[b].score_lo));
      CHECK(std::binary_search(distinct.begin(), distinct.end(), bins[b].score_hi));
      CHECK(bins[b].weight == Approx(den[b]).epsilon(1e-12));
      CHECK(bins[b].value == Approx(num[b] / den[b]).epsilon(1e-12).margin(1e-15));
      CHECK(m->map(bins[b].score_lo).probability == bins[b].value);
      CHECK(m->map(bins[b].score_hi).probability == bins[b].value);
    }
  }
}

TEST_CASE("histogram: each distinct score joins the bin holding the midpoint of its weight", "[histogram]") {
  // Worked by hand from the rule in histogram_map.hpp: bin =
  // floor(bins * (weight before the score + half its weight) / total).
  const std::vector<double> score{0.1, 0.2, 0.3, 0.4}, label{0, 1, 0, 1};
  MapOptions opt;
  // Weights 3, 2, 2, 3 (total 10), two bins: midpoints 1.5, 4, 6, 8.5 give
  // bins 0, 0, 1, 1 (a rule using the end of each score's weight would give
  // 0, 1, 1, 1).
  opt.histogram_bins = 2;
  const std::vector<double> w1{3, 2, 2, 3};
  const auto a = plumb::fit_map("histogram", FitData{score, label, w1, Scale::probability}, opt);
  const auto& ab = as_histogram(*a).bins();
  REQUIRE(ab.size() == 2);
  CHECK(ab[0].score_lo == 0.1);
  CHECK(ab[0].score_hi == 0.2);
  CHECK(ab[0].weight == 5.0);
  CHECK(ab[0].value == Approx(0.4).epsilon(1e-15));  // 2 / 5
  CHECK(ab[1].score_lo == 0.3);
  CHECK(ab[1].value == Approx(0.6).epsilon(1e-15));  // 3 / 5
  // Weights 4, 1, 1, 4, four bins: midpoints 2, 4.5, 5.5, 8 give bins
  // 0, 1, 2, 3 (a rule at three quarters of each weight would put the first
  // two scores together: 3, 4.75 -> bins 1, 1).
  opt.histogram_bins = 4;
  const std::vector<double> w2{4, 1, 1, 4};
  const auto b = plumb::fit_map("histogram", FitData{score, label, w2, Scale::probability}, opt);
  CHECK(as_histogram(*b).bins().size() == 4);
  // Weights 1, 1, 1, 7, four bins: midpoints 0.5, 1.5, 2.5, 6.5 give bins
  // 0, 0, 1, 2: the heavy last score takes one bin and bin 3 stays empty.
  const std::vector<double> w3{1, 1, 1, 7};
  const auto c = plumb::fit_map("histogram", FitData{score, label, w3, Scale::probability}, opt);
  const auto& cb = as_histogram(*c).bins();
  REQUIRE(cb.size() == 3);
  CHECK(cb[0].score_hi == 0.2);
  CHECK(cb[1].score_lo == 0.3);
  CHECK(cb[1].score_hi == 0.3);
  CHECK(cb[2].weight == 7.0);
}

TEST_CASE("histogram: fewer bins when distinct scores are few", "[histogram]") {
  // Three equally weighted scores, ten bins asked: midpoints at 1/6, 1/2 and
  // 5/6 of the total fall in bins 1, 5 and 8, so three bins result.
  const std::vector<double> score{0.2, 0.2, 0.5, 0.5, 0.9, 0.9}, label{0, 0, 0, 1, 1, 1};
  const auto m = plumb::fit_map("histogram", FitData{score, label, {}, Scale::probability});
  const auto& bins = as_histogram(*m).bins();
  REQUIRE(bins.size() == 3);
  CHECK(bins[0].value == 0.0);
  CHECK(bins[1].value == 0.5);
  CHECK(bins[2].value == 1.0);
  const auto& notes = m->diagnostics().notes;
  CHECK(std::any_of(notes.begin(), notes.end(), [](const std::string& n) { return n.find("fewer") != std::string::npos; }));
  // As many bins as distinct scores when more are asked and weights are equal.
  std::mt19937_64 g(0x4157'0003);
  const Rows r = random_rows(g, 4000, 7, false);
  MapOptions opt;
  opt.histogram_bins = 50;
  CHECK(as_histogram(*plumb::fit_map("histogram", r.data(), opt)).bins().size() == fitted_scores(r).size());
  // A single bin holds every row at the overall frequency.
  opt.histogram_bins = 1;
  const auto one = plumb::fit_map("histogram", r.data(), opt);
  REQUIRE(as_histogram(*one).bins().size() == 1);
  CHECK(one->map(0.5).probability ==
        Approx(std::accumulate(r.label.begin(), r.label.end(), 0.0) / static_cast<double>(r.label.size()))
            .epsilon(1e-14));
}

TEST_CASE("histogram: between bins the nearer bin wins; outside is flagged", "[histogram]") {
  // Binary fractions, so that the gap's midpoint 0.375 is exact.
  const nlohmann::json p = {{"bin_score_lo", {0.125, 0.5}},
                            {"bin_score_hi", {0.25, 0.75}},
                            {"bin_value", {0.25, 0.75}},
                            {"bin_weight", {10.0, 12.0}}};
  const auto m = plumb::load_map("histogram", Scale::probability, p, "test.json");
  CHECK(m->map(0.2).probability == 0.25);
  CHECK(m->map(0.3).probability == 0.25);
  CHECK(m->map(0.375).probability == 0.25);  // the midpoint of the gap goes left
  CHECK(m->map(std::nextafter(0.375, 1.0)).probability == 0.75);
  CHECK(m->map(0.45).probability == 0.75);
  CHECK_FALSE(m->map(0.375).outside_fit_range);
  const plumb::Mapped below_range = m->map(0.1), above_range = m->map(0.76);
  CHECK(below_range.probability == 0.25);
  CHECK(below_range.outside_fit_range);
  CHECK(above_range.probability == 0.75);
  CHECK(above_range.outside_fit_range);
  CHECK_FALSE(m->map(0.125).outside_fit_range);
  CHECK_FALSE(m->map(0.75).outside_fit_range);
  CHECK(m->monotone());
  // Non-monotone frequencies are a valid histogram, reported as such.
  nlohmann::json q = p;
  q["bin_value"] = {0.75, 0.25};
  CHECK_FALSE(plumb::load_map("histogram", Scale::probability, q, "test.json")->monotone());
}

TEST_CASE("histogram: a fit with falling frequencies is flagged non-monotone", "[histogram]") {
  const std::vector<double> score{0.1, 0.1, 0.2, 0.2, 0.3, 0.3, 0.4, 0.4}, label{1, 1, 1, 0, 0, 1, 0, 0};
  MapOptions opt;
  opt.histogram_bins = 4;
  const auto m = plumb::fit_map("histogram", FitData{score, label, {}, Scale::probability}, opt);
  REQUIRE(as_histogram(*m).bins().size() == 4);
  CHECK_FALSE(m->monotone());
  CHECK(m->map(0.1).probability == 1.0);
  CHECK(m->map(0.4).probability == 0.0);
}

TEST_CASE("histogram: parameters -> load_map round trip is bit-identical", "[histogram]") {
  std::mt19937_64 g(0x4157'0004);
  for (int trial = 0; trial < 20; ++trial) {
    const Scale scale = trial % 3 == 0 ? Scale::logit : Scale::probability;
    Rows r = random_rows(g, 30 + below(g, 3000), trial % 2 ? 0 : 1 + below(g, 50), trial % 4 < 2, 0.1);
    if (scale == Scale::logit)
      for (double& s : r.score) s = 6.0 * s - 3.1;
    MapOptions opt;
    opt.histogram_bins = 1 + static_cast<int>(below(g, 20));
    const auto m = plumb::fit_map("histogram", r.data(scale), opt);
    INFO("trial " << trial);
    check_round_trip(*m, probe_grid(fitted_scores(r)));
  }
}

TEST_CASE("histogram: load_map rejects damaged parameters as artifact errors", "[histogram]") {
  const nlohmann::json good = {{"bin_score_lo", {0.0, 0.3, 0.7}},
                               {"bin_score_hi", {0.2, 0.6, 1.0}},
                               {"bin_value", {0.1, 0.5, 0.9}},
                               {"bin_weight", {4.0, 5.0, 6.0}}};
  REQUIRE_NOTHROW(plumb::load_map("histogram", Scale::probability, good, "test.json"));
  auto with = [&](const char* key, std::size_t i, double v) {
    nlohmann::json p = good;
    p[key][i] = v;
    return p;
  };
  const double nan = std::numeric_limits<double>::quiet_NaN();
  CHECK(load_kind("histogram", with("bin_value", 1, nan)) == ErrorKind::artifact);
  CHECK(load_kind("histogram", with("bin_score_lo", 1, std::numeric_limits<double>::infinity())) ==
        ErrorKind::artifact);
  CHECK(load_kind("histogram", nlohmann::json::parse(with("bin_weight", 2, nan).dump())) == ErrorKind::artifact);
  CHECK(load_kind("histogram", with("bin_value", 0, -0.2)) == ErrorKind::artifact);
  CHECK(load_kind("histogram", with("bin_value", 2, 1.2)) == ErrorKind::artifact);
  CHECK(load_kind("histogram", with("bin_score_lo", 1, 0.2)) == ErrorKind::artifact);   // touching
  CHECK(load_kind("histogram", with("bin_score_lo", 2, 0.5)) == ErrorKind::artifact);   // overlapping
  CHECK(load_kind("histogram", with("bin_score_hi", 1, 0.25)) == ErrorKind::artifact);  // reversed
  CHECK(load_kind("histogram", with("bin_weight", 0, 0.0)) == ErrorKind::artifact);
  // Probability-scale bin scores outside [0, 1]; accepted on the margin scale.
  CHECK(load_kind("histogram", with("bin_score_lo", 0, -0.1)) == ErrorKind::artifact);
  CHECK(load_kind("histogram", with("bin_score_hi", 2, 1.5)) == ErrorKind::artifact);
  CHECK_NOTHROW(plumb::load_map("histogram", Scale::margin, with("bin_score_hi", 2, 1.5), "test.json"));
  for (const char* key : {"bin_score_lo", "bin_score_hi", "bin_value", "bin_weight"}) {
    INFO(key);
    nlohmann::json p = good;
    p[key].erase(0);
    CHECK(load_kind("histogram", p) == ErrorKind::artifact);
    p = good;
    p.erase(key);
    CHECK(load_kind("histogram", p) == ErrorKind::artifact);
  }
  nlohmann::json empty = good;
  for (const char* key : {"bin_score_lo", "bin_score_hi", "bin_value", "bin_weight"})
    empty[key] = nlohmann::json::array();
  CHECK(load_kind("histogram", empty) == ErrorKind::artifact);
}

TEST_CASE("histogram: fewer than one bin is a usage error", "[histogram]") {
  const std::vector<double> score{0.2, 0.8}, label{0, 1};
  MapOptions opt;
  for (int bins : {0, -3}) {
    opt.histogram_bins = bins;
    CHECK(error_kind([&] { plumb::fit_map("histogram", FitData{score, label, {}, Scale::probability}, opt); }) ==
          ErrorKind::usage);
  }
}

// ---------------------------------------------------------------- registry

TEST_CASE("isotonic and histogram registry: one-class data, unknown kinds, scales", "[isotonic][histogram]") {
  const std::vector<double> score{0.1, 0.4, 0.7}, ones{1, 1, 1}, zeros{0, 0, 0}, mixed{0, 1, 1},
      zero_w{0, 0, 0}, some_w{1, 0, 0};
  for (const char* kind : {"isotonic", "histogram", "platt", "beta", "temperature"}) {
    INFO(kind);
    CHECK(error_kind([&] { plumb::fit_map(kind, FitData{score, ones, {}, Scale::probability}); }) ==
          ErrorKind::fit);
    CHECK(error_kind([&] { plumb::fit_map(kind, FitData{score, zeros, {}, Scale::probability}); }) ==
          ErrorKind::fit);
    // Only positive-weight rows count: one class left after weighting.
    CHECK(error_kind([&] { plumb::fit_map(kind, FitData{score, mixed, some_w, Scale::probability}); }) ==
          ErrorKind::fit);
    CHECK(error_kind([&] { plumb::fit_map(kind, FitData{score, mixed, zero_w, Scale::probability}); }) ==
          ErrorKind::fit);
  }
  const FitData ok{score, mixed, {}, Scale::probability};
  for (const char* kind : {"", "Isotonic", "spline", "isotonic "})
    CHECK(error_kind([&] { plumb::fit_map(kind, ok); }) == ErrorKind::usage);
  CHECK(error_kind([&] { plumb::load_map("spline", Scale::probability, nlohmann::json::object(), "x"); }) ==
        ErrorKind::artifact);
  // Beta calibration needs probabilities (ln s and ln(1 - s); Kull et al. 2017).
  const FitData margin{score, mixed, {}, Scale::margin};
  CHECK(error_kind([&] { plumb::fit_map("beta", margin); }) == ErrorKind::usage);
  CHECK_FALSE(plumb::accepts_scale("beta", Scale::margin));
  CHECK(error_kind([&] { plumb::load_map("beta", Scale::margin, nlohmann::json::object(), "x"); }) ==
        ErrorKind::artifact);
  // Isotonic and histogram take any scale.
  for (Scale s : {Scale::probability, Scale::logit, Scale::margin}) {
    CHECK(plumb::accepts_scale("isotonic", s));
    CHECK(plumb::accepts_scale("histogram", s));
    CHECK_NOTHROW(plumb::fit_map("isotonic", FitData{score, mixed, {}, s}));
    CHECK_NOTHROW(plumb::fit_map("histogram", FitData{score, mixed, {}, s}));
  }
  const auto kinds = plumb::map_kinds();
  CHECK(std::find(kinds.begin(), kinds.end(), "isotonic") != kinds.end());
  CHECK(std::find(kinds.begin(), kinds.end(), "histogram") != kinds.end());
}

namespace {

std::unique_ptr<plumb::CalibrationMap> histogram_of(std::vector<double> value, std::vector<double> weight) {
  std::vector<plumb::HistogramBin> bins;
  for (std::size_t i = 0; i < value.size(); ++i)
    bins.push_back({0.1 * static_cast<double>(i), 0.1 * static_cast<double>(i) + 0.05, value[i], weight[i]});
  return std::make_unique<plumb::HistogramMap>(Scale::probability, std::move(bins));
}

}  // namespace

TEST_CASE("histogram: a dip between bins is not monotone, only a falling whole decreases", "[histogram]") {
  // The rule is the sign of Spearman's rank correlation of score and
  // frequency over the rows, ties within a bin given their mid-rank
  // (Kendall and Gibbons, Rank Correlation Methods, 1990, ch. 3): the sign
  // of sum w_b (R_b - W/2)(v_b - v_mean). The covariances below are by hand.
  const auto dip = histogram_of({0.1, 0.3, 0.25, 0.5}, {5, 5, 5, 5});
  CHECK_FALSE(dip->monotone());
  CHECK_FALSE(dip->decreases_overall());
  const auto falling = histogram_of({0.6, 0.4, 0.45, 0.2}, {5, 5, 5, 5});
  CHECK_FALSE(falling->monotone());
  CHECK(falling->decreases_overall());
  // Weights count: one light bin of 0.9 before two heavy bins that rise.
  // v_mean = 3.9/21; mid-ranks 0.5, 6, 16 around 10.5: covariance
  // -10(0.9 - 0.186) + 10(-4.5)(0.1 - 0.186) + 10(5.5)(0.2 - 0.186) = -2.5 < 0.
  CHECK(histogram_of({0.9, 0.1, 0.2}, {1, 10, 10})->decreases_overall());
  // With 0.3 in the last bin: v_mean = 4.9/21, covariance
  // -10(0.667) + 10(-4.5)(-0.133) + 10(5.5)(0.067) = +3.0 > 0.
  CHECK_FALSE(histogram_of({0.9, 0.1, 0.3}, {1, 10, 10})->decreases_overall());
  CHECK_FALSE(histogram_of({0.1, 0.2, 0.3}, {1, 1, 1})->decreases_overall());
}

TEST_CASE("histogram and isotonic maps say when they give exactly 0 or 1", "[histogram][isotonic]") {
  CHECK(histogram_of({0.0, 0.5}, {1, 1})->reaches_zero_or_one());
  CHECK(histogram_of({0.2, 1.0}, {1, 1})->reaches_zero_or_one());
  CHECK_FALSE(histogram_of({0.2, 0.9}, {1, 1})->reaches_zero_or_one());
  // 16 bins on 16 rows: every bin one row, so every frequency is 0 or 1.
  std::vector<double> score, label;
  for (int i = 0; i < 16; ++i) {
    score.push_back((i + 0.5) / 16);
    label.push_back(i % 3 == 0 ? 1.0 : 0.0);
  }
  MapOptions opt;
  opt.histogram_bins = 16;
  CHECK(plumb::fit_map("histogram", FitData{score, label, {}, Scale::probability}, opt)->reaches_zero_or_one());
  opt.histogram_bins = 2;  // 6 positives in 16 rows: 3 of 8 in each half
  CHECK_FALSE(plumb::fit_map("histogram", FitData{score, label, {}, Scale::probability}, opt)->reaches_zero_or_one());
  // PAV on labels 0,0,1,1 gives blocks of value 0 and 1 (no violators to pool).
  const std::vector<double> s4{0.1, 0.2, 0.3, 0.4}, y4{0, 0, 1, 1}, y4b{0, 1, 0, 1};
  CHECK(plumb::fit_map("isotonic", FitData{s4, y4, {}, Scale::probability}, {})->reaches_zero_or_one());
  // Labels 0,1,0,1: PAV pools the middle pair, 0 | 1/2 | 1, with 0 and 1 at the ends.
  CHECK(plumb::fit_map("isotonic", FitData{s4, y4b, {}, Scale::probability}, {})->reaches_zero_or_one());
  const std::vector<double> y4c{1, 0, 1, 0};  // PAV pools every row: one block of 1/2
  CHECK_FALSE(plumb::fit_map("isotonic", FitData{s4, y4c, {}, Scale::probability}, {})->reaches_zero_or_one());
}

TEST_CASE("kind_with_article: an isotonic, a platt", "[maps]") {
  CHECK(plumb::kind_with_article("isotonic") == "an isotonic");
  CHECK(plumb::kind_with_article("histogram") == "a histogram");
  CHECK(plumb::kind_with_article("platt") == "a platt");
  CHECK(plumb::kind_with_article("beta") == "a beta");
  CHECK(plumb::kind_with_article("temperature") == "a temperature");
}
