// cross-fit fits each fold's maps on per-score sums built once from the
// sorted rows (one set of sums per fold, shared by every candidate). These
// tests hold that to the definition: each fold's map is the map fit_map gives
// on that fold's training rows themselves, taken in input order, bit for bit
// (parameters, iterations, convergence and notes), and each out-of-fold probability is the
// scoring fold's map applied to the row's score.
#include <catch2/catch.hpp>
#include <algorithm>
#include <bit>
#include <cmath>
#include <cstdint>
#include <limits>
#include <random>
#include <string>
#include <vector>

#include "plumb/calibration_error.hpp"
#include "plumb/calibration_map.hpp"
#include "plumb/corp.hpp"
#include "plumb/cross_fit.hpp"
#include "plumb/scores.hpp"
#include "plumb/tally.hpp"
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
                                               std::size_t j, const plumb::MapOptions& options,
                                               plumb::Scale scale = plumb::Scale::probability) {
  Rows t;
  for (std::size_t i = 0; i < r.score.size(); ++i) {
    if (!folds.trains(i, j)) continue;
    t.score.push_back(r.score[i]);
    t.label.push_back(r.label[i]);
    if (!r.weight.empty()) t.weight.push_back(r.weight[i]);
  }
  return plumb::fit_map(kind, plumb::FitData{t.score, t.label, t.weight, scale}, options);
}

