#pragma once
// Fold assignments for cross-fitting: which rows each fold's map is fitted
// on and which rows it scores, so that no row is scored by a map that saw it.
#include <cstddef>
#include <cstdint>
#include <span>
#include <string>
#include <vector>

namespace plumb {

enum class SplitKind { stratified, group, time, given };
std::string_view to_string(SplitKind kind) noexcept;

struct Folds {
  SplitKind kind = SplitKind::stratified;
  std::size_t count = 0;                // K
  std::vector<std::uint32_t> fold_of_row;  // each < count
  // For time splits: fold j's map is fitted only on rows of folds < j, and
  // fold 0 is never scored. For the other kinds: fitted on every other fold.
  bool forward_chaining = false;

  // Whether row i is scored by some fold's map.
  bool scored(std::size_t i) const noexcept { return !forward_chaining || fold_of_row[i] > 0; }
  // Whether row i is in the training rows of fold j.
  bool trains(std::size_t i, std::size_t j) const noexcept {
    return forward_chaining ? fold_of_row[i] < j : fold_of_row[i] != j;
  }
};

// Stratified by label: positives and negatives are each shuffled (seeded)
// and dealt round-robin, the negatives continuing where the positives
// stopped, so every fold's count of positives (and of rows) is within one
// of every other fold's. Requires k >= 2 and k <= rows. Throws
// plumb::Error(usage) otherwise.
Folds stratified_folds(std::span<const double> label, std::size_t k, std::uint64_t seed);

// Grouped: rows of one group (group[i], an index < groups) are never split.
// Groups are shuffled (seeded), then taken largest first (by rows) and each
// given to the fold with the fewest rows so far, which balances folds by
// rows. Requires 2 <= k <= groups.
Folds group_folds(std::span<const std::uint32_t> group, std::size_t groups, std::size_t k, std::uint64_t seed);

// Forward chaining by time: `order` ranks the rows' times (equal ranks are
// equal times). Rows are cut into k blocks of about equal size in time order,
// a time never straddling two blocks; fold j is fitted on blocks 0..j-1 and
// block 0 is never scored. Requires 2 <= k <= distinct times.
Folds time_folds(std::span<const std::uint64_t> time_rank, std::size_t k);

// Given: fold[i] < count, as produced elsewhere (a model's own
// cross-validation). Every fold must hold a row.
Folds given_folds(std::span<const std::uint32_t> fold, std::size_t count);

// The generator every seeded split uses: splitmix64 (Steele, Lea and Flood
// 2014), so assignments depend only on (rows, seed), not the standard library.
std::uint64_t splitmix64(std::uint64_t& state) noexcept;

}  // namespace plumb
