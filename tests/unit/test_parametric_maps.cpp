// Property tests of the platt, beta and temperature maps on seeded
// simulations (invented data; the reference checks against R live in
// tests/reference/test_parametric_reference.cpp).
#include <catch2/catch.hpp>
#include <cmath>
#include <limits>
#include <random>
#include <vector>

#include "plumb/error.hpp"
#include "plumb/maps/beta_map.hpp"
#include "plumb/maps/platt_map.hpp"
#include "plumb/maps/temperature_map.hpp"
#include "plumb/scale.hpp"
#include "support/test_helpers.hpp"

using plumb::BetaMap;
using plumb::FitData;
using plumb::MapOptions;
using plumb::PlattMap;
using plumb::Scale;
using plumb::TemperatureMap;

namespace {

using plumb::test::below;
using plumb::test::error_kind;
using plumb::test::uniform01;

struct Rows {
  std::vector<double> score, label, weight;
  FitData data(Scale scale) const { return FitData{score, label, weight, scale}; }
};

// Scores drawn by `draw`, labels ~ Bernoulli(truth(score)).
template <class Draw, class Truth>
Rows simulate(std::size_t n, unsigned seed, Draw draw, Truth truth) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> unif(0.0, 1.0);
  Rows r;
  for (std::size_t i = 0; i < n; ++i) {
    const double s = draw(rng);
    r.score.push_back(s);
    r.label.push_back(unif(rng) < truth(s) ? 1.0 : 0.0);
  }
  return r;
}

Rows calibrated_probabilities(std::size_t n, unsigned seed) {
  return simulate(n, seed, [](std::mt19937_64& g) { return std::uniform_real_distribution<double>(0.02, 0.98)(g); },
                  [](double s) { return s; });
}

std::vector<double> probability_grid() {
  std::vector<double> g{0.0, 1e-15, 1e-6, 1.0 - 1e-6, 1.0};
  for (int i = 1; i < 100; ++i) g.push_back(i / 100.0);
  std::sort(g.begin(), g.end());
  return g;
}

bool non_decreasing_on(const plumb::CalibrationMap& m, const std::vector<double>& grid) {
  for (std::size_t i = 1; i < grid.size(); ++i)
    if (m(grid[i]) < m(grid[i - 1])) return false;
  return true;
}

// parameters() -> text -> parse -> from_parameters must give the same doubles.
template <class M>
void check_round_trip(const plumb::CalibrationMap& m, const std::vector<double>& grid) {
  const nlohmann::json parsed = nlohmann::json::parse(m.parameters().dump());
  const auto back = M::from_parameters(m.scale(), parsed, "round-trip");
  CHECK(back->parameters() == m.parameters());
  for (double s : grid) CHECK(back->map(s).probability == m.map(s).probability);  // bit-identical
}

}  // namespace

// ---------------------------------------------------------------- platt

TEST_CASE("platt: recovers A and B of a true sigmoid on margins", "[platt]") {
  const double A = -1.7, B = 0.4;
  const Rows r = simulate(
      100000, 21, [](std::mt19937_64& g) { return std::normal_distribution<double>(0.0, 2.0)(g); },
      [&](double f) { return 1.0 / (1.0 + std::exp(A * f + B)); });
  MapOptions opt;
  opt.platt_smoothed_targets = false;
  const auto m = PlattMap::fit(r.data(Scale::margin), opt);
  const auto& p = dynamic_cast<const PlattMap&>(*m);
  CHECK(p.a() == Approx(A).margin(0.05));
  CHECK(p.b() == Approx(B).margin(0.05));
  CHECK(m->diagnostics().converged);
  CHECK(m->monotone());
  CHECK(m->diagnostics().log_loss > 0.0);
  CHECK(m->diagnostics().log_loss < std::log(2.0));
}

