#pragma once
// Cross-fitting multi-class maps: folds stratified by class (or any other
// plumb::Folds: grouped, by time, from a column), each candidate fitted on
// its fold's training rows and scored on the fold's rows, and the choice by
// out-of-fold log loss with the one-standard-error rule (the simplest
// candidate whose paired per-row log loss difference from the best is within
// one standard error of it). The multi-class Brier score is reported beside
// the log loss; it does not take part in the choice.
#include <cstdint>
#include <memory>
#include <span>
#include <string>
#include <vector>

#include "plumb/class_map.hpp"
#include "plumb/class_scores.hpp"
#include "plumb/folds.hpp"

namespace plumb {

// Stratified by class: the rows of each class are shuffled (seeded,
// splitmix64) and dealt round-robin over the folds, each class continuing
// where the previous one stopped, so every fold's count of each class (and of
// rows) is within one of every other fold's. Requires 2 <= k <= rows.
// Throws plumb::Error(usage) otherwise.
Folds class_stratified_folds(std::span<const std::uint32_t> label, std::size_t classes, std::size_t k,
                             std::uint64_t seed);

struct ClassCandidateSpec {
  std::string kind;
  ClassMapOptions options;
};

// The candidates of `auto`: temperature, vector, dirichlet at each of
// `l2_grid` (largest first), one_vs_rest with `per_class`.
std::vector<ClassCandidateSpec> auto_class_candidates(std::span<const double> l2_grid, const std::string& per_class);
// dirichlet's L2 grid of `auto`: 1, 0.1, 0.01, 0.001 (common practice:
// Kull et al. 2019 search a grid of powers of ten).
std::vector<double> default_l2_grid();

struct ClassCandidate {
  ClassCandidateSpec spec;
  std::string name;  // "dirichlet l2=0.01", or the kind
  int rank = 0;      // simplicity for the one-standard-error rule: lower is simpler
  double log_loss = 0.0;          // weighted mean out-of-fold log loss
  std::vector<double> fold_log_loss;
  // Weighted mean out-of-fold multi-class Brier score: per row the sum over
  // the K classes of (q_k - [label = k])^2, so in [0, 2] (Brier 1950, the
  // convention of build_class_report), and the standard error of that mean,
  // sqrt(sum w (b - mean)^2 / (W - 1) / W) with W the weight total (the
  // formula of diff_se; 0 when W <= 1).
  double brier = 0.0, brier_se = 0.0;
  double diff_vs_best = 0.0;      // weighted mean paired difference from the best
  double diff_se = 0.0;           // its standard error
  // The map fitted for each fold (folds.count entries; null for a fold that
  // scores no row, such as the first block of a time split).
  std::vector<std::shared_ptr<const ClassCalibrationMap>> fold_maps;
};

struct ClassCrossFitResult {
  std::vector<ClassCandidate> candidates;
  std::size_t best = 0, chosen = 0;
  std::string reason;
  std::uint64_t scored_rows = 0;
  // The chosen candidate's out-of-fold probabilities, rows * K row-major:
  // row i mapped by the map of its own fold, which was fitted without it.
  // A row that no fold scores (the first block of a time split) holds NaN.
  std::vector<double> oof;
};

// Fits every candidate on each fold's training rows (Folds::trains) and
// scores the fold's rows (Folds::scored). Throws plumb::Error(fit) when the
// training rows of a fold that scores rows lack a class (the message names
// the fold and the class), plumb::Error(fit) when no row is scored, and what
// fit_class_map throws.
// Precondition: data is labelled; folds.fold_of_row has data.rows entries,
// each < folds.count.
ClassCrossFitResult class_cross_fit(const ClassScores& data, const Folds& folds,
                                    std::span<const ClassCandidateSpec> candidates);

}  // namespace plumb
