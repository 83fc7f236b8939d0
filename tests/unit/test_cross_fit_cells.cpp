// cross-fit fits each fold's maps on per-score sums built once from the
// sorted rows (one set of sums per fold, shared by every candidate). These
// tests hold that to the definition: each fold's map is the map fit_map gives
// on that fold's training rows themselves, taken in input order, bit for bit
// (parameters and diagnostics), and each out-of-fold probability is the
// scoring fold's map applied to the row's score.
#include <catch2/catch.hpp>
#include <algorithm>
#include <bit>
#include <cmath>
#include <cstdint>
#include <random>
#include <string>
#include <vector>

#include "plumb/calibration_map.hpp"
#include "plumb/cross_fit.hpp"
#include "plumb/error.hpp"
#include "plumb/folds.hpp"
#include "support/test_helpers.hpp"

using plumb::test::below;
using plumb::test::uniform01;

namespace {

struct Rows {
  std::vector<double> score, label, weight;
};

// Scores on a coarse grid, so that many rows share a score (and a fold's
// sums add several rows per score), in no particular order; some rows of
// score 0 written as -0, and with weights, fractional weights and zeros.
Rows make_rows(std::size_t n, bool weighted, std::uint64_t seed) {
  std::mt19937_64 g(seed);
  Rows r;
  for (std::size_t i = 0; i < n; ++i) {
    const double z = uniform01(g) * 5.0 - 3.5;
    double s = std::round(1000.0 / (1.0 + std::exp(-1.8 * z))) / 1000.0;
    if (i % 211 == 0) s = (i % 2 == 0) ? -0.0 : 0.0;
    r.score.push_back(s);
    r.label.push_back(uniform01(g) < 1.0 / (1.0 + std::exp(-z)) ? 1.0 : 0.0);
    if (weighted) r.weight.push_back(i % 37 == 0 ? 0.0 : 0.1 + static_cast<double>(below(g, 3000)) / 1000.0);
  }
  return r;
}

// The map fit_map gives on fold j's training rows, gathered in input order.
std::unique_ptr<plumb::CalibrationMap> row_fit(const std::string& kind, const Rows& r, const plumb::Folds& folds,
                                               std::size_t j, const plumb::MapOptions& options) {
  Rows t;
  for (std::size_t i = 0; i < r.score.size(); ++i) {
    if (!folds.trains(i, j)) continue;
    t.score.push_back(r.score[i]);
    t.label.push_back(r.label[i]);
    if (!r.weight.empty()) t.weight.push_back(r.weight[i]);
  }
  return plumb::fit_map(kind, plumb::FitData{t.score, t.label, t.weight, plumb::Scale::probability}, options);
}

void check_against_rows(const Rows& r, const plumb::Folds& folds) {
  const std::vector<std::string> kinds{"isotonic", "platt", "beta", "temperature", "histogram"};
  plumb::MapOptions options;
  const plumb::CrossFitResult result =
      plumb::cross_fit(plumb::FitData{r.score, r.label, r.weight, plumb::Scale::probability}, folds, kinds, options);
  REQUIRE(result.candidates.size() == kinds.size());
  for (const plumb::Candidate& c : result.candidates) {
    INFO(c.kind);
    REQUIRE(c.fold_maps.size() == folds.count);
    for (std::size_t j = 0; j < folds.count; ++j) {
      INFO("fold " << j);
      if (folds.forward_chaining && j == 0) {
        CHECK(c.fold_maps[j] == nullptr);  // the first block is never scored
        continue;
      }
      REQUIRE(c.fold_maps[j] != nullptr);
      const auto expected = row_fit(c.kind, r, folds, j, options);
      // dump() prints doubles in their shortest round-trip form: equal text, equal bits.
      CHECK(c.fold_maps[j]->parameters().dump() == expected->parameters().dump());
      const plumb::FitDiagnostics& got = c.fold_maps[j]->diagnostics();
      const plumb::FitDiagnostics& want = expected->diagnostics();
      CHECK(got.iterations == want.iterations);
      CHECK(got.converged == want.converged);
      CHECK(got.clipped == want.clipped);
      CHECK(std::bit_cast<std::uint64_t>(got.log_loss) == std::bit_cast<std::uint64_t>(want.log_loss));
    }
    std::size_t mismatched = 0, scored = 0;
    for (std::size_t i = 0; i < r.score.size(); ++i) {
      if (!folds.scored(i)) {
        mismatched += !std::isnan(c.oof[i]);
        continue;
      }
      ++scored;
      const double p = c.fold_maps[folds.fold_of_row[i]]->map(r.score[i]).probability;
      mismatched += std::bit_cast<std::uint64_t>(p) != std::bit_cast<std::uint64_t>(c.oof[i]);
    }
    CHECK(mismatched == 0);
    CHECK(scored == result.scored_rows);
  }
}

}  // namespace

