// Fold assignments: disjoint and covering, stratification within one row,
// groups never split, time folds ordered, given folds honoured, seeded.
#include <catch2/catch.hpp>
#include <algorithm>
#include <map>
#include <random>
#include <set>
#include <vector>

#include "plumb/error.hpp"
#include "plumb/folds.hpp"
#include "support/test_helpers.hpp"

using plumb::test::below;
using plumb::test::error_kind;
using plumb::test::uniform01;

namespace {

std::vector<double> labels(std::size_t n, double rate, std::uint64_t seed) {
  std::mt19937_64 g(seed);
  std::vector<double> y(n);
  for (double& v : y) v = uniform01(g) < rate ? 1.0 : 0.0;
  return y;
}

}  // namespace

TEST_CASE("folds: stratified folds cover every row once and hold positives within one", "[folds]") {
  for (std::size_t n : {10u, 97u, 1000u, 5003u})
    for (std::size_t k : {2u, 5u, 10u}) {
      if (k > n) continue;
      const auto y = labels(n, 0.13, n * 31 + k);
      const plumb::Folds f = plumb::stratified_folds(y, k, 7);
      REQUIRE(f.fold_of_row.size() == n);  // covering: one fold per row, so also disjoint
      std::vector<std::size_t> rows(k, 0), pos(k, 0);
      for (std::size_t i = 0; i < n; ++i) {
        REQUIRE(f.fold_of_row[i] < k);
        ++rows[f.fold_of_row[i]];
        pos[f.fold_of_row[i]] += y[i] > 0.5;
      }
      CHECK(*std::max_element(pos.begin(), pos.end()) - *std::min_element(pos.begin(), pos.end()) <= 1);
      CHECK(*std::max_element(rows.begin(), rows.end()) - *std::min_element(rows.begin(), rows.end()) <= 1);
      for (std::size_t i = 0; i < n; ++i)
        for (std::size_t j = 0; j < k; ++j) CHECK(f.trains(i, j) == (f.fold_of_row[i] != j));
    }
}

TEST_CASE("folds: the same seed gives the same folds, another seed others", "[folds]") {
  const auto y = labels(500, 0.3, 1);
  CHECK(plumb::stratified_folds(y, 5, 11).fold_of_row == plumb::stratified_folds(y, 5, 11).fold_of_row);
  CHECK(plumb::stratified_folds(y, 5, 11).fold_of_row != plumb::stratified_folds(y, 5, 12).fold_of_row);
}

TEST_CASE("folds: groups are never split and folds are balanced by rows", "[folds]") {
  std::mt19937_64 g(3);
  const std::size_t groups = 300;
  std::vector<std::uint32_t> group;
  for (std::size_t i = 0; i < 6000; ++i) group.push_back(static_cast<std::uint32_t>(below(g, groups)));
  const plumb::Folds f = plumb::group_folds(group, groups, 5, 9);
  std::map<std::uint32_t, std::set<std::uint32_t>> folds_of_group;
  std::vector<std::size_t> rows(5, 0);
  for (std::size_t i = 0; i < group.size(); ++i) {
    folds_of_group[group[i]].insert(f.fold_of_row[i]);
    ++rows[f.fold_of_row[i]];
  }
  for (const auto& [grp, fs] : folds_of_group) CHECK(fs.size() == 1);
  // Greedy largest-first keeps every fold within one group's size of the mean.
  const double mean = 6000.0 / 5;
  for (std::size_t r : rows) CHECK(std::abs(static_cast<double>(r) - mean) < 60);
  CHECK(error_kind([&] { plumb::group_folds(group, groups, 301, 1); }) == plumb::ErrorKind::usage);
}

TEST_CASE("folds: time folds are ordered, ties stay together, the first block is not scored", "[folds]") {
  std::mt19937_64 g(5);
  std::vector<std::uint64_t> t;
  for (std::size_t i = 0; i < 2000; ++i) t.push_back(below(g, 60));  // 60 distinct times, many ties
  const plumb::Folds f = plumb::time_folds(t, 4);
  CHECK(f.forward_chaining);
  for (std::size_t i = 0; i < t.size(); ++i)
    for (std::size_t j = 0; j < t.size(); j += 97) {
      if (t[i] < t[j]) CHECK(f.fold_of_row[i] <= f.fold_of_row[j]);
      if (t[i] == t[j]) CHECK(f.fold_of_row[i] == f.fold_of_row[j]);
    }
  for (std::size_t i = 0; i < t.size(); ++i) {
    CHECK(f.scored(i) == (f.fold_of_row[i] > 0));
    // Fold j is fitted only on strictly earlier blocks, hence on earlier times.
    for (std::size_t j = 0; j < 4; ++j) CHECK(f.trains(i, j) == (f.fold_of_row[i] < j));
  }
  std::vector<std::size_t> rows(4, 0);
  for (auto b : f.fold_of_row) ++rows[b];
  for (std::size_t r : rows) CHECK(r > 300);
  const std::vector<std::uint64_t> two_times{0, 0, 1, 1};
  CHECK(error_kind([&] { plumb::time_folds(two_times, 3); }) == plumb::ErrorKind::usage);
}

TEST_CASE("folds: given folds are kept as they are", "[folds]") {
  const std::vector<std::uint32_t> given{2, 0, 1, 1, 2, 0};
  const plumb::Folds f = plumb::given_folds(given, 3);
  CHECK(f.fold_of_row == given);
  CHECK(f.count == 3);
  CHECK_FALSE(f.forward_chaining);
  CHECK(error_kind([&] { plumb::given_folds(std::vector<std::uint32_t>{0, 0}, 1); }) == plumb::ErrorKind::usage);
}
