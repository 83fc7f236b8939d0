// Fold assignments: disjoint and covering, stratification within one row,
// groups never split, time folds ordered, folds from a column honoured,
// time columns read as numbers or ISO 8601 times, seeded.
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

TEST_CASE("folds: folds read from a column are kept as they are", "[folds]") {
  const std::vector<std::uint32_t> fold{2, 0, 1, 1, 2, 0};
  const plumb::Folds f = plumb::column_folds(fold, 3);
  CHECK(f.fold_of_row == fold);
  CHECK(f.count == 3);
  CHECK_FALSE(f.forward_chaining);
  CHECK(error_kind([&] { plumb::column_folds(std::vector<std::uint32_t>{0, 0}, 1); }) == plumb::ErrorKind::usage);
}

namespace {

// Each distinct value once, row i holding value i; refusals located at
// line 100 + v so that the tests can tell which value was refused.
std::vector<std::uint64_t> ranks_of(const std::vector<std::string>& values) {
  std::vector<std::uint32_t> rows(values.size());
  for (std::uint32_t i = 0; i < rows.size(); ++i) rows[i] = i;
  return plumb::time_ranks(values, rows, [](std::size_t v) {
    plumb::Location loc;
    loc.file = "t.csv";
    loc.line = 100 + v;
    loc.column = 3;
    loc.column_name = "night";
    return loc;
  });
}

// The refusal for a column, or a default Error (kind internal) when none.
plumb::Error refusal(const std::vector<std::string>& values) {
  try {
    ranks_of(values);
  } catch (const plumb::Error& e) {
    return e;
  }
  return plumb::Error(plumb::ErrorKind::internal, "accepted");
}

}  // namespace

TEST_CASE("time columns: numbers are ordered by value, not as text", "[folds][time]") {
  // As text, "10" < "2" < "9"; as numbers 2 < 9 < 10. "1e1" and "10.0" are 10.
  const std::vector<std::string> v{"2", "10", "9", "-1", "1e1", " 10.0", "+3.5", "0.5"};
  const std::vector<std::uint64_t> rank = ranks_of(v);
  // -1 < 0.5 < 2 < 3.5 < 9 < 10 = 1e1 = 10.0
  CHECK(rank == std::vector<std::uint64_t>{2, 5, 4, 0, 5, 5, 3, 1});
}

TEST_CASE("time columns: ISO 8601 dates by calendar, leap days included", "[folds][time]") {
  const std::vector<std::string> v{"2026-11-30", "2024-02-29", "2026-12-01", "2025-12-31", "2026-02-28", "2026-11-30"};
  CHECK(ranks_of(v) == std::vector<std::uint64_t>{3, 0, 4, 1, 2, 3});
}

TEST_CASE("time columns: date-times with offsets compare as instants", "[folds][time]") {
  // Offsets by ISO 8601 / RFC 3339 section 4.2: local time minus offset is UTC.
  const std::vector<std::string> v{
      "2026-11-30T10:00+01:00",        // 09:00Z on the 30th
      "2026-11-30T09:00Z",             // the same instant
      "2026-11-30T23:30-02:00",        // 01:30Z on 1 December
      "2026-12-01T01:00:00Z",          // earlier than the line above
      "2026-12-01T01:30:00.5Z",        // half a second after 01:30Z
      "2026-12-01T01:30:00.50z",       // the same: trailing zeros of a fraction do not count
      "2026-12-01T01:30:00.05Z",       // earlier than .5
      "2026-12-31T23:00-05:00",        // 04:00Z on 1 January 2027
      "2027-01-01T03:59:59.9999999Z",  // just before it
      "2026-11-30 08:59:59.123456789012+00:00",  // a space for the 'T' (RFC 3339), before 09:00Z
  };
  CHECK(ranks_of(v) == std::vector<std::uint64_t>{1, 1, 3, 2, 5, 5, 4, 7, 6, 0});
}

TEST_CASE("time columns: date-times without offset are compared as written", "[folds][time]") {
  const std::vector<std::string> v{"2026-11-30T21:00", "2026-11-30 21:00:00", "2026-11-30T20:59:59.999", "2026-11-29T23:00"};
  CHECK(ranks_of(v) == std::vector<std::uint64_t>{2, 2, 1, 0});
}

TEST_CASE("time columns: mixed or unreadable times are refused, located", "[folds][time]") {
  SECTION("NA among numbers: the leak of reading the column as text") {
    const plumb::Error e = refusal({"1", "2", "NA", "10"});
    CHECK(e.kind() == plumb::ErrorKind::input);
    CHECK(e.where().line == 102);
    CHECK(e.where().column_name == "night");
    CHECK(e.value() == "NA");
    CHECK(e.expected().find("a decimal number") != std::string::npos);
    CHECK(e.expected().find("'1' (line 100)") != std::string::npos);
  }
  SECTION("a date among numbers, a number among dates") {
    const plumb::Error a = refusal({"1", "2026-11-30"});
    CHECK(a.kind() == plumb::ErrorKind::input);
    CHECK(a.where().line == 101);
    CHECK(a.message().find("mixes") != std::string::npos);
    const plumb::Error b = refusal({"2026-11-30", "2026-12-01", "20261202"});
    CHECK(b.where().line == 102);
    CHECK(b.expected().find("YYYY-MM-DD") != std::string::npos);
  }
  SECTION("dates among date-times, and a date-time without offset among ones with") {
    CHECK(refusal({"2026-11-30T10:00Z", "2026-11-30"}).where().line == 101);
    CHECK(refusal({"2026-11-30T10:00Z", "2026-11-30T11:00+01:00", "2026-11-30T10:00"}).where().line == 102);
    CHECK(refusal({"2026-11-30T10:00", "2026-11-30T10:00Z"}).where().line == 101);
  }
  SECTION("values that are no time at all") {
    for (const std::string bad : {"", "NA", "n/a", "nan", "inf", "night 3", "2026-02-30", "2025-02-29", "2026-13-01",
                                  "2026-11-30T24:00Z", "2026-11-30T10:60Z", "2026-11-30T10:00:60Z",
                                  "2026-11-30T10:00+0100", "2026-11-30T10:00+24:00", "2026-11-30T10", "2026-11-30T10:00:0",
                                  "2026-11-30T10:00:00.Z", "2026-11-30T10:00Zx", "30/11/2026", "2026-1-30"}) {
      const plumb::Error e = refusal({bad});
      CAPTURE(bad);
      CHECK(e.kind() == plumb::ErrorKind::input);
      CHECK(e.where().line == 100);
      CHECK(e.value() == bad);
    }
  }
}

TEST_CASE("time columns: folds from a numeric night column follow the nights", "[folds][time]") {
  // Nights 1..12, 30 rows each, written as the CSV reader hands them over.
  std::vector<std::string> values;
  std::vector<std::uint32_t> rows;
  for (int night = 1; night <= 12; ++night) {
    values.push_back(std::to_string(night));
    for (int i = 0; i < 30; ++i) rows.push_back(static_cast<std::uint32_t>(night - 1));
  }
  const plumb::Folds f = plumb::time_folds(plumb::time_ranks(values, rows, [](std::size_t) { return plumb::Location{}; }), 4);
  // 360 rows in 4 blocks of 90: nights 1-3, 4-6, 7-9, 10-12.
  for (std::size_t i = 0; i < rows.size(); ++i) CHECK(f.fold_of_row[i] == rows[i] / 3);
}
