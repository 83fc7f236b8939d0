#include "plumb/folds.hpp"

#include <algorithm>
#include <cctype>
#include <charconv>
#include <cmath>
#include <limits>
#include <numeric>
#include <optional>

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

// The forms a time column may take; one per column.
enum class TimeForm { number, date, local_date_time, zoned_date_time };

std::string form_name(TimeForm form) {
  switch (form) {
    case TimeForm::number: return "a number";
    case TimeForm::date: return "a date";
    case TimeForm::local_date_time: return "a date-time without an offset";
    case TimeForm::zoned_date_time: return "a date-time with an offset";
  }
  return "a number";
}

std::string form_example(TimeForm form) {
  switch (form) {
    case TimeForm::number: return "a decimal number";
    case TimeForm::date: return "a date as YYYY-MM-DD";
    case TimeForm::local_date_time: return "a date-time as YYYY-MM-DDThh:mm[:ss[.fff]] without an offset";
    case TimeForm::zoned_date_time: return "a date-time as YYYY-MM-DDThh:mm[:ss[.fff]] with Z or +hh:mm";
  }
  return "a decimal number";
}

struct TimeValue {
  TimeForm form = TimeForm::number;
  double number = 0.0;         // numbers
  std::int64_t seconds = 0;    // the rest: seconds since 1970-01-01T00:00 (UTC when zoned); dates at midnight
  std::string fraction;        // digits of the second's fraction, trailing zeros dropped
};

bool digits(std::string_view t, std::size_t at, std::size_t n, int& out) {
  if (at + n > t.size()) return false;
  out = 0;
  for (std::size_t i = at; i < at + n; ++i) {
    if (t[i] < '0' || t[i] > '9') return false;
    out = out * 10 + (t[i] - '0');
  }
  return true;
}

// Days from 1970-01-01 to a proleptic Gregorian date (Hinnant's
// days_from_civil, "chrono-Compatible Low-Level Date Algorithms", 2013).
std::int64_t days_from_civil(std::int64_t y, int m, int d) {
  y -= m <= 2 ? 1 : 0;
  const std::int64_t era = (y >= 0 ? y : y - 399) / 400;
  const std::int64_t yoe = y - era * 400;
  const std::int64_t doy = (153 * (m + (m > 2 ? -3 : 9)) + 2) / 5 + d - 1;
  const std::int64_t doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
  return era * 146097 + doe - 719468;
}

int days_in_month(int y, int m) {
  static constexpr int days[] = {31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31};
  const bool leap = (y % 4 == 0 && y % 100 != 0) || y % 400 == 0;
  return m == 2 && leap ? 29 : days[m - 1];
}

// Reads one time cell. On failure returns why, in a few words.
std::optional<std::string> read_time(std::string_view text, TimeValue& out) {
  while (!text.empty() && (text.front() == ' ' || text.front() == '\t')) text.remove_prefix(1);
  while (!text.empty() && (text.back() == ' ' || text.back() == '\t')) text.remove_suffix(1);
  if (text.empty()) return "the time is empty";
  int year = 0, month = 0, day = 0;
  if (text.size() >= 10 && digits(text, 0, 4, year) && text[4] == '-' && digits(text, 5, 2, month) &&
      text[7] == '-' && digits(text, 8, 2, day)) {
    if (month < 1 || month > 12 || day < 1 || day > days_in_month(year, month)) return "the date does not exist";
    const std::int64_t days = days_from_civil(year, month, day);
    out.seconds = days * 86400;
    out.fraction.clear();
    if (text.size() == 10) {
      out.form = TimeForm::date;
      return std::nullopt;
    }
    const char* not_iso = "the time is not an ISO 8601 date or date-time";
    int hour = 0, minute = 0, second = 0;
    if (!(text[10] == 'T' || text[10] == 't' || text[10] == ' ') || !digits(text, 11, 2, hour) ||
        text.size() < 16 || text[13] != ':' || !digits(text, 14, 2, minute))
      return not_iso;
    std::size_t at = 16;
    if (at < text.size() && text[at] == ':') {
      if (!digits(text, at + 1, 2, second)) return not_iso;
      at += 3;
      if (at < text.size() && text[at] == '.') {
        const std::size_t first = ++at;
        while (at < text.size() && text[at] >= '0' && text[at] <= '9') ++at;
        if (at == first) return not_iso;
        out.fraction.assign(text.substr(first, at - first));
        while (!out.fraction.empty() && out.fraction.back() == '0') out.fraction.pop_back();
      }
    }
    if (hour > 23 || minute > 59 || second > 59) return "the time of day is out of range";
    out.seconds += hour * 3600 + minute * 60 + second;
    out.form = TimeForm::local_date_time;
    if (at == text.size()) return std::nullopt;
    if ((text[at] == 'Z' || text[at] == 'z') && at + 1 == text.size()) {
      out.form = TimeForm::zoned_date_time;
      return std::nullopt;
    }
    int off_hour = 0, off_minute = 0;
    if (!(text[at] == '+' || text[at] == '-') || at + 6 != text.size() || !digits(text, at + 1, 2, off_hour) ||
        text[at + 3] != ':' || !digits(text, at + 4, 2, off_minute))
      return not_iso;
    if (off_hour > 23 || off_minute > 59) return "the offset is out of range";
    // 10:00+01:00 is 09:00 in UTC.
    const std::int64_t offset = off_hour * 3600 + off_minute * 60;
    out.seconds += text[at] == '+' ? -offset : offset;
    out.form = TimeForm::zoned_date_time;
    return std::nullopt;
  }
  // A decimal number, read as scores are: an optional sign, no nan or inf.
  std::string_view t = text;
  if (t.front() == '+') {
    t.remove_prefix(1);
    if (!t.empty() && t.front() == '-') t = {};
  }
  const char c0 = !t.empty() && t.front() == '-' && t.size() > 1 ? t[1] : (t.empty() ? 'x' : t.front());
  double v = 0.0;
  if (std::isdigit(static_cast<unsigned char>(c0)) || c0 == '.') {
    const auto [ptr, ec] = std::from_chars(t.data(), t.data() + t.size(), v, std::chars_format::general);
    if (ec == std::errc() && ptr == t.data() + t.size() && std::isfinite(v)) {
      out.form = TimeForm::number;
      out.number = v;
      return std::nullopt;
    }
  }
  return "the time is neither a number nor an ISO 8601 date or date-time";
}

