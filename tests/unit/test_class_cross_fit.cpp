// The multi-class cross-fit's out-of-fold probabilities, Brier score and
// fold maps, under the stratified and the forward-chaining (time) split, and
// the fold average that cross-fit --final folds ships. The CLI checks
// against plumb fit and apply are in tests/cli/test_cross_fit_classes.py.
#include <catch2/catch.hpp>

#include <cmath>
#include <random>
#include <string>
#include <vector>

#include "plumb/class_cross_fit.hpp"
#include "plumb/class_map.hpp"
#include "plumb/error.hpp"
#include "plumb/folds.hpp"
#include "plumb/maps/class_fold_average_map.hpp"
#include "support/test_helpers.hpp"

namespace {

// A seeded data set of K = 3 on the logit scale, weights 1 to 3 (a few 0).
plumb::ClassScores rows_of(std::uint64_t seed, std::size_t n) {
  std::mt19937_64 g(seed);
  plumb::ClassScores s;
  s.classes = {"a", "b", "c"};
  s.scale = plumb::ClassScale::logit;
  s.rows = n;
  for (std::size_t r = 0; r < n; ++r) {
    const std::size_t y = plumb::test::below(g, 3);
    for (std::size_t k = 0; k < 3; ++k) s.values.push_back((k == y ? 2.0 : 0.0) + 4.0 * plumb::test::uniform01(g) - 2.0);
    s.label.push_back(static_cast<std::uint32_t>(y));
    s.weight.push_back(r % 11 == 0 ? 0.0 : 1.0 + static_cast<double>(r % 3));
  }
  return s;
}

plumb::ClassScores training(const plumb::ClassScores& s, const plumb::Folds& f, std::size_t j) {
  plumb::ClassScores t;
  t.classes = s.classes;
  t.scale = s.scale;
  for (std::size_t i = 0; i < s.rows; ++i)
    if (f.trains(i, j)) {
      t.values.insert(t.values.end(), s.row(i), s.row(i) + s.k());
      t.label.push_back(s.label[i]);
      t.weight.push_back(s.weight[i]);
      ++t.rows;
    }
  return t;
}

}  // namespace

TEST_CASE("multi-class cross-fit: out-of-fold rows and their Brier score, recomputed from fits on the training rows",
          "[multiclass][cross_fit]") {
  const plumb::ClassScores s = rows_of(3, 240);
  const plumb::Folds f = plumb::class_stratified_folds(s.label, 3, 4, 8);
  const std::vector<plumb::ClassCandidateSpec> specs{{"temperature", {}}, {"vector", {}}};
  const plumb::ClassCrossFitResult r = plumb::class_cross_fit(s, f, specs);
  REQUIRE(r.oof.size() == s.rows * 3);
  for (std::size_t c = 0; c < specs.size(); ++c) {
    const plumb::ClassCandidate& cand = r.candidates[c];
    REQUIRE(cand.fold_maps.size() == 4);
    // Brier (1950), summed over the classes, weighted; its standard error
    // as the standard error of a weighted mean (common practice).
    std::vector<double> b(s.rows), w(s.rows);
    double sum = 0.0, wt = 0.0;
    for (std::size_t j = 0; j < 4; ++j) {
      const auto m = plumb::fit_class_map(specs[c].kind, training(s, f, j));
      double q[3], q_kept[3];
      for (std::size_t i = 0; i < s.rows; ++i) {
        if (f.fold_of_row[i] != j) continue;
        m->map(s.row(i), q);
        cand.fold_maps[j]->map(s.row(i), q_kept);
        for (std::size_t k = 0; k < 3; ++k) CHECK(q_kept[k] == q[k]);
        if (c == r.chosen)
          for (std::size_t k = 0; k < 3; ++k) CHECK(r.oof[i * 3 + k] == q[k]);
        b[i] = 0.0;
        for (std::size_t k = 0; k < 3; ++k) b[i] += (q[k] - (k == s.label[i] ? 1.0 : 0.0)) * (q[k] - (k == s.label[i] ? 1.0 : 0.0));
        w[i] = s.weight[i];
        sum += w[i] * b[i];
        wt += w[i];
      }
    }
    const double mean = sum / wt;
    double ss = 0.0;
    for (std::size_t i = 0; i < s.rows; ++i) ss += w[i] * (b[i] - mean) * (b[i] - mean);
    CHECK(cand.brier == Approx(mean).epsilon(1e-12));
    CHECK(cand.brier_se == Approx(std::sqrt(ss / (wt - 1.0) / wt)).epsilon(1e-12));
    CHECK(cand.brier > 0.0);
    CHECK(cand.brier < 2.0);
  }
}

