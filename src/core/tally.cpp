#include "plumb/tally.hpp"

#include <algorithm>
#include <cmath>
#include <numeric>
#include <tuple>

#include "plumb/error.hpp"

namespace plumb {

namespace {

// Unweighted rows: every sum is a count, the same in any order, so the
// scores of each class are sorted as plain doubles (no index, no stable
// sort: a third of the time of the general path on 10^7 rows) and merged.
void tally_unweighted(const FitData& data, Tally& out) {
  std::vector<double> positive, negative;
  std::size_t positives = 0;
  for (const double y : data.label) positives += y > 0.5 ? 1 : 0;
  positive.reserve(positives);
  negative.reserve(data.label.size() - positives);
  for (std::size_t i = 0; i < data.score.size(); ++i)
    (data.label[i] > 0.5 ? positive : negative).push_back(data.score[i] + 0.0);  // -0 and +0 are one score
  std::sort(positive.begin(), positive.end());
  std::sort(negative.begin(), negative.end());
  std::size_t i = 0, j = 0;
  while (i < positive.size() || j < negative.size()) {
    const double s = j == negative.size() || (i < positive.size() && positive[i] < negative[j]) ? positive[i]
                                                                                                : negative[j];
    std::uint64_t pos = 0, neg = 0;
    for (; i < positive.size() && positive[i] == s; ++i) ++pos;
    for (; j < negative.size() && negative[j] == s; ++j) ++neg;
    out.score.push_back(s);
    out.count.push_back(pos + neg);
    out.negative.push_back(static_cast<double>(neg));
    out.positive.push_back(static_cast<double>(pos));
  }
}

}  // namespace

void tally_scores(const FitData& data, Tally& out) {
  const std::size_t n = data.score.size();
  out.score.clear();
  out.count.clear();
  out.negative.clear();
  out.positive.clear();
  out.weight_sq.clear();
  if (data.weight.empty()) {
    tally_unweighted(data, out);
    return;
  }
  std::vector<std::size_t> order(n);
  std::iota(order.begin(), order.end(), std::size_t{0});
  // Stable, so rows of one score are summed in input order whoever calls.
  if (!std::is_sorted(data.score.begin(), data.score.end()))
    std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return data.score[a] < data.score[b]; });
  for (std::size_t k = 0; k < n;) {
    // -0 and +0 are one score; keeping +0 makes the result independent of
    // which came first.
    const double s = data.score[order[k]] + 0.0;
    double positive = 0.0, negative = 0.0, squares = 0.0;
    std::uint64_t count = 0;
    for (; k < n && data.score[order[k]] == s; ++k) {
      const std::size_t i = order[k];
      const double w = data.weight.empty() ? 1.0 : data.weight[i];
      if (!(w > 0.0)) continue;
      (data.label[i] > 0.5 ? positive : negative) += w;
      squares += w * w;
      ++count;
    }
    if (count == 0) continue;
    out.score.push_back(s);
    out.count.push_back(count);
    out.negative.push_back(negative);
    out.positive.push_back(positive);
    out.weight_sq.push_back(squares);
  }
}

UnweightedTallyBuilder::Run UnweightedTallyBuilder::merge(const Run& a, const Run& b) {
  Run m;
  const std::size_t na = a.score.size(), nb = b.score.size();
  m.score.reserve(na + nb);
  m.negative.reserve(na + nb);
  m.positive.reserve(na + nb);
  std::size_t i = 0, j = 0;
  while (i < na || j < nb) {
    if (j == nb || (i < na && a.score[i] < b.score[j])) {
      m.score.push_back(a.score[i]);
      m.negative.push_back(a.negative[i]);
      m.positive.push_back(a.positive[i]);
      ++i;
    } else if (i == na || b.score[j] < a.score[i]) {
      m.score.push_back(b.score[j]);
      m.negative.push_back(b.negative[j]);
      m.positive.push_back(b.positive[j]);
      ++j;
    } else {
      m.score.push_back(a.score[i]);
      m.negative.push_back(a.negative[i] + b.negative[j]);
      m.positive.push_back(a.positive[i] + b.positive[j]);
      ++i;
      ++j;
    }
  }
  return m;
}

