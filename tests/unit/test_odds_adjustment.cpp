// Odds adjustments: the prior-shift factor worked by hand, the downsampling
// identity, a downsampling simulation with a known truth, the artifact round
// trip of an adjusted map, and the EM estimate of a new base rate
// (Saerens, Latinne and Decaestecker 2002) recovering a known prior.
// Every data set is simulated with a fixed seed (invented data).
#include <catch2/catch.hpp>
#include <cmath>
#include <limits>
#include <random>
#include <vector>

#include "plumb/io/artifact.hpp"
#include "plumb/calibration_map.hpp"
#include "plumb/error.hpp"
#include "plumb/odds_adjustment.hpp"
#include "plumb/prior_estimate.hpp"
#include "support/test_helpers.hpp"

using plumb::Artifact;
using plumb::ErrorKind;
using plumb::FitData;
using plumb::MapOptions;
using plumb::multiply_odds;
using plumb::OddsStep;
using plumb::prior_shift_factor;
using plumb::Scale;

namespace {

using plumb::test::error_kind;
using plumb::test::uniform01;

double logit(double p) { return std::log(p) - std::log1p(-p); }
double sigmoid(double z) { return 1.0 / (1.0 + std::exp(-z)); }

// A standard normal draw by Box-Muller from two hand-made uniforms (the
// standard distributions differ between library vendors).
double normal(std::mt19937_64& g) {
  const double u1 = 1.0 - uniform01(g), u2 = uniform01(g);
  return std::sqrt(-2.0 * std::log(u1)) * std::cos(2.0 * 3.141592653589793 * u2);
}

}  // namespace

TEST_CASE("prior shift: the odds factor and adjusted probabilities, worked by hand", "[odds]") {
  // Bayes' rule on the odds (Saerens, Latinne and Decaestecker 2002;
  // Elkan 2001; cited from memory): a map calibrated where the base rate is a = 0.17,
  // applied where it is b = 0.30, multiplies every odds by
  //   k = [b/(1-b)] / [a/(1-a)] = (0.30 x 0.83) / (0.17 x 0.70) = 0.249 / 0.119
  //     = 249/119 = 2.0924369747899160 (119 x 2 = 238, 11/119 = 0.0924369747899160).
  const double k = prior_shift_factor(0.17, 0.30);
  CHECK(k == Approx(249.0 / 119.0).epsilon(1e-15));
  CHECK(k == Approx(2.0924369747899160).epsilon(1e-15));
  // p = 0.5 has odds 1, so p' = k/(1+k) = 249/(249+119) = 249/368 = 0.6766304347826087.
  CHECK(multiply_odds(0.5, k) == Approx(249.0 / 368.0).epsilon(1e-15));
  CHECK(multiply_odds(0.5, k) == Approx(0.6766304347826087).epsilon(1e-15));
  // p = 0.9 has odds 9: 9 x 249/119 = 2241/119, so p' = 2241/(2241+119) = 2241/2360 = 0.9495762711864407.
  CHECK(multiply_odds(0.9, k) == Approx(2241.0 / 2360.0).epsilon(1e-15));
  // The old base rate maps to the new one: odds 0.17/0.83 x 0.249/0.119 = 0.3/0.7.
  CHECK(multiply_odds(0.17, k) == Approx(0.30).epsilon(1e-15));
  // Shifting back undoes the shift.
  CHECK(prior_shift_factor(0.30, 0.17) == Approx(1.0 / k).epsilon(1e-15));
  CHECK(multiply_odds(multiply_odds(0.42, k), 1.0 / k) == Approx(0.42).epsilon(1e-15));
}

