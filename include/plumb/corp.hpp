#pragma once
// CORP decomposition of a proper score (Dimitriadis, Gneiting and Jordan 2021,
// PNAS 118(8)): miscalibration, discrimination and uncertainty from the
// pool-adjacent-violators recalibration of the labels on the forecasts.
#include <span>
#include <vector>

namespace plumb {

// With S the weighted mean score, x the forecasts, x_pav their PAV
// recalibration (weighted isotonic regression of label on forecast, ties
// pooled; pav.hpp) and o the overall observed rate as a constant forecast:
//   mcb = S(x) - S(x_pav)    miscalibration, >= 0 up to rounding
//   dsc = S(o) - S(x_pav)    discrimination, >= 0 up to rounding
//   unc = S(o)               uncertainty
// so that score = mcb - dsc + unc to rounding. PAV is optimal for the Brier
// score and the log loss at once, so both decompositions share one fit.
struct CorpTerms {
  double score = 0.0;
  double mcb = 0.0;
  double dsc = 0.0;
  double unc = 0.0;
};

// The terms from weighted sums of one score's per-row losses: of the
// forecasts (s_x), of their PAV recalibration (s_pav) and of the overall
// rate (s_clim), over a total weight `total` > 0.
CorpTerms corp_terms(double s_x, double s_pav, double s_clim, double total) noexcept;

struct CorpDecomposition {
  CorpTerms brier;
  CorpTerms log_loss;  // nats, clipped as in scores.hpp (recalibrated values too)
  // The recalibrated forecast of each row, in input order (the CORP
  // reliability curve is forecast against this).
  std::vector<double> recalibrated;
};

CorpDecomposition corp_decomposition(std::span<const double> forecast,
                                     std::span<const double> label,
                                     std::span<const double> weight = {});

// The same given each row's recalibrated forecast (the PAV fit's value at
// the row, in input order, as pav_values gives it), so a caller that has
// fitted PAV once does not fit it again. The sums run over the rows in
// input order, as corp_decomposition's do; `recalibrated` is moved into the
// result.
CorpDecomposition corp_decomposition_given(std::span<const double> forecast,
                                           std::span<const double> label,
                                           std::span<const double> weight,
                                           std::vector<double> recalibrated);

}  // namespace plumb
