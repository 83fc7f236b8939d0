// The guided start of the Poisson inversion (count_draws.hpp) finds the
// same count as the search from 0 for every uniform, including those at
// and beside the guide's bucket edges j / 256: the draws, hence the
// bootstrap's intervals on cells of up to 64 rows, do not change.
#include <catch2/catch.hpp>

#include <cmath>
#include <random>

#include "plumb/count_draws.hpp"

TEST_CASE("Poisson inversion from the guide table finds the count of the search from 0", "[bootstrap]") {
  const plumb::detail::PoissonTables& t = plumb::detail::poisson_tables();
  std::mt19937_64 gen(77);
  std::size_t checked = 0;
  for (std::uint64_t n = 2; n <= 64; ++n) {
    std::vector<double> us;
    for (std::size_t j = 0; j < plumb::detail::PoissonTables::guide_size; ++j) {
      const double edge = static_cast<double>(j) / 256.0;
      us.push_back(edge);
      us.push_back(std::nextafter(edge, 1.0));
      if (j > 0) us.push_back(std::nextafter(edge, 0.0));
    }
    for (const double c : t.cdf[n]) {  // the table's own values and their neighbours
      if (c >= 1.0) break;
      us.push_back(c);
      us.push_back(std::nextafter(c, 0.0));
    }
    for (int i = 0; i < 2000; ++i) us.push_back(plumb::uniform01(gen));
    for (const double u : us) {
      const std::size_t j = static_cast<std::size_t>(u * 256.0);
      const std::uint64_t guided = plumb::detail::invert_from(t.cdf[n], u, t.guide[n][j], 512);
      const std::uint64_t plain = plumb::detail::invert_from(t.cdf[n], u, 0, 512);
      if (guided != plain) FAIL("n " << n << ", u " << u << ": " << guided << " != " << plain);
      ++checked;
    }
  }
  CHECK(checked > 63 * 2000);
}
