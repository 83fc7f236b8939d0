// fit counts unweighted rows by score block by block, on a second thread,
// while the reader parses (UnweightedTallyBuilder, read_labelled's rows
// sink). These tests hold both to the definitions they replace: the sums are
// tally_scores' on all the rows, whatever the blocks, and a read with a sink
// reports the totals, range and hash of a read without one.
#include <catch2/catch.hpp>
#include <algorithm>
#include <bit>
#include <cstdint>
#include <cstdio>
#include <fstream>
#include <random>
#include <span>
#include <string>
#include <vector>

#include "plumb/io/labelled_input.hpp"
#include "plumb/tally.hpp"
#include "support/test_helpers.hpp"

using plumb::test::below;
using plumb::test::uniform01;

namespace {

bool same_sums(const plumb::Tally& a, const plumb::Tally& b) {
  if (a.score.size() != b.score.size()) return false;
  for (std::size_t i = 0; i < a.score.size(); ++i)
    if (std::bit_cast<std::uint64_t>(a.score[i]) != std::bit_cast<std::uint64_t>(b.score[i]) ||
        a.count[i] != b.count[i] || a.negative[i] != b.negative[i] || a.positive[i] != b.positive[i])
      return false;
  return true;
}

}  // namespace

TEST_CASE("tally builder: block by block gives tally_scores' sums on all the rows", "[tally]") {
  std::mt19937_64 g(5);
  std::vector<double> score, label;
  for (std::size_t i = 0; i < 20000; ++i) {
    // A coarse grid (ties across blocks), negative scores (a logit column)
    // and both zeros, which must count as one score.
    double s = static_cast<double>(below(g, 700)) / 100.0 - 3.0;
    if (i % 101 == 0) s = i % 2 ? 0.0 : -0.0;
    score.push_back(s);
    label.push_back(uniform01(g) < 0.3 ? 1.0 : 0.0);
  }
  plumb::Tally want;
  plumb::tally_scores(plumb::FitData{score, label, {}, plumb::Scale::logit}, want);
  REQUIRE(want.score.size() > 500);
  for (const std::size_t block : {1u, 7u, 1000u, 4096u, 20000u, 50000u}) {
    INFO("block " << block);
    plumb::UnweightedTallyBuilder builder;
    for (std::size_t at = 0; at < score.size(); at += block) {
      const std::size_t len = std::min(block, score.size() - at);
      builder.add(std::span<const double>(score).subspan(at, len), std::span<const double>(label).subspan(at, len));
    }
    plumb::Tally got;
    builder.finish(got);
    CHECK(same_sums(got, want));
    CHECK(std::bit_cast<std::uint64_t>(got.score[std::lower_bound(got.score.begin(), got.score.end(), 0.0) -
                                                  got.score.begin()]) == 0);  // +0 kept, as tally_scores keeps it
  }
  plumb::UnweightedTallyBuilder none;
  plumb::Tally empty;
  none.finish(empty);
  CHECK(empty.score.empty());
}

TEST_CASE("read_labelled: with a rows sink, the same rows in blocks and the same totals", "[tally]") {
  const std::string path = "test_tally_builder_rows.csv";
  std::vector<double> score;
  {
    std::ofstream f(path);
    f << "id,score,label\n";
    std::mt19937_64 g(8);
    for (std::size_t i = 0; i < 150000; ++i) {  // more than two blocks of 65536
      const double s = static_cast<double>(below(g, 1000000)) / 1000000.0;
      char text[32];
      std::snprintf(text, sizeof text, "%.6f", s);
      f << i << ',' << text << ',' << (uniform01(g) < 0.4 ? 1 : 0) << '\n';
    }
  }
  plumb::io::LabelledColumns columns;
  columns.scores.push_back({"score", plumb::Scale::probability});
  columns.label = "label";
  const plumb::io::LabelledRows plain = plumb::io::read_labelled(path, columns, plumb::io::LabelRule{});
  std::vector<double> seen_score, seen_label;
  std::size_t blocks = 0, largest = 0;
  const plumb::io::LabelledRows sunk = plumb::io::read_labelled(
      path, columns, plumb::io::LabelRule{}, 0, {}, [&](std::span<const double> s, std::span<const double> l) {
        ++blocks;
        largest = std::max(largest, s.size());
        seen_score.insert(seen_score.end(), s.begin(), s.end());
        seen_label.insert(seen_label.end(), l.begin(), l.end());
      });
  std::remove(path.c_str());
  CHECK(blocks == 3);
  CHECK(largest == 65536);
  CHECK(seen_score == plain.scores[0]);
  CHECK(seen_label == plain.label);
  CHECK(sunk.scores.size() == 1);
  CHECK(sunk.scores[0].empty());
  CHECK(sunk.label.empty());
  CHECK(sunk.rows == plain.rows);
  CHECK(sunk.positives == plain.positives);
  CHECK(sunk.weight_total == plain.weight_total);
  CHECK(sunk.score_min == plain.score_min);
  CHECK(sunk.score_max == plain.score_max);
  CHECK(sunk.source_sha256 == plain.source_sha256);
  CHECK(sunk.score_columns == plain.score_columns);
  CHECK(sunk.label_column == plain.label_column);
}