TEST_CASE("odds adjustment: 0 and 1 stay, the log-odds shift by ln k, the map stays monotone", "[odds]") {
  for (double k : {1e-6, 0.1, 1.0, 2.0924369747899160, 10.0, 1e6}) {
    CHECK(multiply_odds(0.0, k) == 0.0);
    CHECK(multiply_odds(1.0, k) == 1.0);
    // On the logit scale the adjustment is a shift by ln k, down to p = 1e-300
    // and up to 1 - 1e-9 (the identity logit(p') = logit(p) + ln k). Near 1
    // a double holds 1 - p' only to within half an ulp of 1 (1.1e-16), so the
    // log-odds of p' are known to 1.1e-16 / (1 - p'): the margin allows twice that.
    for (double p : {1e-300, 1e-12, 0.003, 0.3, 0.5, 0.97, 1.0 - 1e-9}) {
      const double adjusted = multiply_odds(p, k);
      if (adjusted > 0.0 && adjusted < 1.0 - 1e-12)
        CHECK(logit(adjusted) ==
              Approx(logit(p) + std::log(k)).margin(1e-12 + 2.3e-16 / (1.0 - adjusted)).epsilon(1e-12));
    }
  }
  CHECK(multiply_odds(0.3, 1.0) == 0.3);
  // Monotone in floating point, also between neighbouring doubles.
  std::mt19937_64 g(7);
  for (int trial = 0; trial < 2000; ++trial) {
    const double k = std::exp(20.0 * uniform01(g) - 10.0);
    const double p = uniform01(g);
    const double q = std::nextafter(p, 1.0);
    CHECK(multiply_odds(p, k) <= multiply_odds(q, k));
    const double r = uniform01(g);
    if (p <= r) CHECK(multiply_odds(p, k) <= multiply_odds(r, k));
  }
}

TEST_CASE("prior shift: base rates of 0 or 1, or not numbers, are refused", "[odds]") {
  const double nan = std::numeric_limits<double>::quiet_NaN();
  for (auto [from, to] : {std::pair{0.0, 0.3}, {1.0, 0.3}, {0.17, 0.0}, {0.17, 1.0}, {0.17, 1.5}, {nan, 0.3}, {0.17, nan}})
    CHECK(error_kind([&] { (void)prior_shift_factor(from, to); }) == ErrorKind::usage);
}

TEST_CASE("downsampling: the isotonic map of the sample, odds x r, is the map of the full rows", "[odds]") {
  // Every score's negatives are a multiple of 4; the sample keeps exactly one
  // in four (r = 0.25). Within any pool of scores the sample's odds are those
  // of the full rows times 4, so PAV pools the same scores and each block's
  // value is the full block's with odds x 4 (Elkan 2001; Dal
  // Pozzolo et al. 2015; from memory): odds x r gives the full rows' map back.
  std::mt19937_64 g(11);
  std::vector<double> full_s, full_y, samp_s, samp_y;
  for (int j = 0; j < 60; ++j) {
    const double s = (j + 0.5) / 60.0;
    const int positives = static_cast<int>(20.0 * s * uniform01(g)) + (j % 7 == 0 ? 1 : 0);
    const int negatives = 4 * (1 + static_cast<int>(10.0 * (1.0 - s) * uniform01(g)));
    for (int i = 0; i < positives; ++i) {
      full_s.push_back(s), full_y.push_back(1.0);
      samp_s.push_back(s), samp_y.push_back(1.0);
    }
    for (int i = 0; i < negatives; ++i) {
      full_s.push_back(s), full_y.push_back(0.0);
      if (i % 4 == 0) samp_s.push_back(s), samp_y.push_back(0.0);
    }
  }
  const auto full = plumb::fit_map("isotonic", FitData{full_s, full_y, {}, Scale::probability});
  auto sample = plumb::fit_map("isotonic", FitData{samp_s, samp_y, {}, Scale::probability});
  const plumb::OddsAdjustedMap adjusted(std::move(sample), 0.25);
  double largest_gap = 0.0;
  for (int j = 0; j < 60; ++j) {
    const double s = (j + 0.5) / 60.0;
    CHECK(adjusted(s) == Approx((*full)(s)).epsilon(1e-12).margin(1e-15));
    largest_gap = std::max(largest_gap, std::fabs(adjusted.base()(s) - (*full)(s)));
  }
  CHECK(largest_gap > 0.05);  // the sample's own map is far off: the check could fail
}

