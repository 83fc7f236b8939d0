// Reference checks of the platt, beta and temperature maps against R.
// Cases (built by tests/reference/parametric_cases.R):
//   1 pima         MASS::Pima.te scored by a binomial glm fitted on MASS::Pima.tr (probability)
//   2 pima_logit   the same glm's linear predictor (logit)
//   3 pima_margin  MASS::lda discriminant fitted on Pima.tr, on Pima.te (margin)
//   4 biopsy       MASS::biopsy without NA rows, glm on V1..V9 fitted on odd rows,
//                  scored on even rows (probability, many scores near 0 and 1)
//   5 sim          seeded simulation with weights, some zero (set.seed(20261202))
#include <catch2/catch.hpp>
#include <algorithm>
#include <cmath>
#include <map>
#include <string>
#include <vector>

#include "plumb/maps/beta_map.hpp"
#include "plumb/maps/platt_map.hpp"
#include "plumb/maps/temperature_map.hpp"
#include "support/reference.hpp"

namespace {

using Columns = std::map<std::string, std::vector<double>>;

const char* const case_names[] = {"", "pima", "pima_logit", "pima_margin", "biopsy", "sim"};
const plumb::Scale case_scales[] = {plumb::Scale::probability, plumb::Scale::probability,
                                    plumb::Scale::logit,       plumb::Scale::margin,
                                    plumb::Scale::probability, plumb::Scale::probability};

struct Case {
  Columns rows;
  plumb::FitData data() const {
    return plumb::FitData{rows.at("score"), rows.at("label"), rows.at("weight"), plumb::Scale::probability};
  }
};

// Runs `script` once per test run and keeps its output directory.
const std::string& r_output(const std::string& script) {
  static std::map<std::string, std::string> done;
  auto it = done.find(script);
  if (it == done.end()) {
    const std::string dir = plumb::test::scratch_dir("parametric_" + script);
    plumb::test::run_r(script, dir);
    it = done.emplace(script, dir).first;
  }
  return it->second;
}

Case load_case(const std::string& dir, int id) {
  return Case{plumb::test::read_numeric_csv(dir + "/" + case_names[id] + "_rows.csv")};
}

double rel_diff(double x, double ref) { return std::abs(x - ref) / std::max(1.0, std::abs(ref)); }

}  // namespace

TEST_CASE("platt matches R glm with and without smoothed targets", "[platt][reference]") {
  // Reference: R stats::glm, binomial on the 0/1 labels (no smoothing) and
  // quasibinomial on Platt's (1999) targets with weighted class totals;
  // A = -slope, B = -intercept. Cases as listed at the top of this file.
  const std::string& dir = r_output("platt_glm.R");
  const Columns answers = plumb::test::read_numeric_csv(dir + "/platt_answers.csv");
  double largest = 0.0;
  for (std::size_t r = 0; r < answers.at("case").size(); ++r) {
    const int id = static_cast<int>(answers.at("case")[r]);
    const bool smoothed = answers.at("smoothed")[r] > 0.5;
    const Case c = load_case(dir, id);
    plumb::FitData data = c.data();
    data.scale = case_scales[id];
    plumb::MapOptions opt;
    opt.platt_smoothed_targets = smoothed;
    const auto m = plumb::PlattMap::fit(data, opt);
    const auto& p = dynamic_cast<const plumb::PlattMap&>(*m);
    INFO("case " << case_names[id] << (smoothed ? " smoothed" : " 0/1 targets"));
    CHECK(m->diagnostics().converged);
    const double da = std::abs(p.a() - answers.at("a")[r]);
    const double db = std::abs(p.b() - answers.at("b")[r]);
    CHECK(da < 1e-6);
    CHECK(db < 1e-6);
    largest = std::max({largest, da, db});
  }
  CHECK(answers.at("case").size() == 10);
  WARN("platt vs R glm: largest coefficient difference " << largest);
}

TEST_CASE("beta matches R glm on ln(s) and -ln(1-s) in every form", "[beta][reference]") {
  // Reference: R stats::glm (binomial) on ln(s) and -ln(1-s) (Kull, Silva
  // Filho and Flach 2017), with the midpoint form as glm without intercept on
  // ln(2s), -ln(2(1-s)) and the shared form as glm on the log-odds; the
  // negative-coefficient refit is coded independently in beta_glm.R.
  // Cases: pima, biopsy, sim (see the top of this file).
  const std::string& dir = r_output("beta_glm.R");
  const Columns answers = plumb::test::read_numeric_csv(dir + "/beta_answers.csv");
  const char* const forms[] = {"", "full", "midpoint", "shared"};
  double largest = 0.0;
  for (std::size_t r = 0; r < answers.at("case").size(); ++r) {
    const int id = static_cast<int>(answers.at("case")[r]);
    const int form = static_cast<int>(answers.at("form")[r]);
    const Case c = load_case(dir, id);
    plumb::MapOptions opt;
    opt.beta_form = forms[form];
    const auto m = plumb::BetaMap::fit(c.data(), opt);
    const auto& b = dynamic_cast<const plumb::BetaMap&>(*m);
    INFO("case " << case_names[id] << " form " << forms[form]);
    CHECK(m->diagnostics().converged);
    const double d[] = {std::abs(b.a() - answers.at("a")[r]), std::abs(b.b() - answers.at("b")[r]),
                        std::abs(b.c() - answers.at("c")[r])};
    for (double x : d) CHECK(x < 1e-6);
    largest = std::max({largest, d[0], d[1], d[2]});
  }
  CHECK(answers.at("case").size() == 9);
  WARN("beta vs R glm: largest coefficient difference " << largest);
}