void UnweightedTallyBuilder::carry(Run run) {
  std::size_t k = 0;
  for (; k < levels_.size() && !levels_[k].score.empty(); ++k) {
    run = merge(levels_[k], run);
    levels_[k] = Run{};
  }
  if (k == levels_.size()) levels_.emplace_back();
  levels_[k] = std::move(run);
}

void UnweightedTallyBuilder::add(std::span<const double> score, std::span<const double> label) {
  if (score.empty()) return;
  Tally t;
  tally_unweighted(FitData{score, label, {}, Scale::probability}, t);
  Run run;
  run.score = std::move(t.score);
  run.negative.reserve(run.score.size());
  run.positive.reserve(run.score.size());
  for (std::size_t i = 0; i < run.score.size(); ++i) {
    run.negative.push_back(static_cast<std::uint64_t>(t.negative[i]));
    run.positive.push_back(static_cast<std::uint64_t>(t.positive[i]));
  }
  carry(std::move(run));
}

void UnweightedTallyBuilder::finish(Tally& out) {
  Run all;
  for (Run& r : levels_)
    if (!r.score.empty()) all = all.score.empty() ? std::move(r) : merge(r, all);
  levels_.clear();
  out.score = std::move(all.score);
  out.count.resize(out.score.size());
  out.negative.resize(out.score.size());
  out.positive.resize(out.score.size());
  for (std::size_t i = 0; i < out.score.size(); ++i) {
    out.count[i] = all.negative[i] + all.positive[i];
    out.negative[i] = static_cast<double>(all.negative[i]);
    out.positive[i] = static_cast<double>(all.positive[i]);
  }
}

double round_to_logit_grid(double score, Scale scale, double step) noexcept {
  if (scale == Scale::logit) {
    // Beyond about 1e300 log-odds the quotient overflows; such a score is
    // kept (its probability is 0 or 1 to double precision anyway).
    const double q = score / step;
    return std::isfinite(q) ? step * std::nearbyint(q) : score;
  }
  if (!(score > 0.0 && score < 1.0)) return score;
  // log(p) - log1p(-p) keeps full relative accuracy at both ends: 1 - p is
  // exact for p >= 1/2 and log(p) is exact in relative terms near 0.
  const double z = std::log(score) - std::log1p(-score);
  return sigmoid(step * std::nearbyint(z / step));
}

namespace {

std::string describe_grid(const std::optional<double>& step) {
  if (!step) return "exact scores";
  char text[64];
  std::snprintf(text, sizeof text, "a logit grid of step %.17g", *step);
  return text;
}

}  // namespace

std::string merge_conflict(const Tally& a, const Tally& b) {
  auto quoted = [](const std::string& s) { return s.empty() ? std::string("none") : "'" + s + "'"; };
  if (a.score_column != b.score_column)
    return "score column " + quoted(a.score_column) + " against " + quoted(b.score_column);
  if (a.scale != b.scale)
    return "scale " + std::string(to_string(a.scale)) + " against " + std::string(to_string(b.scale));
  if (a.label_column != b.label_column)
    return "label column " + quoted(a.label_column) + " against " + quoted(b.label_column);
  if (a.positive_rule != b.positive_rule) return "label rule " + a.positive_rule + " against " + b.positive_rule;
  if (a.weight_column != b.weight_column)
    return "weight column " + quoted(a.weight_column) + " against " + quoted(b.weight_column);
  if (a.grid_step != b.grid_step) return describe_grid(a.grid_step) + " against " + describe_grid(b.grid_step);
  return {};
}