TEST_CASE("downsampling: a known truth is recovered from a sample of its negatives", "[odds]") {
  // Population: x ~ N(0, 1), P(y = 1 | x) = sigmoid(-3 + 1.5 x) (a base rate
  // near 0.09). The sample keeps every positive and each negative with
  // probability r = 0.1; its log-odds are -3 - ln 0.1 + 1.5 x (the intercept
  // moves by -ln r, Prentice and Pyke 1979), so a platt map on the sample,
  // with odds x r, estimates the population's probabilities.
  std::mt19937_64 g(2026);
  const double r = 0.1;
  std::vector<double> xs, ys, all_x;
  double population_positives = 0.0;
  const int n = 300000;
  for (int i = 0; i < n; ++i) {
    const double x = normal(g);
    const bool y = uniform01(g) < sigmoid(-3.0 + 1.5 * x);
    all_x.push_back(x);
    population_positives += y ? 1.0 : 0.0;
    if (y || uniform01(g) < r) xs.push_back(x), ys.push_back(y ? 1.0 : 0.0);
  }
  MapOptions options;
  options.platt_smoothed_targets = false;
  Artifact a;
  a.map = plumb::fit_map("platt", FitData{xs, ys, {}, Scale::logit}, options);
  a.provenance.weight_total = static_cast<double>(xs.size());
  for (double y : ys) a.provenance.positives += y;
  const auto& unadjusted = *a.map;
  for (double x : {-1.0, 0.0, 1.0, 2.0})
    CHECK(std::fabs(logit(unadjusted(x)) - (-3.0 + 1.5 * x)) > 2.0);  // off by about ln 10
  OddsStep step;
  step.reason = OddsStep::Reason::negative_sampling;
  step.negative_rate = r;
  plumb::add_odds_step(a, step);
  for (double x : {-1.0, 0.0, 1.0, 2.0})
    CHECK(logit((*a.map)(x)) == Approx(-3.0 + 1.5 * x).margin(0.1));
  // The adjusted map's mean over the population is the population's base rate.
  double mean = 0.0;
  for (double x : all_x) mean += (*a.map)(x);
  mean /= n;
  CHECK(mean == Approx(population_positives / n).margin(0.005));
  // The base rate the artifact now describes is the population's.
  CHECK(plumb::target_base_rate(a) == Approx(population_positives / n).margin(0.005));
}

TEST_CASE("an adjusted map's artifact is version 2 and reads back with the same probabilities", "[odds][artifact]") {
  std::vector<double> s{0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.8}, y{0, 0, 1, 0, 1, 0, 1, 1};
  Artifact a;
  a.map = plumb::fit_map("platt", FitData{s, y, {}, Scale::probability});
  a.score_column = "risk";
  a.provenance.rows = 8;
  a.provenance.positives = 4;
  a.provenance.weight_total = 8;
  CHECK(plumb::artifact_version(a) == 1);
  const auto plain = nlohmann::json::parse(plumb::artifact_to_text(a));
  CHECK(plain["format_version"] == 1);
  CHECK_FALSE(plain.contains("odds_adjustment"));

  OddsStep neg;
  neg.reason = OddsStep::Reason::negative_sampling;
  neg.negative_rate = 0.5;
  plumb::add_odds_step(a, neg);
  // After the downsampling step the map describes base rate 0.5 with odds x 0.5 = 1/3.
  CHECK(plumb::target_base_rate(a) == Approx(1.0 / 3.0).epsilon(1e-15));
  OddsStep shift;
  shift.base_rate_to = 0.3;
  plumb::add_odds_step(a, shift);
  // (0.3/0.7) / (1/2) = 6/7; with the first step, 0.5 x 6/7 = 3/7.
  CHECK(a.odds_steps[1].base_rate_from == Approx(1.0 / 3.0).epsilon(1e-15));
  CHECK(a.odds_steps[1].factor == Approx(6.0 / 7.0).epsilon(1e-14));
  CHECK(plumb::target_base_rate(a) == Approx(0.3).epsilon(1e-14));
  CHECK(plumb::artifact_version(a) == 2);
  const std::string text = plumb::artifact_to_text(a);
  const auto doc = nlohmann::json::parse(text);
  CHECK(doc["format_version"] == 2);
  CHECK(doc["odds_adjustment"]["factor"].get<double>() == Approx(3.0 / 7.0).epsilon(1e-14));
  CHECK(doc["kind"] == "platt");
  CHECK(doc["parameters"] == plain["parameters"]);  // the fitted map is stored as fitted

  const Artifact back = plumb::artifact_from_text(text, "m.json");
  REQUIRE(back.odds_steps.size() == 2);
  for (double score : {0.0, 0.05, 0.33, 0.5, 0.91, 1.0}) CHECK((*back.map)(score) == (*a.map)(score));
  CHECK(plumb::artifact_to_text(back) == text);

  // A version 1 document may not carry an adjustment (a reader of version 1
  // would apply the map without it).
  nlohmann::json v1 = doc;
  v1.erase("integrity_sha256");
  v1["format_version"] = 1;
  v1["integrity_sha256"] = plumb::integrity_hash(v1);
  CHECK(error_kind([&] { (void)plumb::artifact_from_text(v1.dump(), "v1.json"); }) == ErrorKind::artifact);
  // A stated factor that disagrees with the step's rates is refused.
  nlohmann::json wrong = doc;
  wrong.erase("integrity_sha256");
  wrong["odds_adjustment"]["steps"][1]["factor"] = 0.9;
  wrong["integrity_sha256"] = plumb::integrity_hash(wrong);
  CHECK(error_kind([&] { (void)plumb::artifact_from_text(wrong.dump(), "wrong.json"); }) == ErrorKind::artifact);
  nlohmann::json from = doc;
  from.erase("integrity_sha256");
  from["odds_adjustment"]["steps"][1]["base_rate_from"] = 0.17;
  from["integrity_sha256"] = plumb::integrity_hash(from);
  CHECK(error_kind([&] { (void)plumb::artifact_from_text(from.dump(), "from.json"); }) == ErrorKind::artifact);
  // A product of factors beyond the normal doubles is refused, and the
  // artifact is left as it was.
  Artifact tiny = plumb::artifact_from_text(text, "m.json");
  OddsStep small;
  small.reason = OddsStep::Reason::negative_sampling;
  small.negative_rate = 1e-200;
  plumb::add_odds_step(tiny, small);
  const double before = (*tiny.map)(0.5);
  CHECK(error_kind([&] { plumb::add_odds_step(tiny, small); }) == ErrorKind::usage);
  CHECK(tiny.odds_steps.size() == 3);
  CHECK((*tiny.map)(0.5) == before);
  nlohmann::json rate = doc;
  rate.erase("integrity_sha256");
  rate["odds_adjustment"]["steps"][0]["negative_rate"] = 0.0;
  rate["integrity_sha256"] = plumb::integrity_hash(rate);
  CHECK(error_kind([&] { (void)plumb::artifact_from_text(rate.dump(), "rate.json"); }) == ErrorKind::artifact);
}

