#pragma once
// Venn-Abers maps: the inductive Venn-Abers predictor (Vovk and Petej 2014,
// "Venn-Abers predictors") and its cross form (Vovk, Petej and Fedorova
// 2015, "Large-scale probabilistic predictors with and without guarantees of
// validity").
//
// Inductive form: for a test score s, p0 is the isotonic (PAV) fit at s of
// the calibration rows with the test row added at s with label 0, p1 the
// same with label 1; the map's probability is the merge p1 / (1 - p0 + p1).
// The test row weighs 1, as one calibration row of unit weight does.
//
// Nothing is refitted per score: the fit computes p0 and p1 for every place
// a test score can take, each distinct calibration score x[j] and each open
// gap between neighbours (below the first, between x[j-1] and x[j], above
// the last), in one pass over the sorted scores (venn_abers_knots), and the
// map looks a score's place up.
//
// Cross form: the rows are dealt into K folds by a fixed-seed generator (a
// fit on rows and one on their tally deal the same rows alike); each fold is
// an inductive predictor's calibration set, and the folds' p0_k, p1_k are
// merged by the log-loss rule of Vovk, Petej and Fedorova (2015):
// p = G1 / (G0 + G1), G1 the geometric mean of the p1_k and G0 that of the
// (1 - p0_k). Its interval is the folds' arithmetic means of p0_k and p1_k.
#include <cstdint>
#include <memory>
#include <span>
#include <vector>

#include "plumb/calibration_map.hpp"

namespace plumb {

// p0 and p1 at every place a test score can take (see above): `at` for the
// k distinct scores, `between` for the k + 1 gaps (between[j] lies below
// score[j]; between[k] above the last).
struct VennAbersKnots {
  std::vector<double> score;
  std::vector<double> p0_at, p1_at;            // k entries
  std::vector<double> p0_between, p1_between;  // k + 1 entries
};

// Rows merged into points of distinct score, ascending: each point's total
// weight and weighted label sum (rows of weight 0 left out).
struct VennAbersPoints {
  std::vector<double> score, weight, label_sum;
};
VennAbersPoints venn_abers_points(const FitData& data);

// The cross form's folds: every row of `all` (each point's negatives, then
// its positives, counted by their whole-number weights) dealt to one of
// `folds` folds by splitmix64 from a fixed seed, point by point in score
// order; the same points give the same folds. Throws Error(fit) for a weight
// that is not a whole number and for a fold left without rows.
std::vector<VennAbersPoints> venn_abers_folds(const VennAbersPoints& all, int folds);

// The knots of the inductive predictor calibrated on points of distinct,
// strictly increasing `score`, each with total weight weight[i] > 0 and
// weighted label sum label_sum[i] in [0, weight[i]]; the test row weighs 1.
// Each p0/p1 is the value of the test row's block in the PAV fit with the
// test row added (the sums of its block divided). Cost: the stacks of both
// sides in O(k) all told; per place, up to `linear_steps` poolings one by
// one, then binary searches over the stacks, O(log^2 k): O(k log^2 k) at
// worst. The two ways give the same block; its sums are added in another
// order (exact for whole-number weights). Empty input gives one gap with
// p0 = 0, p1 = 1.
VennAbersKnots venn_abers_knots(std::span<const double> score, std::span<const double> weight,
                                std::span<const double> label_sum, std::size_t linear_steps = 32);

// The map as stored: the places in order (gap 0, knot 0, gap 1, ..., gap k)
// cut into runs of equal values, one step per run. With many rows the test
// row pools with the same blocks over long stretches of places, so the runs
// are far fewer than the places (845 for 474,273 knots on 10^6 rows of
// bench/make_rows.py), and the map is as small and as quick as an isotonic
// map. Step r + 1 starts at step_score[r]: a score equal to it belongs to
// step r + 1 when step_closed[r] (the run starts at that knot), else to step
// r (the run starts in the gap above the knot).
struct VennAbersSteps {
  std::vector<double> step_score;        // R - 1 entries, non-decreasing
  std::vector<unsigned char> step_closed;  // R - 1 entries, 0 or 1
  std::vector<double> p0, p1;            // R entries
  std::vector<double> probability;       // R entries (cross form); empty: p1 / (1 - p0 + p1)
};
// The runs of `knots` (and, when given, of the probability at each place:
// `at` k entries, `between` k + 1).
VennAbersSteps venn_abers_steps(const VennAbersKnots& knots, std::span<const double> probability_at = {},
                                std::span<const double> probability_between = {});

class VennAbersMap final : public CalibrationMap {
 public:
  // Inductive form: folds = 0, steps.probability empty (computed from p0
  // and p1). Cross form: folds >= 2, steps.probability filled.
  // [fitted_lo, fitted_hi]: the first and last knot; `knots` their number.
  // Preconditions as from_parameters checks.
  VennAbersMap(Scale scale, VennAbersSteps steps, int folds, double fitted_lo, double fitted_hi, std::size_t knots,
               double calibration_weight);

  static bool accepts(Scale) noexcept { return true; }
  // The inductive form on every row of `data`.
  static std::unique_ptr<CalibrationMap> fit(const FitData& data, const MapOptions& options);
  // The cross form with options.venn_folds folds. Throws Error(fit) for
  // weights that are not whole numbers (rows cannot be dealt into folds) and
  // for fewer rows than folds.
  static std::unique_ptr<CalibrationMap> fit_cross(const FitData& data, const MapOptions& options);
  static std::unique_ptr<CalibrationMap> from_parameters(Scale scale, const nlohmann::json& parameters,
                                                         const std::string& where);
  static std::unique_ptr<CalibrationMap> from_parameters_cross(Scale scale, const nlohmann::json& parameters,
                                                               const std::string& where);

  std::string_view kind() const noexcept override { return folds_ == 0 ? "venn_abers" : "cross_venn_abers"; }
  Scale scale() const noexcept override { return scale_; }
  // The merged probability at the score's place. Flagged outside_fit_range
  // below the first or above the last calibration score, where the place is
  // an end gap and the value is held.
  Mapped map(double score) const noexcept override;
  nlohmann::json parameters() const override;
  // p0 and p1 never fall from step to step (checked on load).
  bool monotone() const noexcept override { return true; }
  bool has_interval() const noexcept override { return true; }
  // [p0, p1] at the score's place (cross form: the folds' means).
  std::array<double, 2> interval(double score) const noexcept override;

  const VennAbersSteps& steps() const noexcept { return s_; }
  int folds() const noexcept { return folds_; }

 private:
  Scale scale_;
  VennAbersSteps s_;
  int folds_;
  double lo_, hi_;
  std::size_t knots_;
  double calibration_weight_;
  // A guide for the search, as the isotonic map's: the steps' score range
  // cut into equal buckets, each holding the last step score at or before
  // its start.
  std::vector<std::uint32_t> guide_;
  double guide_origin_ = 0.0, guide_scale_ = 0.0;
  std::size_t step_of(double score) const noexcept;
};

}  // namespace plumb
