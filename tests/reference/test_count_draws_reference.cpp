// The bootstrap's and the consistency band's count samplers
// (include/plumb/count_draws.hpp) against R's laws
// (tests/reference/count_draws.R: stats::dpois, ppois, dbinom, pbinom, and
// qchisq for the critical values): Pearson's chi-square goodness of fit of
// 200000 seeded draws per case at significance level 0.001, on both sides
// of every switch-over (inversion up to 64 rows; PTRS for Poisson beyond;
// BTRS for binomials beyond 64 rows with n p >= 10 on the rarer outcome).
// Classes are runs of adjacent counts merged until each expects at least
// max(5, draws / 100) draws (5: Cochran's rule, common practice), so at
// most about 100 classes. The test can fail: the same statistic rejects
// the draws of Poisson(64) against Poisson(65)'s law and of
// Binomial(65, 1/2) against Binomial(64, 1/2)'s.
// The draws' mean and variance are also held to the formulas (Poisson: n
// and n; binomial: n p and n p (1 - p)) within 5 standard errors (the
// sample variance's from the fourth central moment: Poisson lambda (1 + 3
// lambda), binomial n p q (1 + 3 (n - 2) p q); textbook formulas).
#include <catch2/catch.hpp>
#include <cmath>
#include <cstdint>
#include <map>
#include <random>
#include <string>
#include <vector>

#include "plumb/count_draws.hpp"
#include "support/reference.hpp"

namespace {

struct Law {
  std::int64_t first = 0;    // smallest count listed; its class holds the lower tail
  std::vector<double> prob;  // prob[k - first]; the last holds the upper tail
};

// Pearson's statistic of `draws` against `law` and its degrees of freedom.
std::pair<double, std::size_t> chi_square(const std::vector<std::uint64_t>& draws, const Law& law) {
  const double total = static_cast<double>(draws.size());
  std::vector<double> observed(law.prob.size(), 0.0);
  for (const std::uint64_t d : draws) {
    std::int64_t i = static_cast<std::int64_t>(d) - law.first;
    if (i < 0) i = 0;
    if (i >= static_cast<std::int64_t>(law.prob.size())) i = static_cast<std::int64_t>(law.prob.size()) - 1;
    observed[static_cast<std::size_t>(i)] += 1.0;
  }
  const double least = std::max(5.0, total / 100.0);
  std::vector<double> class_expected, class_observed;
  double e = 0.0, o = 0.0;
  for (std::size_t i = 0; i < law.prob.size(); ++i) {
    e += total * law.prob[i];
    o += observed[i];
    if (e >= least) {
      class_expected.push_back(e);
      class_observed.push_back(o);
      e = o = 0.0;
    }
  }
  if (!class_expected.empty()) {  // the rest joins the last class
    class_expected.back() += e;
    class_observed.back() += o;
  }
  double x2 = 0.0;
  for (std::size_t c = 0; c < class_expected.size(); ++c)
    x2 += (class_observed[c] - class_expected[c]) * (class_observed[c] - class_expected[c]) / class_expected[c];
  return {x2, class_expected.size() - 1};
}

}  // namespace

TEST_CASE("Poisson and binomial count draws follow R's dpois and dbinom", "[bootstrap][reference]") {
  const std::string dir = plumb::test::scratch_dir("count_draws");
  plumb::test::run_r("count_draws.R", dir);
  const auto cases = plumb::test::read_numeric_csv(dir + "/cases.csv");
  const auto laws_csv = plumb::test::read_numeric_csv(dir + "/laws.csv");
  const auto critical_csv = plumb::test::read_numeric_csv(dir + "/critical.csv");
  std::map<std::size_t, Law> laws;
  for (std::size_t r = 0; r < laws_csv.at("case").size(); ++r) {
    Law& law = laws[static_cast<std::size_t>(laws_csv.at("case")[r])];
    if (law.prob.empty()) law.first = static_cast<std::int64_t>(laws_csv.at("k")[r]);
    law.prob.push_back(laws_csv.at("prob")[r]);
  }
  const std::vector<double>& critical = critical_csv.at("q");  // critical[df - 1]
  const std::size_t case_count = cases.at("kind").size();
  REQUIRE(case_count == 23);
  REQUIRE(laws.size() == case_count);

  constexpr std::size_t draws_per_case = 200000;
  std::map<std::size_t, std::vector<std::uint64_t>> all_draws;
  for (std::size_t c = 0; c < case_count; ++c) {
    const bool poisson = cases.at("kind")[c] == 0.0;
    const auto n = static_cast<std::uint64_t>(cases.at("n")[c]);
    const double p = cases.at("p")[c];
    INFO((poisson ? "Poisson(" + std::to_string(n) + ")"
                  : "Binomial(" + std::to_string(n) + ", " + std::to_string(p) + ")"));
    std::mt19937_64 gen(1000 + c);
    std::vector<std::uint64_t>& draws = all_draws[c];
    draws.reserve(draws_per_case);
    if (poisson) {
      const plumb::PoissonCount law(n);
      for (std::size_t i = 0; i < draws_per_case; ++i) draws.push_back(law.draw(gen));
    } else {
      const plumb::BinomialCount law(n, p);
      for (std::size_t i = 0; i < draws_per_case; ++i) draws.push_back(law.draw(gen));
    }
    // Goodness of fit to R's law at level 0.001.
    const auto [x2, df] = chi_square(draws, laws.at(c));
    INFO("chi-square " << x2 << " on " << df << " df");
    REQUIRE(df >= 1);
    REQUIRE(df <= critical.size());
    CHECK(x2 <= critical[df - 1]);
    // Mean and variance against the formulas, within 5 standard errors.
    double mean = 0.0;
    for (const std::uint64_t d : draws) mean += static_cast<double>(d);
    mean /= draws_per_case;
    double var = 0.0;
    for (const std::uint64_t d : draws) var += (static_cast<double>(d) - mean) * (static_cast<double>(d) - mean);
    var /= draws_per_case - 1;
    const double N = static_cast<double>(n), q = 1.0 - p;
    const double mu = poisson ? N : N * p;
    const double sigma2 = poisson ? N : N * p * q;
    const double mu4 = poisson ? N * (1.0 + 3.0 * N) : N * p * q * (1.0 + 3.0 * (N - 2.0) * p * q);
    const double root_draws = std::sqrt(static_cast<double>(draws_per_case));
    INFO("mean " << mean << " (formula " << mu << "), variance " << var << " (formula " << sigma2 << ")");
    CHECK(std::abs(mean - mu) <= 5.0 * std::sqrt(sigma2) / root_draws + 1e-12);
    CHECK(std::abs(var - sigma2) <= 5.0 * std::sqrt(std::max(0.0, mu4 - sigma2 * sigma2)) / root_draws + 1e-12);
  }

  // Power: the statistic tells neighbouring laws apart.
  const auto find = [&](double kind, double n, double p) {
    for (std::size_t c = 0; c < case_count; ++c)
      if (cases.at("kind")[c] == kind && cases.at("n")[c] == n && (kind == 0.0 || cases.at("p")[c] == p)) return c;
    FAIL("no such case");
    return std::size_t{0};
  };
  {
    const auto [x2, df] = chi_square(all_draws.at(find(0, 64, 0)), laws.at(find(0, 65, 0)));
    CHECK(x2 > critical[df - 1]);
  }
  {
    const auto [x2, df] = chi_square(all_draws.at(find(1, 65, 0.5)), laws.at(find(1, 64, 0.5)));
    CHECK(x2 > critical[df - 1]);
  }
}