namespace {

// Class-conditional scores x | y=1 ~ N(1, 1), x | y=0 ~ N(0, 1): the exact
// posterior where the base rate is a is sigmoid(logit(a) + x - 1/2), a
// calibrated map for a population of base rate a. Rows of a population of
// base rate b are drawn and passed through that map.
std::vector<double> posterior_under(double a, double b, std::size_t n, std::mt19937_64& g) {
  std::vector<double> p;
  for (std::size_t i = 0; i < n; ++i) {
    const bool y = uniform01(g) < b;
    const double x = normal(g) + (y ? 1.0 : 0.0);
    p.push_back(sigmoid(logit(a) + x - 0.5));
  }
  return p;
}

}  // namespace

TEST_CASE("EM recovers a known new base rate within its bootstrap interval", "[odds][em]") {
  std::mt19937_64 g(314);
  const std::vector<double> p = posterior_under(0.17, 0.30, 20000, g);
  plumb::PriorEstimateOptions options;
  options.resamples = 300;
  const plumb::PriorEstimate e = plumb::estimate_base_rate(p, 0.17, options);
  CHECK(e.lo <= 0.30);
  CHECK(0.30 <= e.hi);
  CHECK(e.base_rate == Approx(0.30).margin(0.02));
  CHECK(e.hi - e.lo < 0.05);
  CHECK(e.lo < e.base_rate);
  CHECK(e.base_rate < e.hi);
  CHECK(e.resamples_used == 300);

  // EM's fixed point is the maximum of the likelihood (Saerens et al. 2002,
  // from memory; L(b) is concave, so the maximum is unique): a golden-section search on L(b) finds the same b.
  double lo = 0.0, hi = 1.0;
  const double phi = (std::sqrt(5.0) - 1.0) / 2.0;
  while (hi - lo > 1e-9) {
    const double m1 = hi - phi * (hi - lo), m2 = lo + phi * (hi - lo);
    if (plumb::base_rate_log_likelihood(p, 0.17, m1) < plumb::base_rate_log_likelihood(p, 0.17, m2))
      lo = m1;
    else
      hi = m2;
  }
  CHECK(e.base_rate == Approx(0.5 * (lo + hi)).margin(1e-6));

  // The interval does not depend on the number of threads.
  options.threads = 1;
  const plumb::PriorEstimate one = plumb::estimate_base_rate(p, 0.17, options);
  options.threads = 3;
  const plumb::PriorEstimate three = plumb::estimate_base_rate(p, 0.17, options);
  CHECK(one.lo == three.lo);
  CHECK(one.hi == three.hi);
  CHECK(one.base_rate == e.base_rate);
}