TEST_CASE("multi-class cross-fit by time: the first block is not scored and its rows have no probabilities",
          "[multiclass][cross_fit]") {
  const plumb::ClassScores s = rows_of(5, 200);
  std::vector<std::uint64_t> rank(s.rows);
  for (std::size_t i = 0; i < s.rows; ++i) rank[i] = i / 10;  // twenty times, ten rows each
  const plumb::Folds f = plumb::time_folds(rank, 4);
  const std::vector<plumb::ClassCandidateSpec> specs{{"temperature", {}}};
  const plumb::ClassCrossFitResult r = plumb::class_cross_fit(s, f, specs);
  CHECK(r.candidates[0].fold_maps[0] == nullptr);
  std::uint64_t scored = 0;
  for (std::size_t i = 0; i < s.rows; ++i) {
    if (f.fold_of_row[i] == 0) {
      CHECK(std::isnan(r.oof[i * 3]));
      continue;
    }
    ++scored;
    const auto m = plumb::fit_class_map("temperature", training(s, f, f.fold_of_row[i]));
    double q[3];
    m->map(s.row(i), q);
    for (std::size_t k = 0; k < 3; ++k) CHECK(r.oof[i * 3 + k] == q[k]);
  }
  CHECK(r.scored_rows == scored);
  CHECK(scored < s.rows);
}

TEST_CASE("the multi-class fold average is the mean of its fold maps and reads back exactly",
          "[multiclass][cross_fit]") {
  const plumb::ClassScores s = rows_of(7, 150);
  const plumb::Folds f = plumb::class_stratified_folds(s.label, 3, 3, 1);
  std::vector<std::shared_ptr<const plumb::ClassCalibrationMap>> maps;
  for (std::size_t j = 0; j < 3; ++j) maps.push_back(plumb::fit_class_map(j == 1 ? "temperature" : "vector", training(s, f, j)));
  const plumb::ClassFoldAverageMap avg(s.classes, s.scale, maps);
  const auto back = plumb::load_class_map("fold_average", s.classes, s.scale, avg.parameters(), "avg.json");
  CHECK(back->kind() == "fold_average");
  CHECK(back->parameters() == avg.parameters());
  for (std::size_t i = 0; i < s.rows; ++i) {
    double q[3], p[3], each[3][3];
    avg.map(s.row(i), q);
    back->map(s.row(i), p);
    for (std::size_t j = 0; j < 3; ++j) maps[j]->map(s.row(i), each[j]);
    double total = 0.0;
    for (std::size_t k = 0; k < 3; ++k) {
      CHECK(q[k] == Approx((each[0][k] + each[1][k] + each[2][k]) / 3.0).epsilon(1e-14));
      CHECK(p[k] == q[k]);
      total += q[k];
    }
    CHECK(total == Approx(1.0).epsilon(1e-12));
  }
  // A fold average inside a fold average, and a fold map that is not an
  // object, are refused as bad artifacts.
  nlohmann::json nested = {{"maps", {{{"kind", "fold_average"}, {"parameters", avg.parameters()}}}}};
  CHECK(plumb::test::error_kind([&] { plumb::load_class_map("fold_average", s.classes, s.scale, nested, "x"); }) ==
        plumb::ErrorKind::artifact);
  nlohmann::json empty = {{"maps", nlohmann::json::array()}};
  CHECK(plumb::test::error_kind([&] { plumb::load_class_map("fold_average", s.classes, s.scale, empty, "x"); }) ==
        plumb::ErrorKind::artifact);
  nlohmann::json bad = {{"maps", {1}}};
  CHECK(plumb::test::error_kind([&] { plumb::load_class_map("fold_average", s.classes, s.scale, bad, "x"); }) ==
        plumb::ErrorKind::artifact);
  // Not a kind that fit offers.
  CHECK(plumb::find_class_map_kind("fold_average") == nullptr);
}