bool earlier(const TimeValue& a, const TimeValue& b) {
  if (a.form == TimeForm::number) return a.number < b.number;
  if (a.seconds != b.seconds) return a.seconds < b.seconds;
  // Digit strings without trailing zeros compare as the fractions they spell.
  return a.fraction < b.fraction;
}

bool same_time(const TimeValue& a, const TimeValue& b) { return !earlier(a, b) && !earlier(b, a); }

}  // namespace

std::vector<std::uint64_t> time_ranks(std::span<const std::string> values, std::span<const std::uint32_t> value_of_row,
                                      const TimeLocator& where) {
  std::vector<TimeValue> times(values.size());
  for (std::size_t v = 0; v < values.size(); ++v) {
    const std::optional<std::string> problem = read_time(values[v], times[v]);
    const bool mixed = !problem && v > 0 && times[v].form != times[0].form;
    if (!problem && !mixed) continue;
    std::string expected;
    if (v == 0) {
      expected = "a decimal number, or an ISO 8601 date (2026-11-30) or date-time (2026-11-30T21:00:00Z)";
    } else {
      expected = form_example(times[0].form) + ", as the column's first time '" + values[0] + "' (line " +
                 std::to_string(where(0).line) + ") is";
    }
    const std::string message =
        mixed ? "the time column mixes forms: this time is " + form_name(times[v].form) + ", the first is " +
                    form_name(times[0].form)
              : *problem;
    throw Error(ErrorKind::input, message, where(v), values[v], expected);
  }
  std::vector<std::size_t> order(values.size());
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return earlier(times[a], times[b]); });
  std::vector<std::uint64_t> rank(values.size(), 0);
  for (std::size_t r = 1; r < order.size(); ++r)
    rank[order[r]] = rank[order[r - 1]] + (same_time(times[order[r]], times[order[r - 1]]) ? 0 : 1);
  std::vector<std::uint64_t> out(value_of_row.size());
  for (std::size_t i = 0; i < out.size(); ++i) out[i] = rank[value_of_row[i]];
  return out;
}

std::string_view to_string(SplitKind kind) noexcept {
  switch (kind) {
    case SplitKind::stratified: return "stratified";
    case SplitKind::group: return "group";
    case SplitKind::time: return "time";
    case SplitKind::column: return "column";
  }
  return "stratified";
}

std::uint64_t splitmix64(std::uint64_t& state) noexcept {
  std::uint64_t z = (state += 0x9E3779B97F4A7C15ULL);
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
  return z ^ (z >> 31);
}

namespace {

// stratified_folds with row numbers of type Index: 32 bits where they
// suffice, half the memory the shuffles walk at random. The shuffles draw
// the same numbers whatever the type, so the folds are the same.
template <class Index>
Folds stratified_folds_as(std::span<const double> label, std::size_t k, std::uint64_t seed) {
  std::size_t positives = 0;
  for (double y : label) positives += y > 0.5 ? 1 : 0;
  std::vector<Index> pos, neg;
  pos.reserve(positives);
  neg.reserve(label.size() - positives);
  for (std::size_t i = 0; i < label.size(); ++i) (label[i] > 0.5 ? pos : neg).push_back(static_cast<Index>(i));
  std::uint64_t state = seed;
  shuffle(pos, state);
  shuffle(neg, state);
  Folds f;
  f.kind = SplitKind::stratified;
  f.count = k;
  f.fold_of_row.assign(label.size(), 0);
  std::size_t next = 0;
  for (Index i : pos) f.fold_of_row[i] = static_cast<std::uint32_t>(next++ % k);
  for (Index i : neg) f.fold_of_row[i] = static_cast<std::uint32_t>(next++ % k);
  return f;
}

}  // namespace

Folds stratified_folds(std::span<const double> label, std::size_t k, std::uint64_t seed) {
  check_k(k, label.size(), "rows");
  if (label.size() <= std::numeric_limits<std::uint32_t>::max())
    return stratified_folds_as<std::uint32_t>(label, k, seed);
  return stratified_folds_as<std::size_t>(label, k, seed);
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

Folds column_folds(std::span<const std::uint32_t> fold, std::size_t count) {
  if (count < 2) throw Error(ErrorKind::usage, "the fold column holds fewer than two folds", {}, {}, "at least two folds");
  Folds f;
  f.kind = SplitKind::column;
  f.count = count;
  f.fold_of_row.assign(fold.begin(), fold.end());
  return f;
}

}  // namespace plumb