TEST_CASE("platt: calibrated probabilities give nearly the identity map", "[platt]") {
  const Rows r = calibrated_probabilities(50000, 22);
  const auto m = PlattMap::fit(r.data(Scale::probability), MapOptions{});
  const auto& p = dynamic_cast<const PlattMap&>(*m);
  CHECK(p.a() == Approx(-1.0).margin(0.05));
  CHECK(p.b() == Approx(0.0).margin(0.05));
  for (double s : {0.1, 0.5, 0.9}) CHECK(m->map(s).probability == Approx(s).margin(0.02));
  // The exact identity: A = -1, B = 0 maps a probability to itself.
  const PlattMap identity(Scale::probability, -1.0, 0.0, false);
  for (double s : {0.001, 0.3, 0.75}) CHECK(identity(s) == Approx(s).epsilon(1e-12));
}

TEST_CASE("platt: smoothed targets pull the fit towards the base rate", "[platt]") {
  // With targets in (0, 1) the sigmoid is flatter than the 0/1 fit (|A|
  // smaller): Platt's (1999) motivation for the prior.
  const Rows r = calibrated_probabilities(60, 23);
  MapOptions raw;
  raw.platt_smoothed_targets = false;
  const auto smooth = PlattMap::fit(r.data(Scale::probability), MapOptions{});
  const auto plain = PlattMap::fit(r.data(Scale::probability), raw);
  CHECK(std::abs(dynamic_cast<const PlattMap&>(*smooth).a()) <
        std::abs(dynamic_cast<const PlattMap&>(*plain).a()));
  CHECK(smooth->parameters()["smoothed_targets"] == true);
  CHECK(plain->parameters()["smoothed_targets"] == false);
}

TEST_CASE("platt: separated margins end finite and unconverged", "[platt]") {
  Rows r;
  for (int i = 0; i < 40; ++i) {
    r.score.push_back(i - 19.5);
    r.label.push_back(i >= 20 ? 1.0 : 0.0);
  }
  MapOptions opt;
  opt.platt_smoothed_targets = false;
  const auto m = PlattMap::fit(r.data(Scale::margin), opt);
  const auto& p = dynamic_cast<const PlattMap&>(*m);
  CHECK(std::isfinite(p.a()));
  CHECK(std::isfinite(p.b()));
  CHECK_FALSE(m->diagnostics().converged);
  CHECK(m->diagnostics().iterations <= 100);
  CHECK_FALSE(m->diagnostics().notes.empty());
  // Smoothed targets are never 0 or 1, so the same rows have a finite optimum.
  const auto s = PlattMap::fit(r.data(Scale::margin), MapOptions{});
  CHECK(s->diagnostics().converged);
}

TEST_CASE("platt: zero-weight rows do not change the fit", "[platt]") {
  Rows r = calibrated_probabilities(2000, 24);
  r.weight.assign(r.score.size(), 1.0);
  const auto base = PlattMap::fit(r.data(Scale::probability), MapOptions{});
  for (int i = 0; i < 100; ++i) {  // confidently wrong rows, if they counted
    r.score.push_back(i % 2 ? 0.999 : 0.0);
    r.label.push_back(i % 2 ? 0.0 : 1.0);
    r.weight.push_back(0.0);
  }
  const auto padded = PlattMap::fit(r.data(Scale::probability), MapOptions{});
  CHECK(padded->parameters() == base->parameters());
  CHECK(padded->diagnostics().clipped == 0);
}

TEST_CASE("platt: probability 0 and 1 are clipped and counted", "[platt]") {
  Rows r = calibrated_probabilities(500, 25);
  r.score[0] = 0.0;
  r.score[1] = 1.0;
  r.score[2] = 1e-13;
  const auto m = PlattMap::fit(r.data(Scale::probability), MapOptions{});
  CHECK(m->diagnostics().clipped == 3);
  CHECK(m->map(0.0).clipped);
  CHECK_FALSE(m->map(0.5).clipped);
  CHECK(std::isfinite(m->map(0.0).probability));
}

TEST_CASE("platt: anti-associated margins give a decreasing map", "[platt]") {
  const Rows r = simulate(
      5000, 26, [](std::mt19937_64& g) { return std::normal_distribution<double>(0.0, 1.0)(g); },
      [](double f) { return plumb::sigmoid(-2.0 * f); });
  const auto m = PlattMap::fit(r.data(Scale::margin), MapOptions{});
  CHECK(dynamic_cast<const PlattMap&>(*m).a() > 0.0);
  CHECK_FALSE(m->monotone());
  CHECK(m->map(1.0).probability < m->map(-1.0).probability);
}

