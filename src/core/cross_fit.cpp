#include "plumb/cross_fit.hpp"

#include <algorithm>
#include <array>
#include <atomic>
#include <cmath>
#include <cstring>
#include <exception>
#include <functional>
#include <limits>
#include <numeric>
#include <queue>
#include <thread>

#include "plumb/auc.hpp"
#include "plumb/binning.hpp"
#include "plumb/calibration_error.hpp"
#include "plumb/corp.hpp"
#include "plumb/error.hpp"
#include "plumb/map_registry.hpp"
#include "plumb/odds_adjustment.hpp"
#include "plumb/pav.hpp"
#include "plumb/scores.hpp"
#include "plumb/tally.hpp"

namespace plumb {
namespace {

double weight_at(const FitData& d, std::size_t i) { return d.weight.empty() ? 1.0 : d.weight[i]; }

// Per scored fold, its mean log loss, and their standard deviation.
void set_fold_log_loss(OutOfFoldFigures& out, const std::vector<double>& loss, const std::vector<double>& weight) {
  for (std::size_t j = 0; j < loss.size(); ++j)
    if (weight[j] > 0.0) out.fold_log_loss.push_back(loss[j] / weight[j]);
  const double m = static_cast<double>(out.fold_log_loss.size());
  if (m > 1) {
    const double mean = std::accumulate(out.fold_log_loss.begin(), out.fold_log_loss.end(), 0.0) / m;
    double ss = 0.0;
    for (double v : out.fold_log_loss) ss += (v - mean) * (v - mean);
    out.fold_log_loss_sd = std::sqrt(ss / (m - 1));
  }
}

// The weighted mean over folds of each fold's AUC, weights the folds'
// weights; folds of one class (AUC NaN) are left out; NaN when every fold is.
double mean_fold_auc(std::span<const double> fold_auc, std::span<const double> fold_weight) {
  double sum = 0.0, weight = 0.0;
  for (std::size_t j = 0; j < fold_auc.size(); ++j)
    if (std::isfinite(fold_auc[j]) && fold_weight[j] > 0.0) {
      sum += fold_weight[j] * fold_auc[j];
      weight += fold_weight[j];
    }
  return weight > 0.0 ? sum / weight : std::numeric_limits<double>::quiet_NaN();
}

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
  {
    // Each scored fold's AUC on its own rows, then their weighted mean.
    std::vector<double> fold_auc(folds.count, std::numeric_limits<double>::quiet_NaN()), fold_weight(folds.count, 0.0);
    std::vector<double> ff, fy, fw;
    for (std::size_t j = 0; j < folds.count; ++j) {
      ff.clear();
      fy.clear();
      fw.clear();
      for (std::size_t i = 0, k = 0; i < n; ++i) {
        if (!folds.scored(i)) continue;
        const std::size_t at = k++;
        if (folds.fold_of_row[i] != j) continue;
        ff.push_back(f[at]);
        fy.push_back(y[at]);
        if (!w.empty()) fw.push_back(w[at]);
        fold_weight[j] += weight_at(d, i);
      }
      if (!ff.empty()) fold_auc[j] = auc(ff, fy, fw);
    }
    out.auc = mean_fold_auc(fold_auc, fold_weight);
  }
  std::vector<double> loss(folds.count, 0.0), weight(folds.count, 0.0);
  for (std::size_t i = 0, k = 0; i < n; ++i) {
    if (!folds.scored(i)) continue;
    const double wi = weight_at(d, i);
    loss[folds.fold_of_row[i]] += wi * log_loss_term(f[k++], d.label[i]);
    weight[folds.fold_of_row[i]] += wi;
  }
  set_fold_log_loss(out, loss, weight);
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
// each fold's map is bit for bit the one fit_map gives on its rows. With
// j == folds.count, every row counts: the sums of tally_scores on all rows.
void fold_training_sums(const FitData& d, const Folds& folds, std::size_t j, Tally& out) {
  out.score.clear();
  out.count.clear();
  out.negative.clear();
  out.positive.clear();
  const std::size_t n = d.score.size();
  const bool weighted = !d.weight.empty();
  const bool all = j == folds.count;
  for (std::size_t k = 0; k < n;) {
    const double s = d.score[k] + 0.0;
    double positive = 0.0, negative = 0.0;
    std::uint64_t count = 0;
    for (; k < n && d.score[k] == s; ++k) {
      if (!all && !folds.trains(k, j)) continue;
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

// Fits every candidate on every scored fold's training sums (made by
// sums_of(j, tally)): each fold's sums once, fitted by every candidate. The
// folds are shared out over two threads (one per core on a two-core machine;
// each fold on one thread with its own sums), which changes no fit. A failed fit is
// kept and, once every fold is done, the first failure in candidate-major
// order is raised, as fitting candidate by candidate would. `also`, when
// given, is one more task for the first thread to run out of folds (work
// that needs no fold map), raised after the fits' failures.
template <class SumsOf>
void fit_folds(CrossFitResult& r, const Folds& folds, std::span<const std::string> kinds,
               const std::vector<std::size_t>& tested, Scale scale, const MapOptions& options, SumsOf sums_of,
               const std::function<void()>& also = {}) {
  r.candidates.resize(kinds.size());
  for (std::size_t c = 0; c < kinds.size(); ++c) {
    r.candidates[c].kind = kinds[c];
    r.candidates[c].fold_maps.resize(folds.count);
  }
  std::vector<std::size_t> todo;
  for (std::size_t j = 0; j < folds.count; ++j)
    if (tested[j] > 0) todo.push_back(j);  // time split: the first block is never scored
  // The fold maps' diagnostics are never shown: no pass over the entries
  // after each fit for their log loss and clipped rows.
  MapOptions fold_options = options;
  fold_options.row_diagnostics = false;
  std::vector<std::exception_ptr> failure(kinds.size() * folds.count);
  std::atomic<std::size_t> next{0};
  std::exception_ptr also_failed;
  const std::size_t tasks = todo.size() + (also ? 1 : 0);
  const auto work = [&] {
    Tally sums;
    sums.scale = scale;
    for (std::size_t t; (t = next.fetch_add(1)) < tasks;) {
      if (t == todo.size()) {
        try {
          also();
        } catch (...) {
          also_failed = std::current_exception();
        }
        continue;
      }
      const std::size_t j = todo[t];
      try {
        sums_of(j, sums);
      } catch (...) {
        failure[j] = std::current_exception();  // candidate 0's slot: raised first for this fold
        continue;
      }
      for (std::size_t c = 0; c < kinds.size(); ++c) {
        Candidate& cand = r.candidates[c];
        try {
          cand.fold_maps[j] = fit_map_on_tally(cand.kind, sums, fold_options);
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
  };
  // At most two: each thread holds one fit's buffers (about 150 bytes per
  // distinct score), so more threads would raise the peak memory with the
  // core count.
  constexpr std::size_t most_threads = 2;
  const std::size_t threads =
      std::min({tasks, most_threads, static_cast<std::size_t>(std::max(1u, std::thread::hardware_concurrency()))});
  {
    std::vector<std::jthread> pool;
    for (std::size_t t = 1; t < threads; ++t) pool.emplace_back(work);
    work();
  }
  for (const std::exception_ptr& e : failure)
    if (e) std::rethrow_exception(e);
  if (also_failed) std::rethrow_exception(also_failed);
}

// The choice, once every candidate's figures and paired differences are
// known: the best by out-of-fold log loss was set in r.best.
void choose(CrossFitResult& r) {
  const Candidate& best = r.candidates[r.best];
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
}

void pick_best(CrossFitResult& r) {
  for (std::size_t k = 1; k < r.candidates.size(); ++k)
    if (r.candidates[k].figures.log_loss < r.candidates[r.best].figures.log_loss) r.best = k;
}

// cross_fit on rows already in score order (out-of-fold vectors in that
// order too: every pass below reads and writes them in sequence). With a
// negative_rate other than 1, the maps are fitted on the rows as they are and
// the evidence is that of the population the rows were drawn from: each
// out-of-fold probability has its odds multiplied by the rate and each
// negative row (label 0.5 or less, the class the sums give it) weighs its
// weight divided by the rate in every figure and paired difference.
CrossFitResult cross_fit_sorted(const FitData& data, const Folds& folds, std::span<const std::string> kinds,
                                const MapOptions& options, double negative_rate = 1.0) {
  const std::size_t n = data.score.size();
  CrossFitResult r;
  const bool resampled = negative_rate != 1.0;
  std::vector<double> population_weight;
  if (resampled) {
    population_weight.resize(n);
    for (std::size_t i = 0; i < n; ++i)
      population_weight[i] = data.label[i] > 0.5 ? weight_at(data, i) : weight_at(data, i) / negative_rate;
  }
  // The rows as the figures weigh them.
  const FitData judged{data.score, data.label, resampled ? std::span<const double>(population_weight) : data.weight,
                       data.scale};
  std::vector<std::size_t> tested(folds.count, 0);
  std::size_t scored = 0;
  for (std::size_t i = 0; i < n; ++i)
    if (folds.scored(i)) {
      ++tested[folds.fold_of_row[i]];
      ++scored;
    }
  r.scored_rows = scored;
  if (scored == 0) throw Error(ErrorKind::fit, "no row is scored out of fold");

  fit_folds(r, folds, kinds, tested, data.scale, options,
            [&](std::size_t j, Tally& sums) { fold_training_sums(data, folds, j, sums); });
  r.all_rows.scale = data.scale;
  fold_training_sums(data, folds, folds.count, r.all_rows);
  for (Candidate& c : r.candidates) c.oof.assign(n, std::numeric_limits<double>::quiet_NaN());

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
        if (resampled) m.probability = multiply_odds(m.probability, negative_rate);
        m.score = s;
        m.have = true;
      }
      cand.oof[i] = m.probability;
    }
  }
  for (Candidate& c : r.candidates)
    c.figures = figures(c.oof, judged, folds, scored);
  if (data.scale == Scale::probability) {
    r.has_raw = true;
    r.raw = figures(data.score, judged, folds, scored);
  }

  // Best by out-of-fold log loss; then paired differences against it.
  pick_best(r);
  const Candidate& best = r.candidates[r.best];
  for (Candidate& c : r.candidates) {
    double w_total = 0.0, sum = 0.0;
    for (std::size_t i = 0; i < n; ++i) {
      if (!folds.scored(i)) continue;
      const double w = weight_at(judged, i);
      sum += w * (log_loss_term(c.oof[i], data.label[i]) - log_loss_term(best.oof[i], data.label[i]));
      w_total += w;
    }
    const double mean = sum / w_total;
    double ss = 0.0;
    for (std::size_t i = 0; i < n; ++i) {
      if (!folds.scored(i)) continue;
      const double d = log_loss_term(c.oof[i], data.label[i]) - log_loss_term(best.oof[i], data.label[i]);
      ss += weight_at(judged, i) * (d - mean) * (d - mean);
    }
    c.diff_vs_best = mean;
    c.diff_se = w_total > 1.0 ? std::sqrt(ss / (w_total - 1.0) / w_total) : 0.0;
  }
  choose(r);
  return r;
}

// cross_fit on rows in any order: sorted once, stably (ties keep their input
// order, so sums over ties are added in the same order as a plain fit of the
// same rows would add them), cross-fitted in score order, put back.
template <class Index>
CrossFitResult cross_fit_reordered(const FitData& data, const Folds& folds, std::span<const std::string> kinds,
                                   const MapOptions& options, const std::function<void()>& rows_read,
                                   double negative_rate) {
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
  if (rows_read) rows_read();
  CrossFitResult r =
      cross_fit_sorted(FitData{score, label, weight, data.scale}, sorted_folds, kinds, options, negative_rate);
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

// ---------------------------------------------------------------------------
// Unweighted rows with 0/1 labels, on cells.
//
// Every sum a fit or a figure takes over such rows is either a count (the
// fold sums, the PAV pools of tied forecasts, the bins' weights and labels),
// the same in any order, or a sum of per-row terms that depend on the row's
// cell and label only, which is added row by row in score order exactly as
// the per-row computation adds it. So one sort of the rows, one cell per
// (distinct score, fold), and a 32-bit code per row in score order (its
// cell and label) give every number of the per-row path bit for bit.

constexpr std::uint32_t label_bit = 0x80000000u;

// The rows in score order, ties in input order (what a stable sort by score
// gives), each with what the cells need of it: an LSD radix sort of
// (key, fold and label, row) records on the scores' bit patterns made to
// order as the values do (sign bit flipped for positives, every bit for
// negatives; -0 does not occur on this path), six digits of 11 bits, a
// digit every row shares skipped. Carrying the fold and label along keeps
// every pass sequential in its reads.
struct SortedRow {
  std::uint64_t key;
  std::uint32_t tag;  // fold << 1 | label
  std::uint32_t row;
};

std::uint64_t order_key(double s) noexcept {
  std::uint64_t bits;
  std::memcpy(&bits, &s, sizeof bits);
  return (bits >> 63) != 0 ? ~bits : bits | (std::uint64_t{1} << 63);
}

double score_of_key(std::uint64_t key) noexcept {
  const std::uint64_t bits = (key >> 63) != 0 ? key & ~(std::uint64_t{1} << 63) : ~key;
  double s;
  std::memcpy(&s, &bits, sizeof s);
  return s;
}

std::vector<SortedRow> sorted_rows(const FitData& data, const Folds& folds) {
  const std::size_t n = data.score.size();
  std::vector<SortedRow> a(n), b;
  for (std::size_t i = 0; i < n; ++i)
    a[i] = SortedRow{order_key(data.score[i]), folds.fold_of_row[i] << 1 | (data.label[i] == 1.0 ? 1u : 0u),
                     static_cast<std::uint32_t>(i)};
  if (std::is_sorted(data.score.begin(), data.score.end())) return a;
  constexpr unsigned digit_bits = 11, digits = 6;
  constexpr std::size_t radix = std::size_t{1} << digit_bits;
  std::vector<std::array<std::uint32_t, digits>> count(radix, std::array<std::uint32_t, digits>{});
  for (const SortedRow& r : a)
    for (unsigned d = 0; d < digits; ++d) ++count[(r.key >> (digit_bits * d)) & (radix - 1)][d];
  std::vector<std::size_t> start(radix);
  for (unsigned d = 0; d < digits; ++d) {
    bool one_digit = false;
    for (std::size_t v = 0; v < radix; ++v)
      if (count[v][d] == n) one_digit = true;
    if (one_digit) continue;
    std::size_t sum = 0;
    for (std::size_t v = 0; v < radix; ++v) {
      start[v] = sum;
      sum += count[v][d];
    }
    b.resize(n);
    for (const SortedRow& r : a) b[start[(r.key >> (digit_bits * d)) & (radix - 1)]++] = r;
    a.swap(b);
  }
  return a;
}

struct Cells {
  std::vector<double> group_score;          // per distinct score, ascending
  std::vector<std::uint32_t> group_first;   // first cell of each group; one past the last at the end
  std::vector<std::uint32_t> fold, rows, positives;  // per cell: its fold, its rows, its positive rows
  std::vector<std::uint32_t> code;          // per row in score order: its cell | label_bit if positive
  std::size_t size() const noexcept { return fold.size(); }
};

bool fold_scored(const Folds& folds, std::uint32_t f) noexcept { return !folds.forward_chaining || f > 0; }
bool fold_trains(const Folds& folds, std::uint32_t f, std::size_t j) noexcept {
  return folds.forward_chaining ? f < j : f != j;
}

// One pass over the rows in score order: groups, cells, the rows' codes and
// each input row's cell.
Cells make_cells(const FitData& data, const Folds& folds, std::vector<std::uint32_t>& cell_of_row) {
  const std::size_t n = data.score.size();
  Cells c;
  {
    const std::vector<SortedRow> sorted = sorted_rows(data, folds);
    c.code.resize(n);
    cell_of_row.resize(n);
    // Room for the most cells and groups there can be, so that no vector is
    // copied as it grows: pages never written cost address space, not memory.
    c.group_score.reserve(n);
    c.group_first.reserve(n + 1);
    c.fold.reserve(n);
    c.rows.reserve(n);
    c.positives.reserve(n);
    constexpr std::uint32_t none = 0xFFFFFFFFu;
    std::vector<std::uint32_t> slot(folds.count, none);
    std::uint64_t key = 0;
    for (std::size_t k = 0; k < n; ++k) {
      const SortedRow& row = sorted[k];
      if (k == 0 || row.key != key) {
        key = row.key;
        if (!c.group_first.empty())
          for (std::size_t e = c.group_first.back(); e < c.fold.size(); ++e) slot[c.fold[e]] = none;
        c.group_score.push_back(score_of_key(key));
        c.group_first.push_back(static_cast<std::uint32_t>(c.fold.size()));
      }
      const std::uint32_t j = row.tag >> 1;
      std::uint32_t e = slot[j];
      if (e == none) {
        e = slot[j] = static_cast<std::uint32_t>(c.fold.size());
        c.fold.push_back(j);
        c.rows.push_back(0);
        c.positives.push_back(0);
      }
      const std::uint32_t positive = row.tag & 1u;
      ++c.rows[e];
      c.positives[e] += positive;
      c.code[k] = e | (positive != 0 ? label_bit : 0u);
      cell_of_row[row.row] = e;
    }
  }
  c.group_first.push_back(static_cast<std::uint32_t>(c.fold.size()));
  return c;
}

// Fold j's training sums from the cells (j == folds.count: every row).
void cell_training_sums(const Cells& c, const Folds& folds, std::size_t j, Tally& out) {
  out.score.clear();
  out.count.clear();
  out.negative.clear();
  out.positive.clear();
  const bool all = j == folds.count;
  for (std::size_t g = 0; g + 1 < c.group_first.size(); ++g) {
    std::uint64_t count = 0, positive = 0;
    for (std::size_t e = c.group_first[g]; e < c.group_first[g + 1]; ++e) {
      if (!all && !fold_trains(folds, c.fold[e], j)) continue;
      count += c.rows[e];
      positive += c.positives[e];
    }
    if (count == 0) continue;
    out.score.push_back(c.group_score[g] + 0.0);
    out.count.push_back(count);
    out.negative.push_back(static_cast<double>(count - positive));
    out.positive.push_back(static_cast<double>(positive));
  }
}

// The PAV recalibration of the scored cells' forecasts f (what pav_values
// gives each scored row): the distinct forecasts, ascending, each with its
// rows and positive rows (counts: the same in any order), pooled. Each fold's
// cells are taken in ascending forecast (already so, group by group, when the
// fold's map is non-decreasing) and the folds merged.
std::vector<double> cell_pav(std::span<const double> f, const Cells& c, const Folds& folds) {
  const std::size_t m = c.size();
  std::vector<std::uint32_t> by_fold(m);
  std::vector<std::size_t> first(folds.count + 1, 0);
  for (std::size_t e = 0; e < m; ++e)
    if (fold_scored(folds, c.fold[e])) ++first[c.fold[e] + 1];
  for (std::size_t j = 0; j < folds.count; ++j) first[j + 1] += first[j];
  {
    std::vector<std::size_t> next(first.begin(), first.end() - 1);
    for (std::size_t e = 0; e < m; ++e)
      if (fold_scored(folds, c.fold[e])) by_fold[next[c.fold[e]]++] = static_cast<std::uint32_t>(e);
  }
  const auto less = [&f](std::uint32_t a, std::uint32_t b) { return f[a] < f[b]; };
  for (std::size_t j = 0; j < folds.count; ++j) {
    const auto b = by_fold.begin() + static_cast<std::ptrdiff_t>(first[j]);
    const auto e = by_fold.begin() + static_cast<std::ptrdiff_t>(first[j + 1]);
    if (!std::is_sorted(b, e, less)) std::sort(b, e, less);
  }
  // Merge the folds' runs, calling visit(cell) in ascending forecast.
  const auto merged = [&](auto visit) {
    using Head = std::pair<double, std::size_t>;  // forecast, fold
    std::priority_queue<Head, std::vector<Head>, std::greater<Head>> heads;
    std::vector<std::size_t> at(first.begin(), first.end() - 1);
    for (std::size_t j = 0; j < folds.count; ++j)
      if (at[j] < first[j + 1]) heads.emplace(f[by_fold[at[j]]], j);
    while (!heads.empty()) {
      const std::size_t j = heads.top().second;
      heads.pop();
      visit(by_fold[at[j]]);
      if (++at[j] < first[j + 1]) heads.emplace(f[by_fold[at[j]]], j);
    }
  };
  std::vector<double> score, positive, weight;
  score.reserve(m);
  positive.reserve(m);
  weight.reserve(m);
  // The merged order, kept for the second visit (the values of the pools).
  std::vector<std::uint32_t> order;
  order.reserve(first[folds.count]);
  merged([&](std::uint32_t e) {
    order.push_back(e);
    if (score.empty() || f[e] != score.back()) {
      score.push_back(f[e]);
      positive.push_back(0.0);
      weight.push_back(0.0);
    }
    positive.back() += static_cast<double>(c.positives[e]);
    weight.back() += static_cast<double>(c.rows[e]);
  });
  // The folds' runs are read no more: their memory goes before the values'.
  std::vector<std::uint32_t>().swap(by_fold);
  const std::vector<PavBlock> blocks = pav_fit_cells(score, positive, weight);
  std::vector<double>().swap(positive);
  std::vector<double>().swap(weight);
  std::vector<double> r(m, 0.0);
  std::size_t b = 0;
  for (const std::uint32_t e : order) {
    while (b + 1 < blocks.size() && !(f[e] < blocks[b + 1].score_lo)) ++b;
    r[e] = blocks[b].value;
  }
  return r;
}

// Each scored fold's AUC of forecast f (one per cell), over that fold's
// cells, then their mean (mean_fold_auc). A fold's cells come in score
// order, so under a monotone map they are already sorted by forecast.
double cell_auc(std::span<const double> f, const Cells& c, const Folds& folds) {
  std::vector<std::vector<std::uint32_t>> members(folds.count);
  for (std::size_t e = 0; e < c.size(); ++e)
    if (fold_scored(folds, c.fold[e])) members[c.fold[e]].push_back(static_cast<std::uint32_t>(e));
  std::vector<double> fold_auc(folds.count, std::numeric_limits<double>::quiet_NaN()), fold_weight(folds.count, 0.0);
  std::vector<double> positives, negatives;
  for (std::size_t j = 0; j < folds.count; ++j) {
    std::vector<std::uint32_t>& m = members[j];
    if (m.empty()) continue;
    auto by_forecast = [&](std::uint32_t a, std::uint32_t b) { return f[a] < f[b]; };
    if (!std::is_sorted(m.begin(), m.end(), by_forecast)) std::stable_sort(m.begin(), m.end(), by_forecast);
    positives.clear();
    negatives.clear();
    for (std::size_t k = 0; k < m.size(); ++k) {
      const std::uint32_t e = m[k];
      const double pos = c.positives[e], neg = static_cast<double>(c.rows[e]) - c.positives[e];
      fold_weight[j] += c.rows[e];
      if (k > 0 && f[e] == f[m[k - 1]]) {
        positives.back() += pos;
        negatives.back() += neg;
      } else {
        positives.push_back(pos);
        negatives.push_back(neg);
      }
    }
    fold_auc[j] = auc_cells(positives, negatives);
  }
  return mean_fold_auc(fold_auc, fold_weight);
}

// The figures of forecast f (one per cell) on the scored rows, each sum
// added row by row in score order as figures() adds it over the same rows:
// log_loss, brier_score, calibration_error (equal width, 10 bins),
// corp_decomposition's Brier miscalibration and the per-fold log loss, with
// every row's weight 1.
OutOfFoldFigures cell_figures(std::span<const double> f, const Cells& c, const Folds& folds) {
  const std::size_t m = c.size();
  constexpr std::size_t bins = 10;
  // Per cell what its rows add: the forecast, its PAV value, the log-loss
  // term of either label (one cache line holds two cells), and its bin.
  struct Terms {
    double p, r, t[2];
  };
  std::vector<Terms> cell(m);
  std::vector<std::uint8_t> bin(m);
  {
    const std::vector<double> r = cell_pav(f, c, folds);
    for (std::size_t e = 0; e < m; ++e) {
      if (!fold_scored(folds, c.fold[e])) continue;
      cell[e] = Terms{f[e], r[e], {log_loss_term(f[e], 0.0), log_loss_term(f[e], 1.0)}};
      bin[e] = static_cast<std::uint8_t>(equal_width_bin(f[e], bins));
    }
  }
  // Counts (rows, positives: the bins' weights, squared weights and labels,
  // the totals, the folds' weights) are the same summed per cell as per row;
  // the sums of per-row terms are added row by row, as figures() adds them.
  // Every row weighs 1, so w * x is x and w * d * d is d * d.
  std::vector<BinSums> sums(bins);
  for (auto& s : sums) s.forecast_min = s.forecast_max = std::numeric_limits<double>::quiet_NaN();
  std::vector<double> loss(folds.count, 0.0), weight(folds.count, 0.0);
  double total = 0.0;
  for (std::size_t e = 0; e < m; ++e) {
    if (!fold_scored(folds, c.fold[e])) continue;
    BinSums& s = sums[bin[e]];
    const double rows = static_cast<double>(c.rows[e]);
    if (s.rows == 0) {
      s.forecast_min = s.forecast_max = f[e];
    } else {
      s.forecast_min = std::min(s.forecast_min, f[e]);
      s.forecast_max = std::max(s.forecast_max, f[e]);
    }
    s.rows += c.rows[e];
    s.weight += rows;
    s.weight_sq += rows;
    s.label += static_cast<double>(c.positives[e]);
    weight[c.fold[e]] += rows;
    total += rows;
  }
  double log_sum = 0.0, brier_sum = 0.0, brier_pav = 0.0;
  std::array<double, bins> forecast{};
  const bool all_scored = !folds.forward_chaining;
  for (const std::uint32_t code : c.code) {
    const std::uint32_t e = code & ~label_bit;
    const std::uint32_t j = c.fold[e];
    if (!all_scored && !fold_scored(folds, j)) continue;
    const std::size_t positive = (code & label_bit) != 0 ? 1 : 0;
    const double y = static_cast<double>(positive);
    const Terms& ct = cell[e];
    const double t = ct.t[positive];
    log_sum += t;
    const double d = ct.p - y;
    brier_sum += d * d;  // the Brier score's sum, and corp_decomposition's of the forecasts
    forecast[bin[e]] += ct.p;
    const double dr = ct.r - y;
    brier_pav += dr * dr;
    loss[j] += t;
  }
  for (std::size_t b = 0; b < bins; ++b) sums[b].forecast = forecast[b];
  OutOfFoldFigures out;
  out.log_loss = log_sum / total;
  out.brier = brier_sum / total;
  out.ece = calibration_error(sums, BinningKind::equal_width).ece;
  out.mcb = (brier_sum - brier_pav) / total;  // corp_terms' mcb
  out.auc = cell_auc(f, c, folds);
  set_fold_log_loss(out, loss, weight);
  return out;
}

CrossFitResult cross_fit_cells(const FitData& data, const Folds& folds, std::span<const std::string> kinds,
                               const MapOptions& options, const std::function<void()>& rows_read) {
  CrossFitResult r;
  const Cells c = make_cells(data, folds, r.cell_of_row);
  if (rows_read) rows_read();
  const std::size_t m = c.size();
  std::vector<std::size_t> tested(folds.count, 0);
  std::size_t scored = 0;
  for (std::size_t e = 0; e < m; ++e)
    if (fold_scored(folds, c.fold[e])) {
      tested[c.fold[e]] += c.rows[e];
      scored += c.rows[e];
    }
  r.scored_rows = scored;
  if (scored == 0) throw Error(ErrorKind::fit, "no row is scored out of fold");

  // The raw score's figures need no map: they are worked out beside the
  // fits, by the first thread to run out of folds.
  const auto raw_figures = [&] {
    std::vector<double> raw(m);
    for (std::size_t g = 0; g + 1 < c.group_first.size(); ++g)
      for (std::size_t e = c.group_first[g]; e < c.group_first[g + 1]; ++e) raw[e] = c.group_score[g];
    r.raw = cell_figures(raw, c, folds);
    r.has_raw = true;
  };
  fit_folds(
      r, folds, kinds, tested, data.scale, options,
      [&](std::size_t j, Tally& sums) { cell_training_sums(c, folds, j, sums); },
      data.scale == Scale::probability ? std::function<void()>(raw_figures) : std::function<void()>());
  r.all_rows.scale = data.scale;
  cell_training_sums(c, folds, folds.count, r.all_rows);

  // Each scored cell by its fold's map, then the figures of each candidate.
  for (Candidate& cand : r.candidates) {
    cand.oof.assign(m, std::numeric_limits<double>::quiet_NaN());
    for (std::size_t g = 0; g + 1 < c.group_first.size(); ++g)
      for (std::size_t e = c.group_first[g]; e < c.group_first[g + 1]; ++e)
        if (fold_scored(folds, c.fold[e])) cand.oof[e] = cand.fold_maps[c.fold[e]]->map(c.group_score[g]).probability;
    cand.figures = cell_figures(cand.oof, c, folds);
  }

  // Best by out-of-fold log loss; then paired differences against it, per
  // cell and label once, summed row by row. The best's own differences are
  // all 0 (a term minus itself), which the passes below add up to 0 too.
  pick_best(r);
  const Candidate& best = r.candidates[r.best];
  std::vector<double> best_term(2 * m), diff(2 * m);
  for (std::size_t e = 0; e < m; ++e) {
    if (!fold_scored(folds, c.fold[e])) continue;
    best_term[2 * e] = log_loss_term(best.oof[e], 0.0);
    best_term[2 * e + 1] = log_loss_term(best.oof[e], 1.0);
  }
  for (std::size_t k = 0; k < r.candidates.size(); ++k) {
    Candidate& cand = r.candidates[k];
    if (k == r.best) {
      cand.diff_vs_best = 0.0;
      cand.diff_se = 0.0;
      continue;
    }
    for (std::size_t e = 0; e < m; ++e) {
      if (!fold_scored(folds, c.fold[e])) continue;
      diff[2 * e] = log_loss_term(cand.oof[e], 0.0) - best_term[2 * e];
      diff[2 * e + 1] = log_loss_term(cand.oof[e], 1.0) - best_term[2 * e + 1];
    }
    const double w = 1.0;
    double w_total = 0.0, sum = 0.0;
    for (const std::uint32_t code : c.code) {
      const std::uint32_t e = code & ~label_bit;
      if (!fold_scored(folds, c.fold[e])) continue;
      sum += w * diff[2 * e + ((code & label_bit) != 0 ? 1 : 0)];
      w_total += w;
    }
    const double mean = sum / w_total;
    double ss = 0.0;
    for (const std::uint32_t code : c.code) {
      const std::uint32_t e = code & ~label_bit;
      if (!fold_scored(folds, c.fold[e])) continue;
      const double d = diff[2 * e + ((code & label_bit) != 0 ? 1 : 0)];
      ss += w * (d - mean) * (d - mean);
    }
    cand.diff_vs_best = mean;
    cand.diff_se = w_total > 1.0 ? std::sqrt(ss / (w_total - 1.0) / w_total) : 0.0;
  }
  choose(r);
  return r;
}

// Whether the cells give the per-row numbers bit for bit: no weights, labels
// exactly 0 or 1, no score of -0 (a map may tell it from +0, a cell would
// not), fewer than 2^31 rows and folds (a cell number or a fold and the label
// share 32 bits).
bool cells_apply(const FitData& data, const Folds& folds) {
  if (!data.weight.empty() || data.score.size() >= label_bit) return false;
  if (folds.count >= label_bit) return false;  // the fold and the label share 32 bits while sorting
  for (double y : data.label)
    if (y != 0.0 && y != 1.0) return false;
  for (double s : data.score)
    if (s == 0.0 && std::signbit(s)) return false;
  return true;
}

}  // namespace

CrossFitResult cross_fit(const FitData& data, Folds folds, std::span<const std::string> kinds,
                         const MapOptions& options, const std::function<void()>& rows_read, double negative_rate) {
  if (kinds.empty()) throw Error(ErrorKind::usage, "no candidate maps", {}, {}, "at least one kind in --map");
  if (!(negative_rate > 0.0 && negative_rate <= 1.0))
    throw Error(ErrorKind::usage, "the negative rate lies outside (0, 1]", {}, std::to_string(negative_rate),
                "the rate at which negative rows were kept");
  const std::size_t n = data.score.size();
  if (folds.fold_of_row.size() != n) throw Error(ErrorKind::internal, "cross_fit: folds made for other rows");
  CrossFitResult r;
  // The cells weigh every row 1: a negative rate takes the per-row path.
  if (negative_rate == 1.0 && cells_apply(data, folds))
    r = cross_fit_cells(data, folds, kinds, options, rows_read);
  else if (std::is_sorted(data.score.begin(), data.score.end()))
    r = cross_fit_sorted(data, folds, kinds, options, negative_rate);
  // 32-bit row numbers where they suffice: half the memory and the traffic.
  else if (n <= std::numeric_limits<std::uint32_t>::max())
    r = cross_fit_reordered<std::uint32_t>(data, folds, kinds, options, rows_read, negative_rate);
  else
    r = cross_fit_reordered<std::size_t>(data, folds, kinds, options, rows_read, negative_rate);
  r.folds = std::move(folds);
  return r;
}

}  // namespace plumb
