#include "plumb/cross_fit.hpp"

#include <algorithm>
#include <cmath>
#include <exception>
#include <limits>
#include <numeric>

#include "plumb/calibration_error.hpp"
#include "plumb/corp.hpp"
#include "plumb/error.hpp"
#include "plumb/map_registry.hpp"
#include "plumb/scores.hpp"
#include "plumb/tally.hpp"

namespace plumb {
namespace {

double weight_at(const FitData& d, std::size_t i) { return d.weight.empty() ? 1.0 : d.weight[i]; }

// Figures of a forecast (one per row) on the scored rows, visited in row
// order, so every sum is added in the order of a plain pass over them. When
// every row is scored the columns are read in place, else the scored rows
// are gathered first.
OutOfFoldFigures figures(std::span<const double> forecast, const FitData& d, const Folds& folds,
                         std::size_t scored_rows) {
  const std::size_t n = d.score.size();
  std::vector<double> gathered_f, gathered_y, gathered_w;
  std::span<const double> f = forecast, y = d.label, w = d.weight;
  if (scored_rows != n) {
    gathered_f.reserve(scored_rows);
    gathered_y.reserve(scored_rows);
    if (!d.weight.empty()) gathered_w.reserve(scored_rows);
    for (std::size_t i = 0; i < n; ++i) {
      if (!folds.scored(i)) continue;
      gathered_f.push_back(forecast[i]);
      gathered_y.push_back(d.label[i]);
      if (!d.weight.empty()) gathered_w.push_back(d.weight[i]);
    }
    f = gathered_f;
    y = gathered_y;
    w = gathered_w;
  }
  OutOfFoldFigures out;
  out.log_loss = log_loss(f, y, w);
  out.brier = brier_score(f, y, w);
  out.ece = calibration_error(f, y, w, BinningKind::equal_width, 10).ece;
  out.mcb = corp_decomposition(f, y, w).brier.mcb;
  std::vector<double> loss(folds.count, 0.0), weight(folds.count, 0.0);
  for (std::size_t i = 0, k = 0; i < n; ++i) {
    if (!folds.scored(i)) continue;
    const double wi = weight_at(d, i);
    loss[folds.fold_of_row[i]] += wi * log_loss_term(f[k++], d.label[i]);
    weight[folds.fold_of_row[i]] += wi;
  }
  for (std::size_t j = 0; j < folds.count; ++j)
    if (weight[j] > 0.0) out.fold_log_loss.push_back(loss[j] / weight[j]);
  const double m = static_cast<double>(out.fold_log_loss.size());
  if (m > 1) {
    const double mean = std::accumulate(out.fold_log_loss.begin(), out.fold_log_loss.end(), 0.0) / m;
    double ss = 0.0;
    for (double v : out.fold_log_loss) ss += (v - mean) * (v - mean);
    out.fold_log_loss_sd = std::sqrt(ss / (m - 1));
  }
  return out;
}

}  // namespace

int complexity(std::string_view kind) noexcept {
  const MapKind* k = find_map_kind(kind);
  return k != nullptr && k->complexity > 0 ? k->complexity : std::numeric_limits<int>::max();
}

namespace {

// The training sums of fold j, in the form tally_scores gives them: per
// distinct score (rows in score order, -0 and +0 one score), the count and
// the weights of negatives and positives of the fold's training rows of
// positive weight, added in row order. They are the same numbers, added in
// the same order, as tally_scores on those rows gathered in score order, so
// each fold's map is bit for bit the one fit_map gives on its rows.
void fold_training_sums(const FitData& d, const Folds& folds, std::size_t j, Tally& out) {
  out.score.clear();
  out.count.clear();
  out.negative.clear();
  out.positive.clear();
  const std::size_t n = d.score.size();
  const bool weighted = !d.weight.empty();
  for (std::size_t k = 0; k < n;) {
    const double s = d.score[k] + 0.0;
    double positive = 0.0, negative = 0.0;
    std::uint64_t count = 0;
    for (; k < n && d.score[k] == s; ++k) {
      if (!folds.trains(k, j)) continue;
      const double w = weighted ? d.weight[k] : 1.0;
      if (!(w > 0.0)) continue;
      (d.label[k] > 0.5 ? positive : negative) += w;
      ++count;
    }
    if (count == 0) continue;
    out.score.push_back(s);
    out.count.push_back(count);
    out.negative.push_back(negative);
    out.positive.push_back(positive);
  }
}

// cross_fit on rows already in score order (out-of-fold vectors in that
// order too: every pass below reads and writes them in sequence).
CrossFitResult cross_fit_sorted(const FitData& data, const Folds& folds, std::span<const std::string> kinds,
                                const MapOptions& options) {
  const std::size_t n = data.score.size();
  CrossFitResult r;
  r.folds = folds;
  std::vector<std::size_t> tested(folds.count, 0);
  std::size_t scored = 0;
  for (std::size_t i = 0; i < n; ++i)
    if (folds.scored(i)) {
      ++tested[folds.fold_of_row[i]];
      ++scored;
    }
  r.scored_rows = scored;
  if (scored == 0) throw Error(ErrorKind::fit, "no row is scored out of fold");

  r.candidates.resize(kinds.size());
  for (std::size_t c = 0; c < kinds.size(); ++c) {
    r.candidates[c].kind = kinds[c];
    r.candidates[c].oof.assign(n, std::numeric_limits<double>::quiet_NaN());
    r.candidates[c].fold_maps.resize(folds.count);
  }
  // One fold at a time: its training sums once, fitted by every candidate.
  // A failed fit is kept and, once every fold is done, the first failure in
  // candidate-major order is raised, as fitting candidate by candidate would.
  std::vector<std::exception_ptr> failure(kinds.size() * folds.count);
  Tally sums;
  sums.scale = data.scale;
  for (std::size_t j = 0; j < folds.count; ++j) {
    if (tested[j] == 0) continue;  // time split: the first block is never scored
    fold_training_sums(data, folds, j, sums);
    for (std::size_t c = 0; c < kinds.size(); ++c) {
      Candidate& cand = r.candidates[c];
      try {
        cand.fold_maps[j] = fit_map_on_tally(cand.kind, sums, options);
      } catch (const Error& e) {
        failure[c * folds.count + j] =
            e.kind() != ErrorKind::fit
                ? std::current_exception()
                : std::make_exception_ptr(Error(ErrorKind::fit,
                                                "fold " + std::to_string(j + 1) + " of the " + cand.kind +
                                                    " map: " + e.message(),
                                                {}, e.value(), e.expected()));
      } catch (...) {
        failure[c * folds.count + j] = std::current_exception();
      }
    }
  }
  for (const std::exception_ptr& e : failure)
    if (e) std::rethrow_exception(e);

  // Every scored row by its fold's map, in one pass. Rows of one score in
  // one fold share their probability, so each (candidate, fold) keeps the
  // last score it mapped.
  struct Last {
    bool have = false;
    double score = 0.0, probability = 0.0;
  };
  std::vector<Last> last(kinds.size() * folds.count);
  for (std::size_t i = 0; i < n; ++i) {
    if (!folds.scored(i)) continue;
    const std::size_t j = folds.fold_of_row[i];
    const double s = data.score[i];
    for (std::size_t c = 0; c < kinds.size(); ++c) {
      Candidate& cand = r.candidates[c];
      Last& m = last[c * folds.count + j];
      if (!m.have || !(s == m.score) || std::signbit(s) != std::signbit(m.score)) {
        m.probability = cand.fold_maps[j]->map(s).probability;
        m.score = s;
        m.have = true;
      }
      cand.oof[i] = m.probability;
    }
  }
  for (Candidate& c : r.candidates)
    c.figures = figures(c.oof, data, folds, scored);
  if (data.scale == Scale::probability) {
    r.has_raw = true;
    r.raw = figures(data.score, data, folds, scored);
  }

  // Best by out-of-fold log loss; then paired differences against it.
  for (std::size_t k = 1; k < r.candidates.size(); ++k)
    if (r.candidates[k].figures.log_loss < r.candidates[r.best].figures.log_loss) r.best = k;
  const Candidate& best = r.candidates[r.best];
  for (Candidate& c : r.candidates) {
    double w_total = 0.0, sum = 0.0;
    for (std::size_t i = 0; i < n; ++i) {
      if (!folds.scored(i)) continue;
      const double w = weight_at(data, i);
      sum += w * (log_loss_term(c.oof[i], data.label[i]) - log_loss_term(best.oof[i], data.label[i]));
      w_total += w;
    }
    const double mean = sum / w_total;
    double ss = 0.0;
    for (std::size_t i = 0; i < n; ++i) {
      if (!folds.scored(i)) continue;
      const double d = log_loss_term(c.oof[i], data.label[i]) - log_loss_term(best.oof[i], data.label[i]);
      ss += weight_at(data, i) * (d - mean) * (d - mean);
    }
    c.diff_vs_best = mean;
    c.diff_se = w_total > 1.0 ? std::sqrt(ss / (w_total - 1.0) / w_total) : 0.0;
  }
  // The simplest candidate whose log loss is within one standard error of
  // the best's (a one-standard-error rule, common practice in model choice).
  r.chosen = r.best;
  for (std::size_t k = 0; k < r.candidates.size(); ++k) {
    const Candidate& c = r.candidates[k];
    if (c.diff_vs_best > c.diff_se) continue;
    const Candidate& cur = r.candidates[r.chosen];
    if (complexity(c.kind) < complexity(cur.kind)) r.chosen = k;
  }
  const Candidate& chosen = r.candidates[r.chosen];
  // Two plain clauses: what was best, and why the choice is that one.
  char text[256];
  bool simpler_exists = false;
  for (const Candidate& c : r.candidates) simpler_exists = simpler_exists || complexity(c.kind) < complexity(best.kind);
  if (r.candidates.size() == 1) {
    std::snprintf(text, sizeof text, "%s is the only candidate (out-of-fold log loss %.6f)", chosen.kind.c_str(),
                  chosen.figures.log_loss);
  } else if (r.chosen == r.best && !simpler_exists) {
    std::snprintf(text, sizeof text, "%s has the lowest out-of-fold log loss (%.6f) and is the simplest candidate",
                  chosen.kind.c_str(), chosen.figures.log_loss);
  } else if (r.chosen == r.best) {
    std::snprintf(text, sizeof text,
                  "%s has the lowest out-of-fold log loss (%.6f); no simpler candidate comes within one standard "
                  "error of it",
                  chosen.kind.c_str(), chosen.figures.log_loss);
  } else {
    std::snprintf(text, sizeof text,
                  "%s has the lowest out-of-fold log loss; %s is simpler and within one standard error of it "
                  "(%+.6f, se %.6f)",
                  best.kind.c_str(), chosen.kind.c_str(), chosen.diff_vs_best, chosen.diff_se);
  }
  r.reason = text;
  return r;
}

// cross_fit on rows in any order: sorted once, stably (ties keep their input
// order, so sums over ties are added in the same order as a plain fit of the
// same rows would add them), cross-fitted in score order, put back.
template <class Index>
CrossFitResult cross_fit_reordered(const FitData& data, const Folds& folds, std::span<const std::string> kinds,
                                   const MapOptions& options) {
  const std::size_t n = data.score.size();
  std::vector<Index> order(n);
  std::iota(order.begin(), order.end(), Index{0});
  std::stable_sort(order.begin(), order.end(), [&](Index a, Index b) { return data.score[a] < data.score[b]; });
  std::vector<double> score(n), label(n), weight(data.weight.empty() ? 0 : n);
  Folds sorted_folds = folds;
  for (std::size_t k = 0; k < n; ++k) {
    score[k] = data.score[order[k]];
    label[k] = data.label[order[k]];
    if (!data.weight.empty()) weight[k] = data.weight[order[k]];
    sorted_folds.fold_of_row[k] = folds.fold_of_row[order[k]];
  }
  CrossFitResult r = cross_fit_sorted(FitData{score, label, weight, data.scale}, sorted_folds, kinds, options);
  r.folds = folds;
  // The sorted copies are done with: give their memory back before each
  // out-of-fold vector is put in input order.
  std::vector<double>().swap(score);
  std::vector<double>().swap(label);
  std::vector<double>().swap(weight);
  std::vector<std::uint32_t>().swap(sorted_folds.fold_of_row);
  for (Candidate& c : r.candidates) {
    std::vector<double> oof(n);
    for (std::size_t k = 0; k < n; ++k) oof[order[k]] = c.oof[k];
    c.oof = std::move(oof);
  }
  return r;
}

}  // namespace

CrossFitResult cross_fit(const FitData& data, const Folds& folds, std::span<const std::string> kinds,
                         const MapOptions& options) {
  if (kinds.empty()) throw Error(ErrorKind::usage, "no candidate maps", {}, {}, "at least one kind in --map");
  const std::size_t n = data.score.size();
  if (folds.fold_of_row.size() != n) throw Error(ErrorKind::internal, "cross_fit: folds made for other rows");
  if (std::is_sorted(data.score.begin(), data.score.end())) return cross_fit_sorted(data, folds, kinds, options);
  // 32-bit row numbers where they suffice: half the memory and the traffic.
  if (n <= std::numeric_limits<std::uint32_t>::max()) return cross_fit_reordered<std::uint32_t>(data, folds, kinds, options);
  return cross_fit_reordered<std::size_t>(data, folds, kinds, options);
}

}  // namespace plumb