TEST_CASE("platt: parameters round-trip and validation", "[platt]") {
  const Rows r = calibrated_probabilities(3000, 27);
  const auto m = PlattMap::fit(r.data(Scale::probability), MapOptions{});
  check_round_trip<PlattMap>(*m, probability_grid());
  CHECK(non_decreasing_on(*m, probability_grid()));

  const nlohmann::json good = {{"a", -1.0}, {"b", 0.0}, {"smoothed_targets", true}};
  CHECK_NOTHROW(PlattMap::from_parameters(Scale::logit, good, "t"));
  for (const char* field : {"a", "b", "smoothed_targets"}) {
    nlohmann::json missing = good;
    missing.erase(field);
    CHECK(error_kind([&] { PlattMap::from_parameters(Scale::logit, missing, "t"); }) ==
          plumb::ErrorKind::artifact);
  }
  nlohmann::json nan = good;
  nan["a"] = std::numeric_limits<double>::quiet_NaN();
  CHECK(error_kind([&] { PlattMap::from_parameters(Scale::logit, nan, "t"); }) == plumb::ErrorKind::artifact);
  nlohmann::json text = good;
  text["b"] = "0.5";
  CHECK(error_kind([&] { PlattMap::from_parameters(Scale::logit, text, "t"); }) == plumb::ErrorKind::artifact);
  CHECK(error_kind([&] { PlattMap::from_parameters(Scale::logit, nlohmann::json::array(), "t"); }) ==
        plumb::ErrorKind::artifact);
}

TEST_CASE("platt: one class is a fit error", "[platt]") {
  Rows r = calibrated_probabilities(100, 28);
  r.label.assign(r.label.size(), 1.0);
  CHECK(error_kind([&] { PlattMap::fit(r.data(Scale::probability), MapOptions{}); }) == plumb::ErrorKind::fit);
}

// ---------------------------------------------------------------- beta

TEST_CASE("beta: recovers a, b, c of a simulated beta calibration curve", "[beta]") {
  const double a = 1.8, b = 0.6, c = 0.2;
  const Rows r = simulate(
      200000, 31, [](std::mt19937_64& g) { return std::uniform_real_distribution<double>(0.001, 0.999)(g); },
      [&](double s) { return plumb::sigmoid(a * std::log(s) - b * std::log1p(-s) + c); });
  const auto m = BetaMap::fit(r.data(Scale::probability), MapOptions{});
  const auto& bm = dynamic_cast<const BetaMap&>(*m);
  CHECK(bm.a() == Approx(a).margin(0.05));
  CHECK(bm.b() == Approx(b).margin(0.05));
  CHECK(bm.c() == Approx(c).margin(0.1));
  CHECK(m->diagnostics().converged);
  CHECK(m->diagnostics().notes.empty());
}

TEST_CASE("beta: a negative coefficient is fixed at zero and the map stays monotone", "[beta]") {
  // True curve with a < 0: non-monotone (falls, then rises near s = 1).
  const Rows r = simulate(
      20000, 32, [](std::mt19937_64& g) { return std::uniform_real_distribution<double>(0.001, 0.999)(g); },
      [](double s) { return plumb::sigmoid(-0.8 * std::log(s) - 1.5 * std::log1p(-s) - 2.0); });
  const auto m = BetaMap::fit(r.data(Scale::probability), MapOptions{});
  const auto& bm = dynamic_cast<const BetaMap&>(*m);
  CHECK(bm.a() == 0.0);
  CHECK(bm.b() > 0.0);
  CHECK(m->monotone());
  CHECK(non_decreasing_on(*m, probability_grid()));
  CHECK_FALSE(m->diagnostics().notes.empty());
}

