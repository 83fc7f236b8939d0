// The ranking-safe maps on held-out open data (tests/reference/ranking_safe.R):
// MASS::Pima.tr scored by a binomial glm fitted there calibrates the maps,
// MASS::Pima.te (332 women the glm and the maps never saw) measures them.
// The issue's targets (issue 14): the strict centered isotonic map keeps the
// raw scores' AUC to within 0.001 and its log loss within 1% of plain
// isotonic's. R's wilcox.test gives the raw AUC.
#include <catch2/catch.hpp>
#include <cmath>
#include <string>
#include <vector>

#include "plumb/auc.hpp"
#include "plumb/calibration_map.hpp"
#include "support/reference.hpp"

TEST_CASE("centered isotonic, strict, on held-out MASS::Pima: AUC kept, log loss of isotonic",
          "[centered_isotonic][reference]") {
  const std::string dir = plumb::test::scratch_dir("ranking_safe");
  plumb::test::run_r("ranking_safe.R", dir);
  const auto fit = plumb::test::read_numeric_csv(dir + "/fit.csv");
  const auto test = plumb::test::read_numeric_csv(dir + "/test.csv");
  const auto answers = plumb::test::read_numeric_csv(dir + "/answers.csv");
  const std::vector<double>&fp = fit.at("p"), &fy = fit.at("y"), &tp = test.at("p"), &ty = test.at("y");
  REQUIRE(fp.size() == 200);
  REQUIRE(tp.size() == 332);
  const double raw_auc = plumb::auc(tp, ty);
  CHECK(raw_auc == Approx(answers.at("auc").at(0)).epsilon(1e-12));  // R's Mann-Whitney

  const plumb::FitData fit_data{fp, fy, {}, plumb::Scale::probability};
  const plumb::FitData test_data{tp, ty, {}, plumb::Scale::probability};
  plumb::MapOptions strict;
  strict.centered_strict = true;
  const auto iso = plumb::fit_map("isotonic", fit_data);
  const auto cir = plumb::fit_map("centered_isotonic", fit_data, strict);
  std::vector<double> iso_p, cir_p;
  for (double s : tp) {
    iso_p.push_back(iso->map(s).probability);
    cir_p.push_back(cir->map(s).probability);
  }
  const double iso_ll = plumb::mean_log_loss(*iso, test_data), cir_ll = plumb::mean_log_loss(*cir, test_data);
  WARN("Pima.te: AUC raw " << raw_auc << ", isotonic " << plumb::auc(iso_p, ty) << ", strict centered "
                           << plumb::auc(cir_p, ty) << "; log loss isotonic " << iso_ll << ", strict centered "
                           << cir_ll);
  CHECK(std::abs(plumb::auc(cir_p, ty) - raw_auc) <= 0.001);
  CHECK(cir_ll <= 1.01 * iso_ll);
}
