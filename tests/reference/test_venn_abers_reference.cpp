// Venn-Abers knots against a refit per test score in R (tests/reference/
// venn_abers.R): Iso::pava (Turner, Debian r-cran-iso) on MASS::Pima.tr's glm
// scores and labels with the test row added as 0 and as 1, at each score of
// MASS::Pima.te (held out), at each calibration score and at 0 and 1.
#include <catch2/catch.hpp>
#include <cmath>
#include <string>
#include <vector>

#include "plumb/calibration_map.hpp"
#include "support/reference.hpp"

TEST_CASE("venn_abers on MASS::Pima: the precomputed [p0, p1] equal Iso::pava refits", "[venn_abers][reference]") {
  const std::string dir = plumb::test::scratch_dir("venn_abers");
  plumb::test::run_r("venn_abers.R", dir);
  const auto fit = plumb::test::read_numeric_csv(dir + "/fit.csv");
  const auto answers = plumb::test::read_numeric_csv(dir + "/answers.csv");
  const std::vector<double>&fp = fit.at("p"), &fy = fit.at("y");
  REQUIRE(fp.size() == 200);
  const std::vector<double>&s = answers.at("s"), &p0 = answers.at("p0"), &p1 = answers.at("p1");
  REQUIRE(s.size() == 332 + 200 + 2);
  const auto map = plumb::fit_map("venn_abers", plumb::FitData{fp, fy, {}, plumb::Scale::probability});
  double worst = 0.0;
  for (std::size_t i = 0; i < s.size(); ++i) {
    INFO("test score " << s[i]);
    const auto got = map->interval(s[i]);
    CHECK(got[0] == Approx(p0[i]).margin(1e-12));  // Iso::pava, label 0
    CHECK(got[1] == Approx(p1[i]).margin(1e-12));  // Iso::pava, label 1
    // The merge of Vovk and Petej (2014).
    CHECK(map->map(s[i]).probability == Approx(p1[i] / (1.0 - p0[i] + p1[i])).margin(1e-12));
    worst = std::max({worst, std::abs(got[0] - p0[i]), std::abs(got[1] - p1[i])});
  }
  WARN("largest difference from Iso::pava: " << worst);
}