TEST_CASE("beta: anti-associated scores end in a constant map", "[beta]") {
  const Rows r = simulate(
      5000, 33, [](std::mt19937_64& g) { return std::uniform_real_distribution<double>(0.01, 0.99)(g); },
      [](double s) { return 1.0 - s; });
  for (const char* form : {"full", "midpoint", "shared"}) {
    MapOptions opt;
    opt.beta_form = form;
    const auto m = BetaMap::fit(r.data(Scale::probability), opt);
    CHECK(m->monotone());
    CHECK(non_decreasing_on(*m, probability_grid()));
  }
  MapOptions shared;
  shared.beta_form = "shared";
  const auto m = BetaMap::fit(r.data(Scale::probability), shared);
  // The best constant is the base rate.
  double pos = 0;
  for (double y : r.label) pos += y;
  CHECK(m->map(0.3).probability == Approx(pos / r.label.size()).margin(1e-9));
}

TEST_CASE("beta: restricted forms keep their restriction", "[beta]") {
  const Rows r = simulate(
      5000, 34, [](std::mt19937_64& g) { return std::uniform_real_distribution<double>(0.01, 0.99)(g); },
      [](double s) { return plumb::sigmoid(1.3 * std::log(s) - 0.7 * std::log1p(-s) + 0.5); });
  MapOptions mid;
  mid.beta_form = "midpoint";
  const auto m = BetaMap::fit(r.data(Scale::probability), mid);
  CHECK(m->map(0.5).probability == Approx(0.5).margin(1e-14));  // the fixed midpoint
  MapOptions shared;
  shared.beta_form = "shared";
  const auto s = BetaMap::fit(r.data(Scale::probability), shared);
  const auto& bs = dynamic_cast<const BetaMap&>(*s);
  CHECK(bs.a() == bs.b());
  // The shared form is Platt without smoothed targets on the same log-odds.
  MapOptions raw;
  raw.platt_smoothed_targets = false;
  const auto p = PlattMap::fit(r.data(Scale::probability), raw);
  CHECK(bs.a() == Approx(-dynamic_cast<const PlattMap&>(*p).a()).margin(1e-9));
  CHECK(bs.c() == Approx(-dynamic_cast<const PlattMap&>(*p).b()).margin(1e-9));
  MapOptions bad;
  bad.beta_form = "free";
  CHECK(error_kind([&] { BetaMap::fit(r.data(Scale::probability), bad); }) == plumb::ErrorKind::usage);
}

TEST_CASE("beta: zero-weight rows do not change the fit", "[beta]") {
  Rows r = calibrated_probabilities(2000, 35);
  r.weight.assign(r.score.size(), 2.0);
  const auto base = BetaMap::fit(r.data(Scale::probability), MapOptions{});
  for (int i = 0; i < 100; ++i) {
    r.score.push_back(i % 2 ? 1.0 : 0.001);
    r.label.push_back(i % 2 ? 0.0 : 1.0);
    r.weight.push_back(0.0);
  }
  const auto padded = BetaMap::fit(r.data(Scale::probability), MapOptions{});
  CHECK(padded->parameters() == base->parameters());
}

TEST_CASE("beta: parameters round-trip and validation", "[beta]") {
  const Rows r = calibrated_probabilities(3000, 36);
  for (const char* form : {"full", "midpoint", "shared"}) {
    MapOptions opt;
    opt.beta_form = form;
    const auto m = BetaMap::fit(r.data(Scale::probability), opt);
    CHECK(m->parameters()["form"] == form);
    check_round_trip<BetaMap>(*m, probability_grid());
  }
  const nlohmann::json good = {{"a", 1.0}, {"b", 0.5}, {"c", 0.1}, {"form", "full"}};
  CHECK_NOTHROW(BetaMap::from_parameters(Scale::probability, good, "t"));
  const auto artifact_error = [&](const nlohmann::json& j, Scale scale = Scale::probability) {
    return error_kind([&] { BetaMap::from_parameters(scale, j, "t"); }) == plumb::ErrorKind::artifact;
  };
  CHECK(artifact_error(good, Scale::logit));
  for (const char* field : {"a", "b", "c", "form"}) {
    nlohmann::json j = good;
    j.erase(field);
    CHECK(artifact_error(j));
  }
  nlohmann::json j = good;
  j["c"] = std::numeric_limits<double>::infinity();
  CHECK(artifact_error(j));
  j = good;
  j["a"] = -0.1;
  CHECK(artifact_error(j));
  j = good;
  j["form"] = "other";
  CHECK(artifact_error(j));
  j = good;
  j["form"] = "shared";  // a != b
  CHECK(artifact_error(j));
  j = good;
  j["form"] = "midpoint";  // c != (a - b) ln 2
  CHECK(artifact_error(j));
}

