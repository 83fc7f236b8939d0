// Reference checks of plumb drift's figures against R (tests/reference/drift.R):
// stats::ks.test's statistic and asymptotic p-value, a PSI computed directly
// in R from cut() of the same samples, and the percentile interval of a
// Poisson bootstrap of four labelled changes drawn by R on the same cells.
#include <catch2/catch.hpp>
#include <cmath>
#include <string>
#include <vector>

#include "plumb/drift.hpp"
#include "support/reference.hpp"

namespace {

// A map on the logit scale given by a function, for cases R can state.
class FunctionMap final : public plumb::CalibrationMap {
 public:
  explicit FunctionMap(double (*f)(double)) : f_(f) {}
  std::string_view kind() const noexcept override { return "test"; }
  plumb::Scale scale() const noexcept override { return plumb::Scale::logit; }
  plumb::Mapped map(double score) const noexcept override {
    plumb::Mapped m;
    m.probability = f_(score);
    return m;
  }
  nlohmann::json parameters() const override { return nlohmann::json::object(); }
  bool monotone() const noexcept override { return true; }

 private:
  double (*f_)(double);
};

plumb::GridCells cells_of(const std::vector<double>& scores, double step) {
  plumb::GridCounter counter(plumb::Scale::logit, step, false);
  for (double s : scores) counter.add(s, false);
  return counter.finish();
}

}  // namespace

TEST_CASE("drift's KS, PSI and bootstrap intervals match R", "[drift][reference]") {
  const std::string dir = plumb::test::scratch_dir("drift");
  plumb::test::run_r("drift.R", dir);
  const auto answers = plumb::test::read_numeric_csv(dir + "/answers.csv");
  auto answer = [&](const char* name) { return answers.at(name).at(0); };
  const auto x1 = plumb::test::read_numeric_csv(dir + "/x1.csv").at("v");
  const auto y1 = plumb::test::read_numeric_csv(dir + "/y1.csv").at("v");
  const auto x2 = plumb::test::read_numeric_csv(dir + "/x2.csv").at("v");
  const auto y2 = plumb::test::read_numeric_csv(dir + "/y2.csv").at("v");

  SECTION("two-sample KS against stats::ks.test(exact = FALSE)") {
    // With ties (integer scores, grid step 1): R's statistic takes the
    // ecdfs at the distinct values, as the cells do.
    const plumb::KsResult k1 = plumb::ks_two_sample(cells_of(y1, 1.0), cells_of(x1, 1.0));
    CHECK(k1.statistic == Approx(answer("ks1_d")).margin(1e-12));
    // R sums the series to tol 1e-6 (psmirnov, C_pKS2): agreement to 1e-5.
    CHECK(k1.p_value == Approx(answer("ks1_p")).margin(1e-5));
    // Without ties (five decimals, grid step 1e-5).
    const plumb::KsResult k2 = plumb::ks_two_sample(cells_of(y2, 1e-5), cells_of(x2, 1e-5));
    CHECK(k2.statistic == Approx(answer("ks2_d")).margin(1e-12));
    CHECK(k2.p_value == Approx(answer("ks2_p")).margin(1e-5));
  }

  SECTION("PSI over a step map's pieces against R's cut() at 0 and 2") {
    const FunctionMap steps([](double s) { return s <= 0.0 ? 0.2 : (s <= 2.0 ? 0.5 : 0.8); });
    plumb::DriftOptions options;
    options.bins = 1000;  // at least the pieces: one bin per piece
    options.bootstrap = 0;
    const plumb::DriftResult r = plumb::compute_drift(cells_of(x1, 1.0), cells_of(y1, 1.0), steps, options);
    REQUIRE(r.bins.size() == 3);
    CHECK(r.psi == Approx(answer("psi")).epsilon(1e-12));
  }

  SECTION("bootstrap interval of each change against R's resampling of the same cells") {
    const auto ref = plumb::test::read_numeric_csv(dir + "/ref_cells.csv");
    const auto now = plumb::test::read_numeric_csv(dir + "/now_cells.csv");
    // Cells k = 0..5 on the logit scale (step 1) whose forecasts are R's p.
    static std::vector<double> forecast;
    forecast = ref.at("p");
    REQUIRE(forecast == now.at("p"));
    const FunctionMap table([](double s) { return forecast.at(static_cast<std::size_t>(s)); });
    auto side = [](const std::map<std::string, std::vector<double>>& d) {
      plumb::GridCells g;
      g.scale = plumb::Scale::logit;
      g.step = 1.0;
      g.labelled = true;
      for (std::size_t i = 0; i < d.at("p").size(); ++i) {
        g.index.push_back(static_cast<std::int64_t>(i));
        g.count.push_back(static_cast<std::uint64_t>(d.at("n0")[i] + d.at("n1")[i]));
        g.positive.push_back(static_cast<std::uint64_t>(d.at("n1")[i]));
      }
      return g;
    };
    plumb::DriftOptions options;
    options.bootstrap = 20000;
    options.seed = 7;
    const plumb::DriftResult r = plumb::compute_drift(side(ref), side(now), table, options);
    // The point values are exact sums: R's to rounding.
    CHECK(r.base_rate.difference == Approx(answer("rate")).margin(1e-12));
    CHECK(r.brier.difference == Approx(answer("brier")).margin(1e-12));
    CHECK(r.log_loss.difference == Approx(answer("log_loss")).margin(1e-12));
    CHECK(r.ece.difference == Approx(answer("ece")).margin(1e-12));
    // The ends are Monte Carlo estimates on both sides (different generators,
    // 20,000 replicates each): a 2.5% quantile's standard error is about
    // 0.02 sd of the bootstrap distribution, so two independent estimates
    // differ by about 0.027 sd; the tolerance, 0.1 sd, is over 3.5 of those.
    auto check = [&](const plumb::DriftFigure& f, const std::string& name) {
      INFO(name);
      REQUIRE(f.interval);
      CHECK(f.interval->used == 20000);
      const double sd = answer((name + "_sd").c_str());
      CHECK(std::fabs(f.interval->lo - answer((name + "_lo").c_str())) <= 0.1 * sd);
      CHECK(std::fabs(f.interval->hi - answer((name + "_hi").c_str())) <= 0.1 * sd);
    };
    check(r.base_rate, "rate");
    check(r.brier, "brier");
    check(r.log_loss, "log_loss");
    check(r.ece, "ece");
  }
}
