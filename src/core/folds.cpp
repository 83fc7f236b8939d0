#include "plumb/folds.hpp"

#include <algorithm>
#include <cmath>
#include <numeric>

#include "plumb/error.hpp"

namespace plumb {
namespace {

void check_k(std::size_t k, std::size_t available, const char* of_what) {
  if (k < 2 || k > available)
    throw Error(ErrorKind::usage, "cannot make " + std::to_string(k) + " folds from " + std::to_string(available) + " " +
                                      of_what,
                {}, {}, "--folds between 2 and the number of " + std::string(of_what));
}

// Fisher-Yates with splitmix64 draws (modulo bias is below 2^-40 for any
// realistic size and does not affect leakage-safety).
template <class T>
void shuffle(std::vector<T>& v, std::uint64_t& state) {
  for (std::size_t i = v.size(); i > 1; --i) {
    const std::size_t j = static_cast<std::size_t>(splitmix64(state) % i);
    std::swap(v[i - 1], v[j]);
  }
}

}  // namespace

std::string_view to_string(SplitKind kind) noexcept {
  switch (kind) {
    case SplitKind::stratified: return "stratified";
    case SplitKind::group: return "group";
    case SplitKind::time: return "time";
    case SplitKind::given: return "given";
  }
  return "stratified";
}

std::uint64_t splitmix64(std::uint64_t& state) noexcept {
  std::uint64_t z = (state += 0x9E3779B97F4A7C15ULL);
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
  return z ^ (z >> 31);
}

Folds stratified_folds(std::span<const double> label, std::size_t k, std::uint64_t seed) {
  check_k(k, label.size(), "rows");
  std::vector<std::size_t> pos, neg;
  for (std::size_t i = 0; i < label.size(); ++i) (label[i] > 0.5 ? pos : neg).push_back(i);
  std::uint64_t state = seed;
  shuffle(pos, state);
  shuffle(neg, state);
  Folds f;
  f.kind = SplitKind::stratified;
  f.count = k;
  f.fold_of_row.assign(label.size(), 0);
  std::size_t next = 0;
  for (std::size_t i : pos) f.fold_of_row[i] = static_cast<std::uint32_t>(next++ % k);
  for (std::size_t i : neg) f.fold_of_row[i] = static_cast<std::uint32_t>(next++ % k);
  return f;
}

Folds group_folds(std::span<const std::uint32_t> group, std::size_t groups, std::size_t k, std::uint64_t seed) {
  check_k(k, groups, "groups");
  std::vector<std::size_t> size(groups, 0);
  for (std::uint32_t g : group) ++size[g];
  std::vector<std::uint32_t> order(groups);
  std::iota(order.begin(), order.end(), 0U);
  std::uint64_t state = seed;
  shuffle(order, state);
  // Largest first after the shuffle, so equal sizes keep the seeded order.
  std::stable_sort(order.begin(), order.end(), [&](std::uint32_t a, std::uint32_t b) { return size[a] > size[b]; });
  std::vector<std::size_t> load(k, 0);
  std::vector<std::uint32_t> fold_of_group(groups, 0);
  for (std::uint32_t g : order) {
    const auto lightest = static_cast<std::uint32_t>(std::min_element(load.begin(), load.end()) - load.begin());
    fold_of_group[g] = lightest;
    load[lightest] += size[g];
  }
  Folds f;
  f.kind = SplitKind::group;
  f.count = k;
  f.fold_of_row.resize(group.size());
  for (std::size_t i = 0; i < group.size(); ++i) f.fold_of_row[i] = fold_of_group[group[i]];
  return f;
}

Folds time_folds(std::span<const std::uint64_t> time_rank, std::size_t k) {
  std::vector<std::size_t> order(time_rank.size());
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return time_rank[a] < time_rank[b]; });
  std::size_t distinct = 0;
  for (std::size_t r = 0; r < order.size(); ++r)
    distinct += (r == 0 || time_rank[order[r]] != time_rank[order[r - 1]]) ? 1 : 0;
  check_k(k, distinct, "distinct times");
  Folds f;
  f.kind = SplitKind::time;
  f.count = k;
  f.forward_chaining = true;
  f.fold_of_row.assign(time_rank.size(), 0);
  const double n = static_cast<double>(order.size());
  std::size_t r = 0;
  std::uint32_t block = 0;
  while (r < order.size()) {
    // One time at a time: a tie group goes to the block holding its start,
    // and a block never starts before the previous one holds a row.
    std::size_t end = r + 1;
    while (end < order.size() && time_rank[order[end]] == time_rank[order[r]]) ++end;
    const auto target = static_cast<std::uint32_t>(std::min<double>(k - 1, std::floor(static_cast<double>(r) * k / n)));
    block = std::max(block, target);
    for (std::size_t q = r; q < end; ++q) f.fold_of_row[order[q]] = block;
    r = end;
  }
  // Every block must hold rows; heavy ties can leave one empty.
  std::vector<std::size_t> used(k, 0);
  for (std::uint32_t b : f.fold_of_row) ++used[b];
  for (std::size_t b = 0; b < k; ++b)
    if (used[b] == 0)
      throw Error(ErrorKind::usage, "the time column's ties leave time block " + std::to_string(b + 1) + " empty", {}, {},
                  "fewer --folds, or a finer time column");
  return f;
}

Folds given_folds(std::span<const std::uint32_t> fold, std::size_t count) {
  if (count < 2) throw Error(ErrorKind::usage, "the fold column holds fewer than two folds", {}, {}, "at least two folds");
  Folds f;
  f.kind = SplitKind::given;
  f.count = count;
  f.fold_of_row.assign(fold.begin(), fold.end());
  return f;
}

}  // namespace plumb
