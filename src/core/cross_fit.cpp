#include "plumb/cross_fit.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>

#include "plumb/calibration_error.hpp"
#include "plumb/corp.hpp"
#include "plumb/error.hpp"
#include "plumb/scores.hpp"

namespace plumb {
namespace {

double weight_at(const FitData& d, std::size_t i) { return d.weight.empty() ? 1.0 : d.weight[i]; }

struct Subset {
  std::vector<double> score, label, weight;
};

Subset gather(const FitData& d, const std::vector<std::size_t>& rows) {
  Subset s;
  s.score.reserve(rows.size());
  s.label.reserve(rows.size());
  for (std::size_t i : rows) {
    s.score.push_back(d.score[i]);
    s.label.push_back(d.label[i]);
    if (!d.weight.empty()) s.weight.push_back(d.weight[i]);
  }
  return s;
}

// Figures of `forecast` (one per row) on the scored rows.
OutOfFoldFigures figures(const std::vector<double>& forecast, const FitData& d, const Folds& folds,
                         const std::vector<std::size_t>& scored) {
  std::vector<double> f, y, w;
  for (std::size_t i : scored) {
    f.push_back(forecast[i]);
    y.push_back(d.label[i]);
    if (!d.weight.empty()) w.push_back(d.weight[i]);
  }
  OutOfFoldFigures out;
  out.log_loss = log_loss(f, y, w);
  out.brier = brier_score(f, y, w);
  out.ece = calibration_error(f, y, w, BinningKind::equal_width, 10).ece;
  out.mcb = corp_decomposition(f, y, w).brier.mcb;
  std::vector<double> loss(folds.count, 0.0), weight(folds.count, 0.0);
  for (std::size_t i : scored) {
    const double wi = weight_at(d, i);
    loss[folds.fold_of_row[i]] += wi * log_loss_term(forecast[i], d.label[i]);
    weight[folds.fold_of_row[i]] += wi;
  }
  for (std::size_t j = 0; j < folds.count; ++j)
    if (weight[j] > 0.0) out.fold_log_loss.push_back(loss[j] / weight[j]);
  const double n = static_cast<double>(out.fold_log_loss.size());
  if (n > 1) {
    const double mean = std::accumulate(out.fold_log_loss.begin(), out.fold_log_loss.end(), 0.0) / n;
    double ss = 0.0;
    for (double v : out.fold_log_loss) ss += (v - mean) * (v - mean);
    out.fold_log_loss_sd = std::sqrt(ss / (n - 1));
  }
  return out;
}

}  // namespace

int complexity(std::string_view kind) noexcept {
  if (kind == "temperature") return 1;
  if (kind == "platt") return 2;
  if (kind == "beta") return 3;
  if (kind == "histogram") return 4;
  return 5;
}

namespace {

// cross_fit on rows already in score order: every fold's training rows are
// then gathered in score order, so no fit sorts them again.
CrossFitResult cross_fit_sorted(const FitData& data, const Folds& folds, std::span<const std::string> kinds,
                                const MapOptions& options) {
  const std::size_t n = data.score.size();
  CrossFitResult r;
  r.folds = folds;
  std::vector<std::vector<std::size_t>> train(folds.count), test(folds.count);
  std::vector<std::size_t> scored;
  for (std::size_t i = 0; i < n; ++i) {
    for (std::size_t j = 0; j < folds.count; ++j)
      if (folds.trains(i, j)) train[j].push_back(i);
    if (folds.scored(i)) {
      test[folds.fold_of_row[i]].push_back(i);
      scored.push_back(i);
    }
  }
  r.scored_rows = scored.size();
  if (scored.empty()) throw Error(ErrorKind::fit, "no row is scored out of fold");

  for (const std::string& kind : kinds) {
    Candidate c;
    c.kind = kind;
    c.oof.assign(n, std::numeric_limits<double>::quiet_NaN());
    c.fold_maps.resize(folds.count);
    for (std::size_t j = 0; j < folds.count; ++j) {
      if (test[j].empty()) continue;  // time split: the first block is never scored
      const Subset s = gather(data, train[j]);
      try {
        c.fold_maps[j] = fit_map(kind, FitData{s.score, s.label, s.weight, data.scale}, options);
      } catch (const Error& e) {
        if (e.kind() != ErrorKind::fit) throw;
        throw Error(ErrorKind::fit, "fold " + std::to_string(j + 1) + " of the " + kind + " map: " + e.message(), {},
                    e.value(), e.expected());
      }
      for (std::size_t i : test[j]) c.oof[i] = c.fold_maps[j]->map(data.score[i]).probability;
    }
    c.figures = figures(c.oof, data, folds, scored);
    r.candidates.push_back(std::move(c));
  }
  if (data.scale == Scale::probability) {
    r.has_raw = true;
    r.raw = figures(std::vector<double>(data.score.begin(), data.score.end()), data, folds, scored);
  }

  // Best by out-of-fold log loss; then paired differences against it.
  for (std::size_t k = 1; k < r.candidates.size(); ++k)
    if (r.candidates[k].figures.log_loss < r.candidates[r.best].figures.log_loss) r.best = k;
  const Candidate& best = r.candidates[r.best];
  for (Candidate& c : r.candidates) {
    double w_total = 0.0, sum = 0.0;
    for (std::size_t i : scored) {
      const double w = weight_at(data, i);
      sum += w * (log_loss_term(c.oof[i], data.label[i]) - log_loss_term(best.oof[i], data.label[i]));
      w_total += w;
    }
    const double mean = sum / w_total;
    double ss = 0.0;
    for (std::size_t i : scored) {
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

}  // namespace

CrossFitResult cross_fit(const FitData& data, const Folds& folds, std::span<const std::string> kinds,
                         const MapOptions& options) {
  if (kinds.empty()) throw Error(ErrorKind::usage, "no candidate maps", {}, {}, "at least one kind in --map");
  const std::size_t n = data.score.size();
  if (folds.fold_of_row.size() != n) throw Error(ErrorKind::internal, "cross_fit: folds made for other rows");
  if (std::is_sorted(data.score.begin(), data.score.end())) return cross_fit_sorted(data, folds, kinds, options);
  // Sort once, stably (ties keep their input order, so sums over ties are
  // added in the same order as a plain fit of the same rows would add them).
  std::vector<std::size_t> order(n);
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return data.score[a] < data.score[b]; });
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
  for (Candidate& c : r.candidates) {
    std::vector<double> oof(n);
    for (std::size_t k = 0; k < n; ++k) oof[order[k]] = c.oof[k];
    c.oof = std::move(oof);
  }
  return r;
}

}  // namespace plumb