void check_against_rows(const Rows& r, const plumb::Folds& folds) {
  const std::vector<std::string> kinds{"isotonic", "platt", "beta", "temperature", "histogram"};
  plumb::MapOptions options;
  const plumb::CrossFitResult result =
      plumb::cross_fit(plumb::FitData{r.score, r.label, r.weight, plumb::Scale::probability}, folds, kinds, options);
  REQUIRE(result.candidates.size() == kinds.size());
  for (std::size_t ci = 0; ci < result.candidates.size(); ++ci) {
    const plumb::Candidate& c = result.candidates[ci];
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
      CHECK(got.notes == want.notes);
      // Fold maps are fitted without the row diagnostics (nothing shows them).
      CHECK(got.clipped == 0);
      CHECK(std::isnan(got.log_loss));
    }
    std::size_t mismatched = 0, scored = 0;
    for (std::size_t i = 0; i < r.score.size(); ++i) {
      if (!folds.scored(i)) {
        mismatched += !std::isnan(result.oof(ci, i));
        continue;
      }
      ++scored;
      const double p = c.fold_maps[folds.fold_of_row[i]]->map(r.score[i]).probability;
      mismatched += std::bit_cast<std::uint64_t>(p) != std::bit_cast<std::uint64_t>(result.oof(ci, i));
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
      mismatched += std::bit_cast<std::uint64_t>(a.oof(c, order[k])) != std::bit_cast<std::uint64_t>(b.oof(c, k));
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

// Unweighted rows with 0/1 labels are cross-fitted on per-(score, fold)
// cells. Their figures must be the definition's, bit for bit: each scored
// row's out-of-fold probability (its fold's map, fitted on the fold's rows)
// in a stable sort of the rows by score, and the library's metrics on those
// rows (log_loss, brier_score, calibration_error, corp_decomposition), the
// per-fold log loss and the paired per-row difference against the best.
namespace {

std::uint64_t bits(double x) { return std::bit_cast<std::uint64_t>(x); }

plumb::OutOfFoldFigures defined_figures(const std::vector<double>& f, const std::vector<double>& y,
                                        const std::vector<std::uint32_t>& fold, std::size_t folds) {
  plumb::OutOfFoldFigures out;
  out.log_loss = plumb::log_loss(f, y);
  out.brier = plumb::brier_score(f, y);
  out.ece = plumb::calibration_error(f, y, {}, plumb::BinningKind::equal_width, 10).ece;
  out.mcb = plumb::corp_decomposition(f, y).brier.mcb;
  std::vector<double> loss(folds, 0.0), weight(folds, 0.0);
  for (std::size_t k = 0; k < f.size(); ++k) {
    loss[fold[k]] += plumb::log_loss_term(f[k], y[k]);
    weight[fold[k]] += 1.0;
  }
  for (std::size_t j = 0; j < folds; ++j)
    if (weight[j] > 0.0) out.fold_log_loss.push_back(loss[j] / weight[j]);
  return out;
}

void check_figures(const plumb::OutOfFoldFigures& got, const plumb::OutOfFoldFigures& want) {
  CHECK(bits(got.log_loss) == bits(want.log_loss));
  CHECK(bits(got.brier) == bits(want.brier));
  CHECK(bits(got.ece) == bits(want.ece));
  CHECK(bits(got.mcb) == bits(want.mcb));
  REQUIRE(got.fold_log_loss.size() == want.fold_log_loss.size());
  for (std::size_t j = 0; j < got.fold_log_loss.size(); ++j)
    CHECK(bits(got.fold_log_loss[j]) == bits(want.fold_log_loss[j]));
}

void check_cells_against_definition(const Rows& r, plumb::Scale scale, const plumb::Folds& folds,
                                    const std::vector<std::string>& asked) {
  std::vector<std::string> kinds;
  for (const std::string& k : asked)
    if (plumb::accepts_scale(k, scale)) kinds.push_back(k);
  plumb::MapOptions options;
  const plumb::FitData data{r.score, r.label, {}, scale};
  const plumb::CrossFitResult result = plumb::cross_fit(data, folds, kinds, options);
  REQUIRE(result.cell_of_row.size() == r.score.size());  // the cell path was taken
  std::vector<std::size_t> order(r.score.size());
  for (std::size_t i = 0; i < order.size(); ++i) order[i] = i;
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return r.score[a] < r.score[b]; });
  std::vector<double> y;
  std::vector<std::uint32_t> fold;
  for (std::size_t i : order)
    if (folds.scored(i)) {
      y.push_back(r.label[i]);
      fold.push_back(folds.fold_of_row[i]);
    }
  std::vector<std::vector<double>> f(kinds.size());
  for (std::size_t c = 0; c < kinds.size(); ++c) {
    INFO(kinds[c]);
    std::vector<std::unique_ptr<plumb::CalibrationMap>> maps(folds.count);
    for (std::size_t j = 0; j < folds.count; ++j)
      if (!(folds.forward_chaining && j == 0)) maps[j] = row_fit(kinds[c], r, folds, j, options, scale);
    std::size_t mismatched = 0;
    for (std::size_t i : order) {
      if (!folds.scored(i)) {
        mismatched += !std::isnan(result.oof(c, i));
        continue;
      }
      const double p = maps[folds.fold_of_row[i]]->map(r.score[i]).probability;
      f[c].push_back(p);
      mismatched += bits(p) != bits(result.oof(c, i));
    }
    CHECK(mismatched == 0);
    check_figures(result.candidates[c].figures, defined_figures(f[c], y, fold, folds.count));
    // The sums kept for the final refit give fit_map's map on all the rows.
    CHECK(plumb::fit_map_on_tally(kinds[c], result.all_rows, options)->parameters().dump() ==
          plumb::fit_map(kinds[c], data, options)->parameters().dump());
  }
  if (scale == plumb::Scale::probability) {
    REQUIRE(result.has_raw);
    std::vector<double> raw;
    for (std::size_t i : order)
      if (folds.scored(i)) raw.push_back(r.score[i]);
    check_figures(result.raw, defined_figures(raw, y, fold, folds.count));
  }
  for (std::size_t c = 0; c < kinds.size(); ++c) {
    double sum = 0.0, total = 0.0;
    for (std::size_t k = 0; k < y.size(); ++k) {
      sum += plumb::log_loss_term(f[c][k], y[k]) - plumb::log_loss_term(f[result.best][k], y[k]);
      total += 1.0;
    }
    const double mean = sum / total;
    double ss = 0.0;
    for (std::size_t k = 0; k < y.size(); ++k) {
      const double d = plumb::log_loss_term(f[c][k], y[k]) - plumb::log_loss_term(f[result.best][k], y[k]);
      ss += (d - mean) * (d - mean);
    }
    CHECK(bits(result.candidates[c].diff_vs_best) == bits(mean));
    CHECK(bits(result.candidates[c].diff_se) == bits(std::sqrt(ss / (total - 1.0) / total)));
  }
}

}  // namespace