TEST_CASE("cross-fit: fold maps from per-score sums equal fits on the fold's rows, bit for bit", "[cross_fit]") {
  for (const bool weighted : {false, true}) {
    INFO((weighted ? "weighted" : "unweighted"));
    const Rows r = make_rows(3000, weighted, weighted ? 11 : 12);
    SECTION(std::string("stratified, ") + (weighted ? "weighted" : "unweighted")) {
      check_against_rows(r, plumb::stratified_folds(r.label, 5, 3));
    }
    SECTION(std::string("forward chaining by time, ") + (weighted ? "weighted" : "unweighted")) {
      std::vector<std::uint64_t> time(r.score.size());
      for (std::size_t i = 0; i < time.size(); ++i) time[i] = i / 100;  // 30 nights, in input order
      check_against_rows(r, plumb::time_folds(time, 4));
    }
  }
}

TEST_CASE("cross-fit: fold maps on rows given in score order equal those on shuffled rows", "[cross_fit]") {
  // The sorted path (no reordering) and the reordering path must agree: the
  // same rows, sorted first, give the same fold maps when the folds follow them.
  Rows r = make_rows(2000, true, 21);
  for (double& s : r.score) s += 0.0;  // one zero, so the sort is a plain one
  std::vector<std::size_t> order(r.score.size());
  for (std::size_t i = 0; i < order.size(); ++i) order[i] = i;
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return r.score[a] < r.score[b]; });
  const plumb::Folds folds = plumb::stratified_folds(r.label, 4, 9);
  Rows sorted;
  plumb::Folds sorted_folds = folds;
  for (std::size_t k = 0; k < order.size(); ++k) {
    sorted.score.push_back(r.score[order[k]]);
    sorted.label.push_back(r.label[order[k]]);
    sorted.weight.push_back(r.weight[order[k]]);
    sorted_folds.fold_of_row[k] = folds.fold_of_row[order[k]];
  }
  const std::vector<std::string> kinds{"isotonic", "beta"};
  const auto a = plumb::cross_fit(plumb::FitData{r.score, r.label, r.weight, plumb::Scale::probability}, folds, kinds, {});
  const auto b = plumb::cross_fit(plumb::FitData{sorted.score, sorted.label, sorted.weight, plumb::Scale::probability},
                                  sorted_folds, kinds, {});
  for (std::size_t c = 0; c < kinds.size(); ++c) {
    for (std::size_t j = 0; j < folds.count; ++j)
      CHECK(a.candidates[c].fold_maps[j]->parameters().dump() == b.candidates[c].fold_maps[j]->parameters().dump());
    std::size_t mismatched = 0;
    for (std::size_t k = 0; k < order.size(); ++k)
      mismatched += std::bit_cast<std::uint64_t>(a.candidates[c].oof[order[k]]) !=
                    std::bit_cast<std::uint64_t>(b.candidates[c].oof[k]);
    CHECK(mismatched == 0);
    CHECK(std::bit_cast<std::uint64_t>(a.candidates[c].figures.log_loss) ==
          std::bit_cast<std::uint64_t>(b.candidates[c].figures.log_loss));
  }
}

TEST_CASE("cross-fit: a fold that cannot be fitted is named, first candidate first", "[cross_fit]") {
  // Forward chaining where the first block holds only negatives: fold 2's
  // maps see one class. Every candidate fails there; the message names the
  // first candidate asked for and the fold (fit_map's refusal, prefixed).
  std::vector<double> score, label;
  std::vector<std::uint64_t> time;
  for (std::size_t i = 0; i < 400; ++i) {
    score.push_back(static_cast<double>(i % 50) / 50.0 + 0.01);
    label.push_back(i < 100 ? 0.0 : static_cast<double>(i % 3 == 0));
    time.push_back(i / 100);
  }
  const plumb::Folds folds = plumb::time_folds(time, 4);
  const std::vector<std::string> kinds{"platt", "isotonic"};
  try {
    plumb::cross_fit(plumb::FitData{score, label, {}, plumb::Scale::probability}, folds, kinds, {});
    FAIL("no error");
  } catch (const plumb::Error& e) {
    CHECK(e.kind() == plumb::ErrorKind::fit);
    CHECK(e.message().rfind("fold 2 of the platt map: ", 0) == 0);
  }
}