TEST_CASE("EM's 95% intervals cover the true base rate in most of 40 simulations", "[odds][em]") {
  // 40 independent populations of 2,000 rows at b = 0.30; nominal coverage
  // 0.95 gives 38 on average, and 33 or fewer has probability 0.0034 under
  // Binomial(40, 0.95) (the lower tail summed with the binomial formula,
  // sum over k <= 33 of C(40, k) 0.95^k 0.05^(40-k), in Python's math.comb).
  int covered = 0;
  plumb::PriorEstimateOptions options;
  options.resamples = 200;
  for (unsigned seed = 1; seed <= 40; ++seed) {
    std::mt19937_64 g(1000 + seed);
    const std::vector<double> p = posterior_under(0.17, 0.30, 2000, g);
    options.seed = seed;
    const plumb::PriorEstimate e = plumb::estimate_base_rate(p, 0.17, options);
    covered += e.lo <= 0.30 && 0.30 <= e.hi ? 1 : 0;
  }
  CHECK(covered >= 34);
  CHECK(covered <= 40);
}

TEST_CASE("EM with a fitted map recovers the new base rate", "[odds][em]") {
  // Fit a platt map where the base rate is 0.17, then estimate the base rate
  // of unlabelled rows drawn where it is 0.30.
  std::mt19937_64 g(99);
  std::vector<double> xs, ys;
  for (int i = 0; i < 50000; ++i) {
    const bool y = uniform01(g) < 0.17;
    xs.push_back(normal(g) + (y ? 1.0 : 0.0));
    ys.push_back(y ? 1.0 : 0.0);
  }
  MapOptions options;
  options.platt_smoothed_targets = false;
  const auto map = plumb::fit_map("platt", FitData{xs, ys, {}, Scale::logit}, options);
  double positives = 0.0;
  for (double y : ys) positives += y;
  std::vector<double> p;
  for (int i = 0; i < 20000; ++i) {
    const bool y = uniform01(g) < 0.30;
    p.push_back((*map)(normal(g) + (y ? 1.0 : 0.0)));
  }
  const plumb::PriorEstimate e = plumb::estimate_base_rate(p, positives / 50000.0);
  CHECK(e.base_rate == Approx(0.30).margin(0.02));
  // With no shift, the estimate stays near the fit's base rate.
  std::vector<double> same;
  for (int i = 0; i < 20000; ++i) {
    const bool y = uniform01(g) < 0.17;
    same.push_back((*map)(normal(g) + (y ? 1.0 : 0.0)));
  }
  CHECK(plumb::estimate_base_rate(same, positives / 50000.0).base_rate == Approx(0.17).margin(0.02));
}

TEST_CASE("EM refuses no rows, all-0 or all-1 probabilities and a run that does not converge", "[odds][em]") {
  CHECK(error_kind([] { (void)plumb::estimate_base_rate(std::vector<double>{}, 0.2); }) == ErrorKind::fit);
  CHECK(error_kind([] { (void)plumb::estimate_base_rate(std::vector<double>(50, 0.0), 0.2); }) == ErrorKind::fit);
  CHECK(error_kind([] { (void)plumb::estimate_base_rate(std::vector<double>(50, 1.0), 0.2); }) == ErrorKind::fit);
  // One probability for every row, equal to the map's base rate: the
  // likelihood is flat, and an estimate with a zero-width interval would
  // claim what the rows cannot tell.
  CHECK(error_kind([] { (void)plumb::estimate_base_rate(std::vector<double>(50, 0.2), 0.2); }) == ErrorKind::fit);
  CHECK(error_kind([] { (void)plumb::estimate_base_rate(std::vector<double>(50, 0.4), 0.2); }) == ErrorKind::fit);
  std::mt19937_64 g(5);
  const std::vector<double> p = posterior_under(0.17, 0.30, 500, g);
  plumb::PriorEstimateOptions options;
  options.max_iterations = 2;
  CHECK(error_kind([&] { (void)plumb::estimate_base_rate(p, 0.17, options); }) == ErrorKind::fit);
  CHECK(error_kind([&] { (void)plumb::estimate_base_rate(p, 0.0); }) == ErrorKind::usage);
  CHECK(error_kind([&] { (void)plumb::estimate_base_rate(p, 1.0); }) == ErrorKind::usage);
  // Probabilities of 0 and 1 only: the estimate is the share of ones, in one step.
  std::vector<double> hard(100, 0.0);
  for (int i = 0; i < 30; ++i) hard[i] = 1.0;
  options.max_iterations = 100000;
  const plumb::PriorEstimate e = plumb::estimate_base_rate(hard, 0.5, options);
  CHECK(e.base_rate == Approx(0.3).epsilon(1e-12));
}
