#include "plumb/class_cross_fit.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

#include "plumb/error.hpp"
#include "plumb/number_text.hpp"

namespace plumb {
namespace {

template <class T>
void shuffle(std::vector<T>& v, std::uint64_t& state) {
  for (std::size_t i = v.size(); i > 1; --i) {
    const std::size_t j = static_cast<std::size_t>(splitmix64(state) % i);
    std::swap(v[i - 1], v[j]);
  }
}

std::string candidate_name(const ClassCandidateSpec& s) {
  if (s.kind == "dirichlet") return "dirichlet l2=" + shortest_text(s.options.l2);
  if (s.kind == "one_vs_rest") return "one_vs_rest " + s.options.per_class;
  return s.kind;
}

// Simplicity: the registry's rank, and within dirichlet a larger L2 first
// (a stronger pull towards the identity is the simpler map).
int candidate_rank(const ClassCandidateSpec& s, std::span<const ClassCandidateSpec> all) {
  const ClassMapKind* k = find_class_map_kind(s.kind);
  int rank = 100 * (k ? k->complexity : 99);
  if (s.kind == "dirichlet") {
    int larger = 0;
    for (const ClassCandidateSpec& o : all)
      if (o.kind == "dirichlet" && o.options.l2 > s.options.l2) ++larger;
    rank += larger;
  }
  return rank;
}

ClassScores subset(const ClassScores& d, const std::vector<std::size_t>& rows) {
  ClassScores s;
  s.classes = d.classes;
  s.scale = d.scale;
  s.rows = rows.size();
  const std::size_t k = d.k();
  s.values.reserve(rows.size() * k);
  s.label.reserve(rows.size());
  for (std::size_t r : rows) {
    s.values.insert(s.values.end(), d.row(r), d.row(r) + k);
    s.label.push_back(d.label[r]);
    if (!d.weight.empty()) s.weight.push_back(d.weight[r]);
  }
  return s;
}

}  // namespace

Folds class_stratified_folds(std::span<const std::uint32_t> label, std::size_t classes, std::size_t k,
                             std::uint64_t seed) {
  if (k < 2 || k > label.size())
    throw Error(ErrorKind::usage,
                "cannot make " + std::to_string(k) + " folds from " + std::to_string(label.size()) + " rows", {}, {},
                "--folds between 2 and the number of rows");
  std::vector<std::vector<std::size_t>> by_class(classes);
  for (std::size_t i = 0; i < label.size(); ++i) by_class[label[i]].push_back(i);
  std::uint64_t state = seed;
  for (auto& rows : by_class) shuffle(rows, state);
  Folds f;
  f.kind = SplitKind::stratified;
  f.count = k;
  f.fold_of_row.assign(label.size(), 0);
  std::size_t next = 0;
  for (const auto& rows : by_class)
    for (std::size_t i : rows) f.fold_of_row[i] = static_cast<std::uint32_t>(next++ % k);
  return f;
}

std::vector<double> default_l2_grid() { return {1.0, 0.1, 0.01, 0.001}; }

std::vector<ClassCandidateSpec> auto_class_candidates(std::span<const double> l2_grid, const std::string& per_class) {
  std::vector<ClassCandidateSpec> out;
  out.push_back({"temperature", {}});
  out.push_back({"vector", {}});
  for (double l2 : l2_grid) {
    ClassCandidateSpec s{"dirichlet", {}};
    s.options.l2 = l2;
    out.push_back(s);
  }
  ClassCandidateSpec ovr{"one_vs_rest", {}};
  ovr.options.per_class = per_class;
  out.push_back(ovr);
  return out;
}

ClassCrossFitResult class_cross_fit(const ClassScores& data, const Folds& folds,
                                    std::span<const ClassCandidateSpec> candidates) {
  if (candidates.empty()) throw Error(ErrorKind::usage, "no candidate map", {}, {}, "one or more kinds");
  const std::size_t n = data.rows, k = data.k();
  auto weight = [&](std::size_t i) { return data.weight.empty() ? 1.0 : data.weight[i]; };
  // Each fold's training rows and scored rows, and a check that the
  // training rows of a fold that scores rows hold every class (a class
  // absent there would be refused by the fit with a message that does not
  // name the fold).
  std::vector<std::vector<std::size_t>> train(folds.count), test(folds.count);
  for (std::size_t i = 0; i < n; ++i)
    for (std::size_t j = 0; j < folds.count; ++j) {
      if (folds.trains(i, j)) train[j].push_back(i);
      if (folds.fold_of_row[i] == j && folds.scored(i)) test[j].push_back(i);
    }
  std::vector<ClassScores> train_rows(folds.count);
  for (std::size_t j = 0; j < folds.count; ++j) {
    if (test[j].empty()) continue;
    std::vector<double> w(k, 0.0);
    for (std::size_t i : train[j]) w[data.label[i]] += weight(i);
    for (std::size_t c = 0; c < k; ++c)
      if (!(w[c] > 0.0))
        throw Error(ErrorKind::fit,
                    "fold " + std::to_string(j + 1) + "'s training rows hold no row of class '" + data.classes[c] + "'",
                    {}, data.classes[c],
                    "rows of every class in every fold's training rows (fewer --folds, or another --split)");
    train_rows[j] = subset(data, train[j]);
  }

  ClassCrossFitResult r;
  for (std::size_t i = 0; i < n; ++i) r.scored_rows += folds.scored(i) ? 1 : 0;
  if (r.scored_rows == 0)
    throw Error(ErrorKind::fit, "no row is scored out of fold", {}, {}, "folds that score rows");
  std::vector<std::vector<double>> term(candidates.size(), std::vector<double>(n, 0.0));
  std::vector<double> q(k), brier(n, 0.0);
  for (std::size_t c = 0; c < candidates.size(); ++c) {
    ClassCandidate cand;
    cand.spec = candidates[c];
    cand.name = candidate_name(candidates[c]);
    cand.rank = candidate_rank(candidates[c], candidates);
    cand.fold_maps.resize(folds.count);
    double sum = 0.0, w_total = 0.0, b_sum = 0.0;
    for (std::size_t j = 0; j < folds.count; ++j) {
      if (test[j].empty()) {
        cand.fold_log_loss.push_back(0.0);
        continue;
      }
      std::shared_ptr<const ClassCalibrationMap> map = fit_class_map(cand.spec.kind, train_rows[j], cand.spec.options);
      double fs = 0.0, fw = 0.0;
      for (std::size_t i : test[j]) {
        map->map(data.row(i), q.data());
        const std::uint32_t y = data.label[i];
        const double t = -std::log(std::max(q[y], class_probability_floor));
        double b = 0.0;
        for (std::size_t m = 0; m < k; ++m) {
          const double d = q[m] - (m == y ? 1.0 : 0.0);
          b += d * d;
        }
        term[c][i] = t;
        brier[i] = b;
        fs += weight(i) * t;
        b_sum += weight(i) * b;
        fw += weight(i);
      }
      sum += fs;
      w_total += fw;
      cand.fold_log_loss.push_back(fw > 0.0 ? fs / fw : 0.0);
      cand.fold_maps[j] = std::move(map);
    }
    cand.log_loss = w_total > 0.0 ? sum / w_total : 0.0;
    cand.brier = w_total > 0.0 ? b_sum / w_total : 0.0;
    double ss = 0.0;
    for (std::size_t i = 0; i < n; ++i)
      if (folds.scored(i)) ss += weight(i) * (brier[i] - cand.brier) * (brier[i] - cand.brier);
    cand.brier_se = w_total > 1.0 ? std::sqrt(ss / (w_total - 1.0) / w_total) : 0.0;
    r.candidates.push_back(std::move(cand));
  }
  for (std::size_t c = 1; c < r.candidates.size(); ++c)
    if (r.candidates[c].log_loss < r.candidates[r.best].log_loss) r.best = c;
  // Paired differences from the best, and their standard error, as the
  // binary cross-fit computes them.
  for (std::size_t c = 0; c < r.candidates.size(); ++c) {
    ClassCandidate& cand = r.candidates[c];
    if (c == r.best) continue;
    double sum = 0.0, w_total = 0.0;
    for (std::size_t i = 0; i < n; ++i) {
      if (!folds.scored(i)) continue;
      sum += weight(i) * (term[c][i] - term[r.best][i]);
      w_total += weight(i);
    }
    const double mean = sum / w_total;
    double ss = 0.0;
    for (std::size_t i = 0; i < n; ++i) {
      if (!folds.scored(i)) continue;
      const double d = term[c][i] - term[r.best][i];
      ss += weight(i) * (d - mean) * (d - mean);
    }
    cand.diff_vs_best = mean;
    cand.diff_se = w_total > 1.0 ? std::sqrt(ss / (w_total - 1.0) / w_total) : 0.0;
  }
  // The one-standard-error rule (common practice in model choice).
  r.chosen = r.best;
  for (std::size_t c = 0; c < r.candidates.size(); ++c) {
    const ClassCandidate& cand = r.candidates[c];
    if (cand.diff_vs_best > cand.diff_se) continue;
    if (cand.rank < r.candidates[r.chosen].rank) r.chosen = c;
  }
  const ClassCandidate& best = r.candidates[r.best];
  const ClassCandidate& chosen = r.candidates[r.chosen];
  if (r.candidates.size() == 1)
    r.reason = chosen.name + " is the only candidate (out-of-fold log loss " + fixed_text(chosen.log_loss, 6) + ")";
  else if (r.chosen == r.best)
    r.reason = chosen.name + " has the lowest out-of-fold log loss (" + fixed_text(chosen.log_loss, 6) +
               "); no simpler candidate comes within one standard error of it";
  else
    r.reason = best.name + " has the lowest out-of-fold log loss; " + chosen.name +
               " is simpler and within one standard error of it (+" + fixed_text(chosen.diff_vs_best, 6) + ", se " +
               fixed_text(chosen.diff_se, 6) + ")";
  r.oof.assign(n * k, std::numeric_limits<double>::quiet_NaN());
  for (std::size_t i = 0; i < n; ++i)
    if (folds.scored(i)) chosen.fold_maps[folds.fold_of_row[i]]->map(data.row(i), r.oof.data() + i * k);
  return r;
}

}  // namespace plumb