TEST_CASE("temperature matches R optimize on the weighted log loss", "[temperature][reference]") {
  // Reference: R stats::optimize (tol = 1e-12) of the weighted mean log loss
  // over T in [0.01, 50]. Cases: pima, pima_logit, biopsy, sim.
  const std::string& dir = r_output("temperature_optimize.R");
  const Columns answers = plumb::test::read_numeric_csv(dir + "/temperature_answers.csv");
  double largest_t = 0.0, largest_loss = 0.0;
  for (std::size_t r = 0; r < answers.at("case").size(); ++r) {
    const int id = static_cast<int>(answers.at("case")[r]);
    const Case c = load_case(dir, id);
    plumb::FitData data = c.data();
    data.scale = case_scales[id];
    const auto m = plumb::TemperatureMap::fit(data, {});
    const double t = dynamic_cast<const plumb::TemperatureMap&>(*m).temperature();
    INFO("case " << case_names[id]);
    CHECK(m->diagnostics().converged);
    const double dt = rel_diff(t, answers.at("temperature")[r]);
    CHECK(dt < 1e-6);
    // The fit's reported log loss is the same objective R minimised; ours
    // is at the exact optimum, so it can only be lower (up to rounding).
    const double dl = m->diagnostics().log_loss - answers.at("loss")[r];
    CHECK(dl < 1e-12);
    CHECK(std::abs(dl) < 1e-9);
    largest_t = std::max(largest_t, dt);
    largest_loss = std::max(largest_loss, std::abs(dl));
  }
  CHECK(answers.at("case").size() == 4);
  WARN("temperature vs R optimize: largest relative T difference " << largest_t
                                                                    << ", largest log-loss difference "
                                                                    << largest_loss);
}

TEST_CASE("platt and temperature fit scores of magnitude 1e300 and 1e-300 like R does at ordinary ones",
          "[platt][temperature][reference]") {
  // Reference: the R answers above (stats::glm for platt, stats::optimize for
  // temperature) on the margin and logit cases, with every score multiplied
  // by 2^k. The model depends on the score only through A f (or z / T), so
  // the exact answer on the rescaled rows is A 2^-k (or T 2^k) with B
  // unchanged; a power of two keeps the rescaled rows exact. Before the fit
  // rescaled such columns, x^2 overflowed or underflowed in the Hessian and
  // platt stopped at A = B = 0, reporting convergence.
  const std::string& platt_dir = r_output("platt_glm.R");
  const Columns platt = plumb::test::read_numeric_csv(platt_dir + "/platt_answers.csv");
  const std::string& temp_dir = r_output("temperature_optimize.R");
  const Columns temps = plumb::test::read_numeric_csv(temp_dir + "/temperature_answers.csv");
  int platt_checked = 0, temp_checked = 0;
  for (const int k : {1000, -1000}) {
    for (std::size_t r = 0; r < platt.at("case").size(); ++r) {
      const int id = static_cast<int>(platt.at("case")[r]);
      if (id != 2 && id != 3) continue;  // pima_logit, pima_margin
      Case c = load_case(platt_dir, id);
      for (double& s : c.rows.at("score")) s = std::ldexp(s, k);
      plumb::FitData data = c.data();
      data.scale = case_scales[id];
      plumb::MapOptions opt;
      opt.platt_smoothed_targets = platt.at("smoothed")[r] > 0.5;
      const auto m = plumb::PlattMap::fit(data, opt);
      const auto& p = dynamic_cast<const plumb::PlattMap&>(*m);
      INFO("platt, case " << case_names[id] << " times 2^" << k);
      CHECK(m->diagnostics().converged);
      CHECK(rel_diff(std::ldexp(p.a(), k), platt.at("a")[r]) < 1e-6);
      CHECK(std::abs(p.b() - platt.at("b")[r]) < 1e-6);
      ++platt_checked;
    }
    for (std::size_t r = 0; r < temps.at("case").size(); ++r) {
      const int id = static_cast<int>(temps.at("case")[r]);
      if (id != 2) continue;  // pima_logit
      Case c = load_case(temp_dir, id);
      for (double& s : c.rows.at("score")) s = std::ldexp(s, k);
      plumb::FitData data = c.data();
      data.scale = plumb::Scale::logit;
      const auto m = plumb::TemperatureMap::fit(data, {});
      const double t = dynamic_cast<const plumb::TemperatureMap&>(*m).temperature();
      INFO("temperature, case " << case_names[id] << " times 2^" << k);
      CHECK(m->diagnostics().converged);
      CHECK(rel_diff(std::ldexp(t, -k), temps.at("temperature")[r]) < 1e-6);
      ++temp_checked;
    }
  }
  CHECK(platt_checked == 8);
  CHECK(temp_checked == 2);
}
