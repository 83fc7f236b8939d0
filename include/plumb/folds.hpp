#pragma once
// Fold assignments for cross-fitting: which rows each fold's map is fitted
// on and which rows it scores, so that no row is scored by a map that saw it.
#include <cstddef>
#include <cstdint>
#include <functional>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "plumb/error.hpp"

namespace plumb {

// `column`: folds read from a column of the input. Artifacts written before
// this name was chosen record the split as "given"; readers take both.
enum class SplitKind { stratified, group, time, column };
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

// From a column: fold[i] < count, as produced elsewhere (a model's own
// cross-validation). Every fold must hold a row.
Folds column_folds(std::span<const std::uint32_t> fold, std::size_t count);

// Where the first row holding time value v was read, for refusals.
using TimeLocator = std::function<Location(std::size_t value)>;

// The time rank of each row, for time_folds: row i holds the time
// values[value_of_row[i]] (each index < values.size(); `values` are the
// column's distinct texts in order of first appearance). Equal times get
// equal ranks and an earlier time a lower rank.
// A time column holds one form of time throughout, fixed by its first value:
//   - decimal numbers (a night number, a Unix time, 20261130): by value;
//     surrounding blanks and a leading '+' are allowed, as for scores;
//   - ISO 8601 calendar dates, YYYY-MM-DD;
//   - ISO 8601 date-times without an offset, YYYY-MM-DDThh:mm[:ss[.fff...]]
//     ('T' or one space between date and time), compared as written;
//   - the same with an offset, 'Z' or +hh:mm / -hh:mm, compared as instants
//     (2026-11-30T10:00+01:00 equals 2026-11-30T09:00Z); fractions of a
//     second are compared exactly, whatever their number of digits.
// Anything else (empty, NA, text, an impossible date such as 2026-02-30, a
// second of 60) and any value of another form than the first's (a date among
// numbers, a date among date-times, a date-time without an offset among ones
// with an offset) throws plumb::Error(input) located by `where(v)` for the
// first such value, with the value and what was expected (the form of the
// first value, which is located by `where(0)`).
std::vector<std::uint64_t> time_ranks(std::span<const std::string> values, std::span<const std::uint32_t> value_of_row,
                                      const TimeLocator& where);

// The generator every seeded split uses: splitmix64 (Steele, Lea and Flood
// 2014), so assignments depend only on (rows, seed), not the standard library.
std::uint64_t splitmix64(std::uint64_t& state) noexcept;

}  // namespace plumb
