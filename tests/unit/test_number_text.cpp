// The report's number formats (plumb/number_text.hpp), the p-value rule at
// its edges: 4 decimals down to 1e-4, two significant digits in scientific
// notation below, "<1e-300" for a p-value that underflowed to 0. The
// expected strings are C printf's "%.4f" and "%.1e" (ISO C 7.21.6.1).
#include <catch2/catch.hpp>

#include <limits>

#include "plumb/number_text.hpp"

TEST_CASE("p_value_text: fixed 4 decimals down to 1e-4, scientific below, <1e-300 at 0", "[number_text]") {
  CHECK(plumb::p_value_text(0.5) == "0.5000");
  CHECK(plumb::p_value_text(1.0) == "1.0000");
  CHECK(plumb::p_value_text(0.022) == "0.0220");
  CHECK(plumb::p_value_text(1e-4) == "0.0001");
  CHECK(plumb::p_value_text(9.9e-5) == "9.9e-05");
  CHECK(plumb::p_value_text(1e-300) == "1.0e-300");
  CHECK(plumb::p_value_text(0.0) == "<1e-300");
  CHECK(plumb::p_value_text(std::numeric_limits<double>::quiet_NaN()) == "n/a");
}

TEST_CASE("metric_text and stat_text: 4 and 2 decimals, small metrics scientific, no -0", "[number_text]") {
  CHECK(plumb::metric_text(0.12345) == "0.1235");
  CHECK(plumb::metric_text(3e-5) == "3.00e-05");
  CHECK(plumb::metric_text(0.0) == "0.0000");
  CHECK(plumb::fixed_text(-0.00001, 4) == "0.0000");
  CHECK(plumb::stat_text(-2.346) == "-2.35");
  CHECK(plumb::stat_text(std::numeric_limits<double>::infinity()) == "n/a");
}
