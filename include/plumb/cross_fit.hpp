#pragma once
// Cross-fitting: every candidate map is fitted on each fold's training rows
// and scores only that fold's held-out rows, so every figure is out of fold.
#include <cstddef>
#include <cstdint>
#include <functional>
#include <limits>
#include <memory>
#include <span>
#include <string>
#include <vector>

#include "plumb/calibration_map.hpp"
#include "plumb/folds.hpp"
#include "plumb/tally.hpp"

namespace plumb {

// The out-of-fold figures of one forecast (a candidate map, or the raw score).
struct OutOfFoldFigures {
  double log_loss = 0.0;  // weighted means over the scored rows
  double brier = 0.0;
  double ece = 0.0;        // equal-width, 10 bins
  double mcb = 0.0;        // CORP miscalibration of the Brier score
  // Area under the ROC curve (plumb/auc.hpp, ties counting one half) of each
  // scored fold's rows under that fold's map, averaged over the folds
  // weighted by their rows' weight (folds of one class left out; NaN when
  // all are): the ranking one map gives rows it did not see, so a strictly
  // increasing map has the raw score's AUC and isotonic's ties show.
  double auc = 0.0;
  std::vector<double> fold_log_loss;  // per scored fold, in fold order
  double fold_log_loss_sd = 0.0;      // their standard deviation (n - 1 divisor)
};

struct Candidate {
  std::string kind;
  // Out-of-fold probability per cell of CrossFitResult::cell_of_row (one per
  // row when that is empty); NaN for cells of rows that are not scored. Read
  // a row's probability with CrossFitResult::oof.
  std::vector<double> oof;
  OutOfFoldFigures figures;
  // Paired per-row difference of log loss against the best candidate
  // (this minus best): weighted mean and its standard error. 0 for the best.
  double diff_vs_best = 0.0;
  double diff_se = 0.0;
  // One per fold (time: fold 0 has none), fitted with
  // MapOptions::row_diagnostics false: their diagnostics hold the fit's
  // iterations, convergence and notes, a log loss of NaN and no clipped rows.
  std::vector<std::unique_ptr<CalibrationMap>> fold_maps;
};

struct CrossFitResult {
  Folds folds;
  std::vector<Candidate> candidates;  // in the order asked
  bool has_raw = false;               // the raw score is a probability
  OutOfFoldFigures raw;               // its figures on the same scored rows
  std::size_t scored_rows = 0;
  std::size_t best = 0;    // lowest out-of-fold log loss
  std::size_t chosen = 0;  // the simplest candidate within one standard error of the best
  std::string reason;      // why, in plain clauses without the chosen kind's name in front
                           // ("beta has the lowest out-of-fold log loss; platt is simpler and ...")
  // The cell of each input row: rows of one score and one fold share their
  // out-of-fold probabilities, so each candidate keeps one per (score, fold)
  // cell. Empty when every row is its own cell (weighted rows, fractional
  // labels, a score of -0: the per-row computation).
  std::vector<std::uint32_t> cell_of_row;
  // The per-score sums of every row, exactly as tally_scores gives them, so
  // that fit_map_on_tally(kind, all_rows, options) is fit_map(kind, rows,
  // options) bit for bit without sorting the rows again (the final refit).
  Tally all_rows;

  // Candidate c's out-of-fold probability of input row i (NaN when the row is
  // not scored).
  double oof(std::size_t c, std::size_t i) const noexcept {
    return candidates[c].oof[cell_of_row.empty() ? i : cell_of_row[i]];
  }
};

// Rank of a kind's flexibility, lower is simpler: the map registry's
// MapKind::complexity (temperature 1, platt 2, beta 3, histogram 4, isotonic
// 5, centered_isotonic 6); above every rank for a kind that is not fittable.
int complexity(std::string_view kind) noexcept;

// Cross-fits every kind in `kinds` on `data` over `folds`. Precondition: the
// folds were made for these rows. Throws plumb::Error(fit) when a fold's
// training rows cannot support a fit (say, one class only), naming the fold.
// Deterministic: the same inputs give the same result. Unweighted rows with
// 0/1 labels are computed on per-(score, fold) cells: one sort of the rows
// (a stable radix sort), each sum over rows still added row by row in score
// order, so the figures are those of the per-row computation bit for bit;
// memory holds the cells and a 32-bit cell number per row, not a probability
// per row and candidate.
// `folds` is moved into the result. `rows_read`, when given, is called once
// cross_fit will read data's spans no more (on the cell path, once the cells
// are made; on the per-row path, once the rows are copied in score order),
// so that a caller may give their memory back while the maps are fitted.
// `negative_rate` in (0, 1]: the rows kept each negative at this rate (a
// downsampled data set; 1: all kept, the default). The fold maps are fitted
// on the rows as they are; every candidate's out-of-fold probability
// (Candidate::oof) has its odds multiplied by the rate (multiply_odds), and
// every figure and paired difference weighs each negative row (label 0.5 or
// less) by its weight divided by the rate, so the evidence is that of the
// population the rows were drawn from (the raw score's figures weigh the
// rows so too, its probabilities as given). Such a rate takes the per-row
// path. Throws plumb::Error(usage) for a rate outside (0, 1].
CrossFitResult cross_fit(const FitData& data, Folds folds, std::span<const std::string> kinds,
                         const MapOptions& options, const std::function<void()>& rows_read = {},
                         double negative_rate = 1.0);

}  // namespace plumb
