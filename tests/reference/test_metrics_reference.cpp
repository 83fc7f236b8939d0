// The metric core against R on open data sets (tests/reference/metrics_reference.R):
// MASS::Pima.te scored by a glm fitted on MASS::Pima.tr, and MASS::biopsy
// (NA rows removed) scored by a glm fitted on a seeded half.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <iostream>
#include <map>
#include <string>

#include "plumb/auc.hpp"
#include "plumb/calibration_error.hpp"
#include "plumb/calibration_regression.hpp"
#include "plumb/corp.hpp"
#include "plumb/goodness_of_fit.hpp"
#include "plumb/reliability.hpp"
#include "plumb/scores.hpp"
#include "support/reference.hpp"

namespace {

// Largest absolute difference seen per check, printed at the end of the case.
struct Diffs {
  std::map<std::string, double> largest;
  void check(const std::string& what, double ours, double theirs, double tol) {
    const double d = std::abs(ours - theirs);
    double& m = largest[what];
    m = std::max(m, d);
    INFO(what << ": plumb " << ours << " R " << theirs);
    CHECK(d <= tol);
  }
};

constexpr double exact = 1e-9;   // closed-form quantities
constexpr double fitted = 1e-6;  // iterative fits (glm)

}  // namespace

TEST_CASE("Metric core agrees with R on MASS::Pima and MASS::biopsy", "[metrics][reference]") {
  const std::string dir = plumb::test::scratch_dir("metrics_reference");
  plumb::test::run_r("metrics_reference.R", dir);
  Diffs diffs;
  for (const std::string name : {"pima", "biopsy"}) {
    auto rows = plumb::test::read_numeric_csv(dir + "/" + name + "_rows.csv");
    auto ans = plumb::test::read_numeric_csv(dir + "/" + name + "_answers.csv");
    auto bins = plumb::test::read_numeric_csv(dir + "/" + name + "_bins.csv");
    const auto& p = rows.at("forecast");
    const auto& y = rows.at("label");
    REQUIRE(p.size() > 100);
    auto r = [&](const char* key) { return ans.at(key).at(0); };

    // Reference: R mean((p - y)^2), Brier (1950).
    diffs.check("brier", plumb::brier_score(p, y), r("brier"), exact);
    // Reference: R, mean log loss with the same clip at 1e-12.
    diffs.check("log_loss", plumb::log_loss(p, y), r("log_loss"), exact);

    // Reference: R tapply over the same bins, Naeini et al. (2015) ECE/MCE,
    // Kumar, Liang and Ma (2019) debiased squared l2.
    for (auto [kind, tag] : {std::pair{plumb::BinningKind::equal_width, std::string("width")},
                             std::pair{plumb::BinningKind::equal_mass, std::string("mass")}}) {
      const auto ce = plumb::calibration_error(p, y, {}, kind, 10);
      diffs.check("ece_" + tag, ce.ece, r(("ece_" + tag).c_str()), exact);
      diffs.check("mce_" + tag, ce.mce, r(("mce_" + tag).c_str()), exact);
      diffs.check("l2_plugin_" + tag, ce.l2_plugin, r(("l2_plugin_" + tag).c_str()), exact);
      diffs.check("l2sq_debiased_" + tag, ce.l2_squared_debiased,
                  r(("l2sq_debiased_" + tag).c_str()), exact);

      // Reference: R stats::prop.test(correct = FALSE), the Wilson (1927) interval.
      const auto table = plumb::reliability_table(p, y, {}, kind, 10, 0.95);
      const double kind_code = kind == plumb::BinningKind::equal_width ? 0 : 1;
      std::size_t matched = 0;
      for (std::size_t j = 0; j < bins.at("bin").size(); ++j) {
        if (bins.at("kind")[j] != kind_code) continue;
        const auto& b = table.bins.at(static_cast<std::size_t>(bins.at("bin")[j]));
        ++matched;
        CHECK(static_cast<double>(b.rows) == bins.at("rows")[j]);
        diffs.check("bin_mean_forecast", b.mean_forecast, bins.at("mean_forecast")[j], exact);
        diffs.check("bin_observed", b.observed, bins.at("observed")[j], exact);
        diffs.check("wilson_lo", b.observed_lo, bins.at("wilson_lo")[j], exact);
        diffs.check("wilson_hi", b.observed_hi, bins.at("wilson_hi")[j], exact);
      }
      std::size_t nonempty = 0;
      for (const auto& b : table.bins) nonempty += b.rows > 0;
      CHECK(matched == nonempty);
    }

    // Reference: R stats::pchisq(lower.tail = FALSE), Hosmer and Lemeshow (1980), g - 2 df.
    const auto hl = plumb::hosmer_lemeshow(p, y, {}, 10);
    diffs.check("hl_statistic", hl.statistic, r("hl_statistic"), exact);
    CHECK(hl.df == r("hl_df"));
    diffs.check("hl_p", hl.p_value, r("hl_p"), exact);

    // Reference: R stats::pnorm, Spiegelhalter (1986).
    const auto sz = plumb::spiegelhalter_z(p, y);
    diffs.check("spiegelhalter_z", sz.z, r("spiegelhalter_z"), exact);
    diffs.check("spiegelhalter_p", sz.p_value, r("spiegelhalter_p"), exact);

    // Reference: R stats::glm(binomial) on qlogis(p), with and without offset; Cox (1958).
    const auto cr = plumb::calibration_regression(p, y);
    INFO("calibration regression converged: " << cr.converged);
    diffs.check("slope", cr.slope, r("slope"), fitted);
    diffs.check("intercept_free", cr.intercept_free, r("intercept_free"), fitted);
    diffs.check("intercept_at_unit_slope", cr.intercept_at_unit_slope,
                r("intercept_at_unit_slope"), fitted);
    diffs.check("citl", plumb::calibration_in_the_large(p, y), r("citl"), exact);

    // Reference: Iso::pava on tie-pooled forecasts; Dimitriadis, Gneiting and Jordan (2021).
    const auto c = plumb::corp_decomposition(p, y);
    diffs.check("corp_brier_mcb", c.brier.mcb, r("corp_brier_mcb"), exact);
    diffs.check("corp_brier_dsc", c.brier.dsc, r("corp_brier_dsc"), exact);
    diffs.check("corp_brier_unc", c.brier.unc, r("corp_brier_unc"), exact);
    diffs.check("corp_log_mcb", c.log_loss.mcb, r("corp_log_mcb"), exact);
    diffs.check("corp_log_dsc", c.log_loss.dsc, r("corp_log_dsc"), exact);
    diffs.check("corp_log_unc", c.log_loss.unc, r("corp_log_unc"), exact);

    // Reference: R stats::wilcox.test statistic W / (n1 n0); Hanley and McNeil (1982).
    diffs.check("auc", plumb::auc(p, y), r("auc"), exact);
  }
  for (const auto& [what, d] : diffs.largest)
    std::cout << "metrics reference, largest |plumb - R| for " << what << ": " << d << "\n";
}