// ---------------------------------------------------------------- temperature

TEST_CASE("temperature: recovers a known temperature", "[temperature]") {
  const double T = 2.5;
  const Rows r = simulate(
      100000, 41, [](std::mt19937_64& g) { return std::normal_distribution<double>(0.0, 4.0)(g); },
      [&](double z) { return plumb::sigmoid(z / T); });
  const auto m = TemperatureMap::fit(r.data(Scale::logit), MapOptions{});
  const double fitted = dynamic_cast<const TemperatureMap&>(*m).temperature();
  CHECK(fitted == Approx(T).epsilon(0.05));
  CHECK(m->diagnostics().converged);
  // The fitted T is a stationary point of the weighted log loss:
  // d/dbeta sum [softplus(beta z) - y beta z] = sum z (sigmoid(beta z) - y).
  double g = 0, scale = 0;
  for (std::size_t i = 0; i < r.score.size(); ++i) {
    g += r.score[i] * (plumb::sigmoid(r.score[i] / fitted) - r.label[i]);
    scale += std::abs(r.score[i]);
  }
  CHECK(std::abs(g) < 1e-9 * scale);
}

TEST_CASE("temperature: probability and logit scales agree", "[temperature]") {
  const Rows logits = simulate(
      5000, 42, [](std::mt19937_64& g) { return std::normal_distribution<double>(0.0, 3.0)(g); },
      [](double z) { return plumb::sigmoid(z / 1.7); });
  Rows probs = logits;
  for (double& s : probs.score) s = plumb::sigmoid(s);
  const auto ml = TemperatureMap::fit(logits.data(Scale::logit), MapOptions{});
  const auto mp = TemperatureMap::fit(probs.data(Scale::probability), MapOptions{});
  CHECK(dynamic_cast<const TemperatureMap&>(*mp).temperature() ==
        Approx(dynamic_cast<const TemperatureMap&>(*ml).temperature()).epsilon(1e-8));
}

TEST_CASE("temperature: anti-associated scores are a fit error", "[temperature]") {
  const Rows r = simulate(
      2000, 43, [](std::mt19937_64& g) { return std::normal_distribution<double>(0.0, 2.0)(g); },
      [](double z) { return plumb::sigmoid(-z); });
  CHECK(error_kind([&] { TemperatureMap::fit(r.data(Scale::logit), MapOptions{}); }) == plumb::ErrorKind::fit);
}

TEST_CASE("temperature: separated log-odds end finite and unconverged", "[temperature]") {
  Rows r;
  for (int i = 0; i < 30; ++i) {
    r.score.push_back(i - 14.5);
    r.label.push_back(i >= 15 ? 1.0 : 0.0);
  }
  const auto m = TemperatureMap::fit(r.data(Scale::logit), MapOptions{});
  const double t = dynamic_cast<const TemperatureMap&>(*m).temperature();
  CHECK(std::isfinite(t));
  CHECK(t > 0.0);
  CHECK(t < 0.5);  // much sharper than the identity
  CHECK_FALSE(m->diagnostics().converged);
  CHECK_FALSE(m->diagnostics().notes.empty());
}

TEST_CASE("temperature: zero-weight rows do not change the fit", "[temperature]") {
  Rows r = simulate(
      2000, 44, [](std::mt19937_64& g) { return std::normal_distribution<double>(0.0, 2.0)(g); },
      [](double z) { return plumb::sigmoid(0.5 * z); });
  r.weight.assign(r.score.size(), 1.0);
  const auto base = TemperatureMap::fit(r.data(Scale::logit), MapOptions{});
  for (int i = 0; i < 100; ++i) {
    r.score.push_back(i % 2 ? 30.0 : -30.0);
    r.label.push_back(i % 2 ? 0.0 : 1.0);
    r.weight.push_back(0.0);
  }
  const auto padded = TemperatureMap::fit(r.data(Scale::logit), MapOptions{});
  CHECK(padded->parameters() == base->parameters());
}