Tally merge_tallies(const Tally& a, const Tally& b) {
  if (const std::string conflict = merge_conflict(a, b); !conflict.empty())
    throw Error(ErrorKind::usage, "the tallies cannot be merged: they differ in " + conflict, {}, {},
                "tallies of the same column, scale, label rule, weight column and grid");
  Tally m;
  m.score_column = a.score_column;
  m.scale = a.scale;
  m.label_column = a.label_column;
  m.positive_rule = a.positive_rule;
  m.weight_column = a.weight_column;
  m.grid_step = a.grid_step;
  m.rows = a.rows + b.rows;
  // A tally without the count left out no rows, or did not say: the sum of those that say.
  if (a.rows_skipped || b.rows_skipped) m.rows_skipped = a.rows_skipped.value_or(0) + b.rows_skipped.value_or(0);
  m.weight_total = a.weight_total + b.weight_total;
  m.positives = a.positives + b.positives;
  m.unit_weights = a.unit_weights && b.unit_weights;
  // A tally of no rows (an empty shard) has no score range of its own.
  if (a.rows == 0) {
    m.score_min = b.score_min;
    m.score_max = b.score_max;
  } else if (b.rows == 0) {
    m.score_min = a.score_min;
    m.score_max = a.score_max;
  } else {
    m.score_min = std::min(a.score_min, b.score_min);
    m.score_max = std::max(a.score_max, b.score_max);
  }
  m.sources = a.sources;
  m.sources.insert(m.sources.end(), b.sources.begin(), b.sources.end());
  // In a fixed order, so that the order of merging leaves no trace.
  std::stable_sort(m.sources.begin(), m.sources.end(), [](const TallySource& x, const TallySource& y) {
    return std::tie(x.file, x.sha256, x.rows) < std::tie(y.file, y.sha256, y.rows);
  });
  const std::size_t na = a.score.size(), nb = b.score.size();
  m.score.reserve(na + nb);
  m.count.reserve(na + nb);
  m.negative.reserve(na + nb);
  m.positive.reserve(na + nb);
  std::size_t i = 0, j = 0;
  // Squared weights survive a merge only when both sides kept them.
  const bool squares = !a.weight_column.empty() && a.weight_sq.size() == na && b.weight_sq.size() == nb;
  auto take = [&m, squares](const Tally& t, std::size_t k) {
    if (squares) m.weight_sq.push_back(t.weight_sq[k]);
    m.score.push_back(t.score[k]);
    m.count.push_back(t.count[k]);
    m.negative.push_back(t.negative[k]);
    m.positive.push_back(t.positive[k]);
  };
  while (i < na || j < nb) {
    if (j == nb || (i < na && a.score[i] < b.score[j])) {
      take(a, i++);
    } else if (i == na || b.score[j] < a.score[i]) {
      take(b, j++);
    } else {
      m.score.push_back(a.score[i]);
      m.count.push_back(a.count[i] + b.count[j]);
      m.negative.push_back(a.negative[i] + b.negative[j]);
      m.positive.push_back(a.positive[i] + b.positive[j]);
      if (squares) m.weight_sq.push_back(a.weight_sq[i] + b.weight_sq[j]);
      ++i;
      ++j;
    }
  }
  return m;
}

ScoreTally to_score_tally(const Tally& t) {
  ScoreTally out;
  // At most two entries per score: room for them at once, so that no column
  // is copied as it grows.
  std::size_t entries = 0;
  for (std::size_t i = 0; i < t.score.size(); ++i)
    entries += (t.negative[i] > 0.0 ? 1 : 0) + (t.positive[i] > 0.0 ? 1 : 0);
  out.score.reserve(entries);
  out.label.reserve(entries);
  out.weight.reserve(entries);
  for (std::size_t i = 0; i < t.score.size(); ++i) {
    if (t.negative[i] > 0.0) {
      out.score.push_back(t.score[i]);
      out.label.push_back(0.0);
      out.weight.push_back(t.negative[i]);
    }
    if (t.positive[i] > 0.0) {
      out.score.push_back(t.score[i]);
      out.label.push_back(1.0);
      out.weight.push_back(t.positive[i]);
    }
  }
  return out;
}

}  // namespace plumb