TEST_CASE("cross-fit on cells: every figure is the per-row definition's, bit for bit", "[cross_fit]") {
  const std::vector<std::string> kinds{"isotonic", "platt", "beta", "temperature", "histogram"};
  Rows r = make_rows(4000, false, 31);
  for (double& s : r.score) s += 0.0;  // no -0: a -0 takes the per-row path
  SECTION("stratified") { check_cells_against_definition(r, plumb::Scale::probability, plumb::stratified_folds(r.label, 5, 4), kinds); }
  SECTION("forward chaining by time: the first block is not scored") {
    std::vector<std::uint64_t> time(r.score.size());
    for (std::size_t i = 0; i < time.size(); ++i) time[i] = i / 100;
    check_cells_against_definition(r, plumb::Scale::probability, plumb::time_folds(time, 4), kinds);
  }
  SECTION("scores that fall as the rate rises: decreasing fold maps, forecasts out of score order") {
    // (temperature refuses such scores: it fits only a positive slope)
    for (double& s : r.score) s = 1.0 - s;
    check_cells_against_definition(r, plumb::Scale::probability, plumb::stratified_folds(r.label, 3, 5),
                                   {"isotonic", "platt", "beta", "histogram"});
  }
  SECTION("log-odds of both signs, already sorted and not") {
    for (double& s : r.score) s = std::log(s + 0.001) - std::log(1.001 - s);
    check_cells_against_definition(r, plumb::Scale::logit, plumb::stratified_folds(r.label, 4, 6), kinds);
    std::sort(r.score.begin(), r.score.end());
    check_cells_against_definition(r, plumb::Scale::logit, plumb::stratified_folds(r.label, 4, 6), kinds);
  }
}

TEST_CASE("cross-fit: weighted rows and a score of -0 keep one cell per row", "[cross_fit]") {
  const Rows weighted = make_rows(500, true, 41);
  const auto a = plumb::cross_fit(plumb::FitData{weighted.score, weighted.label, weighted.weight, plumb::Scale::probability},
                                  plumb::stratified_folds(weighted.label, 3, 1), std::vector<std::string>{"platt"}, {});
  CHECK(a.cell_of_row.empty());
  CHECK(a.candidates[0].oof.size() == weighted.score.size());
  const Rows zero = make_rows(500, false, 42);  // holds -0 scores
  const auto b = plumb::cross_fit(plumb::FitData{zero.score, zero.label, {}, plumb::Scale::probability},
                                  plumb::stratified_folds(zero.label, 3, 1), std::vector<std::string>{"platt"}, {});
  CHECK(b.cell_of_row.empty());
}

TEST_CASE("cross-fit: once rows_read is called the rows are read no more", "[cross_fit]") {
  // The caller may give the rows' memory back from rows_read (the command
  // does, before the folds are fitted). Overwriting them there with NaN
  // must change nothing: every number comes from what was taken before.
  for (const bool weighted : {false, true}) {
    INFO((weighted ? "weighted: per-row path" : "unweighted: cell path"));
    Rows r = make_rows(1500, weighted, 51);
    for (double& s : r.score) s += 0.0;
    const plumb::Folds folds = plumb::stratified_folds(r.label, 4, 2);
    const std::vector<std::string> kinds{"isotonic", "platt"};
    const auto plain =
        plumb::cross_fit(plumb::FitData{r.score, r.label, r.weight, plumb::Scale::probability}, folds, kinds, {});
    int calls = 0;
    const auto spoiled = plumb::cross_fit(plumb::FitData{r.score, r.label, r.weight, plumb::Scale::probability}, folds,
                                          kinds, {}, [&] {
                                            ++calls;
                                            const double nan = std::numeric_limits<double>::quiet_NaN();
                                            std::fill(r.score.begin(), r.score.end(), nan);
                                            std::fill(r.label.begin(), r.label.end(), nan);
                                            std::fill(r.weight.begin(), r.weight.end(), nan);
                                          });
    CHECK(calls == 1);
    CHECK(spoiled.cell_of_row.empty() == weighted);
    for (std::size_t c = 0; c < kinds.size(); ++c) {
      CHECK(bits(spoiled.candidates[c].figures.log_loss) == bits(plain.candidates[c].figures.log_loss));
      CHECK(bits(spoiled.candidates[c].figures.mcb) == bits(plain.candidates[c].figures.mcb));
      CHECK(bits(spoiled.candidates[c].diff_se) == bits(plain.candidates[c].diff_se));
      std::size_t mismatched = 0;
      for (std::size_t i = 0; i < r.score.size(); ++i) mismatched += bits(spoiled.oof(c, i)) != bits(plain.oof(c, i));
      CHECK(mismatched == 0);
    }
    CHECK(plumb::fit_map_on_tally("platt", spoiled.all_rows, {})->parameters().dump() ==
          plumb::fit_map_on_tally("platt", plain.all_rows, {})->parameters().dump());
    CHECK(spoiled.folds.fold_of_row == folds.fold_of_row);
  }
}