TEST_CASE("temperature: parameters round-trip and validation", "[temperature]") {
  const Rows r = calibrated_probabilities(3000, 45);
  const auto m = TemperatureMap::fit(r.data(Scale::probability), MapOptions{});
  check_round_trip<TemperatureMap>(*m, probability_grid());
  CHECK(m->monotone());
  CHECK(non_decreasing_on(*m, probability_grid()));
  CHECK_FALSE(TemperatureMap::accepts(Scale::margin));

  const auto artifact_error = [](const nlohmann::json& j, Scale scale = Scale::logit) {
    return error_kind([&] { TemperatureMap::from_parameters(scale, j, "t"); }) == plumb::ErrorKind::artifact;
  };
  CHECK_NOTHROW(TemperatureMap::from_parameters(Scale::logit, {{"temperature", 1.5}}, "t"));
  CHECK(artifact_error({{"temperature", 1.5}}, Scale::margin));
  CHECK(artifact_error(nlohmann::json::object()));
  CHECK(artifact_error({{"temperature", 0.0}}));
  CHECK(artifact_error({{"temperature", -2.0}}));
  CHECK(artifact_error({{"temperature", std::numeric_limits<double>::quiet_NaN()}}));
  CHECK(artifact_error({{"temperature", "1"}}));
}

TEST_CASE("temperature: log-odds near 1e300 or 1e-300 fit as their rescaled copies do", "[temperature]") {
  // sigmoid(z / T): multiplying every z by 2^k multiplies T by 2^k. Log-odds
  // whose largest magnitude is in [1/2, 1) come back exactly from the fit's
  // own power-of-two rescaling, so the temperatures agree to the bit.
  Rows r = simulate(
      3000, 46, [](std::mt19937_64& g) { return std::uniform_real_distribution<double>(-0.99, 0.99)(g); },
      [](double z) { return plumb::sigmoid(z / 0.2); });
  const auto base = TemperatureMap::fit(r.data(Scale::logit), MapOptions{});
  const double t0 = dynamic_cast<const TemperatureMap&>(*base).temperature();
  REQUIRE(base->diagnostics().converged);
  CHECK(t0 == Approx(0.2).epsilon(0.15));
  for (int k : {1000, -990}) {
    INFO("log-odds times 2^" << k);
    Rows scaled = r;
    for (double& z : scaled.score) z = std::ldexp(z, k);
    const auto m = TemperatureMap::fit(scaled.data(Scale::logit), MapOptions{});
    CHECK(m->diagnostics().converged);
    CHECK(dynamic_cast<const TemperatureMap&>(*m).temperature() == std::ldexp(t0, k));
    CHECK(m->diagnostics().log_loss == base->diagnostics().log_loss);
  }
  // Near the bottom of the doubles the fitted T is below the smallest one.
  Rows tiny = r;
  for (double& z : tiny.score) z = std::ldexp(z, -1073);
  CHECK(error_kind([&] { TemperatureMap::fit(tiny.data(Scale::logit), MapOptions{}); }) == plumb::ErrorKind::fit);
}

TEST_CASE("platt: margins near 1e300 no longer stop at a = b = 0", "[platt]") {
  // The former failure: x^2 overflowed the Hessian at the first step, the
  // step came out zero and the fit reported convergence at a = b = 0.
  Rows r;
  const double x[] = {-1e300, -5e299, -2e299, 1e299, 3e299, 8e299, 1e300};
  const double y[] = {0, 1, 0, 1, 0, 1, 1};
  for (int i = 0; i < 7; ++i) {
    r.score.push_back(x[i]);
    r.label.push_back(y[i]);
  }
  MapOptions opt;
  opt.platt_smoothed_targets = false;
  const auto m = PlattMap::fit(r.data(Scale::margin), opt);
  const auto& p = dynamic_cast<const PlattMap&>(*m);
  CHECK(m->diagnostics().converged);
  CHECK(p.a() < 0.0);
  CHECK(std::isfinite(p.a()));
  CHECK((*m)(1e300) > (*m)(-1e300));
}
