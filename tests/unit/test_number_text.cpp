// The formatting layer's number rules (plumb/number_text.hpp), each pinned
// on its edge values: 0, 1, 1e-300, NaN and infinity (never printed as
// digits: the one placeholder "n/a"), negative zero and negatives that
// round to zero (no sign). The expected strings are C printf's "%.4f",
// "%.2f", "%.1e", "%.2e" and "%g" (ISO C 7.21.6.1), which std::to_chars
// follows (ISO C++ [charconv.to.chars]), and the grouping of whole digits by
// threes with commas (common practice in English text).
#include <catch2/catch.hpp>

#include <cstdint>
#include <limits>
#include <string>

#include "plumb/number_text.hpp"

namespace {
const double nan_ = std::numeric_limits<double>::quiet_NaN();
const double inf_ = std::numeric_limits<double>::infinity();
}  // namespace

TEST_CASE("p_value_text: fixed 4 decimals down to 1e-4, scientific below, <1e-300 at 0", "[number_text]") {
  CHECK(plumb::p_value_text(0.5) == "0.5000");
  CHECK(plumb::p_value_text(1.0) == "1.0000");
  CHECK(plumb::p_value_text(0.022) == "0.0220");
  CHECK(plumb::p_value_text(1e-4) == "0.0001");
  CHECK(plumb::p_value_text(9.9e-5) == "9.9e-05");
  CHECK(plumb::p_value_text(1.5e-151) == "1.5e-151");
  CHECK(plumb::p_value_text(1e-300) == "1.0e-300");
  CHECK(plumb::p_value_text(0.0) == "<1e-300");
  CHECK(plumb::p_value_text(-0.0) == "<1e-300");
  CHECK(plumb::p_value_text(nan_) == "n/a");
  CHECK(plumb::p_value_text(inf_) == "n/a");
}

TEST_CASE("metric_text and stat_text: 4 and 2 decimals, small metrics scientific, no -0", "[number_text]") {
  CHECK(plumb::metric_text(0.12345) == "0.1235");
  CHECK(plumb::metric_text(3e-5) == "3.00e-05");
  CHECK(plumb::metric_text(-3e-5) == "-3.00e-05");
  CHECK(plumb::metric_text(1e-300) == "1.00e-300");
  CHECK(plumb::metric_text(1e-3) == "0.0010");
  CHECK(plumb::metric_text(0.0) == "0.0000");
  CHECK(plumb::metric_text(-0.0) == "0.0000");
  CHECK(plumb::metric_text(1.0) == "1.0000");
  CHECK(plumb::metric_text(nan_) == "n/a");
  CHECK(plumb::metric_text(-inf_) == "n/a");
  CHECK(plumb::fixed_text(-0.00001, 4) == "0.0000");
  CHECK(plumb::stat_text(-2.346) == "-2.35");
  CHECK(plumb::stat_text(-0.001) == "0.00");
  CHECK(plumb::stat_text(0.0) == "0.00");
  CHECK(plumb::stat_text(3455.876) == "3455.88");
  CHECK(plumb::stat_text(std::numeric_limits<double>::infinity()) == "n/a");
}

TEST_CASE("probability_text: 4 decimals at 0, 1 and 1e-300, no -0", "[number_text]") {
  CHECK(plumb::probability_text(0.0) == "0.0000");
  CHECK(plumb::probability_text(1.0) == "1.0000");
  CHECK(plumb::probability_text(1e-300) == "0.0000");
  CHECK(plumb::probability_text(-0.0) == "0.0000");
  CHECK(plumb::probability_text(0.16912) == "0.1691");
  CHECK(plumb::probability_text(0.99996) == "1.0000");
  CHECK(plumb::probability_text(nan_) == "n/a");
}

TEST_CASE("difference_text: a sign where the printed digits are not zero", "[number_text]") {
  CHECK(plumb::difference_text(0.0015) == "+0.0015");
  CHECK(plumb::difference_text(-0.0837) == "-0.0837");
  CHECK(plumb::difference_text(1.0) == "+1.0000");
  CHECK(plumb::difference_text(0.0) == "0.0000");
  CHECK(plumb::difference_text(-0.0) == "0.0000");
  CHECK(plumb::difference_text(1e-300) == "0.0000");
  CHECK(plumb::difference_text(-1e-300) == "0.0000");
  CHECK(plumb::difference_text(0.00006) == "+0.0001");
  CHECK(plumb::difference_text(-0.00004) == "0.0000");
  CHECK(plumb::difference_text(nan_) == "n/a");
}

TEST_CASE("interval_text and range_text: one shape, the ends in their own rule", "[number_text]") {
  CHECK(plumb::interval_text(plumb::metric_text(0.1201), plumb::metric_text(0.1305)) == "[0.1201, 0.1305]");
  CHECK(plumb::interval_text(plumb::metric_text(0.0), plumb::metric_text(1e-300)) == "[0.0000, 1.00e-300]");
  CHECK(plumb::interval_text(plumb::probability_text(nan_), plumb::probability_text(1.0)) == "[n/a, 1.0000]");
  CHECK(plumb::range_text(plumb::probability_text(0.0), plumb::probability_text(0.1)) == "0.0000\u20130.1000");
  CHECK(plumb::range_text(plumb::probability_text(0.9), plumb::probability_text(1.0), false) == "0.9000-1.0000");
}

TEST_CASE("count_text: a comma every three digits", "[number_text]") {
  CHECK(plumb::count_text(0) == "0");
  CHECK(plumb::count_text(1) == "1");
  CHECK(plumb::count_text(999) == "999");
  CHECK(plumb::count_text(1000) == "1,000");
  CHECK(plumb::count_text(20000) == "20,000");
  CHECK(plumb::count_text(1234567) == "1,234,567");
  CHECK(plumb::count_text(std::numeric_limits<std::uint64_t>::max()) == "18,446,744,073,709,551,615");
}

TEST_CASE("weight_text: whole weights as counts, others 2 decimals or 3 significant digits", "[number_text]") {
  CHECK(plumb::weight_text(0.0) == "0");
  CHECK(plumb::weight_text(-0.0) == "0");
  CHECK(plumb::weight_text(1.0) == "1");
  CHECK(plumb::weight_text(20000.0) == "20,000");
  CHECK(plumb::weight_text(3113.4761999999505) == "3,113.48");
  CHECK(plumb::weight_text(1216.324000000002) == "1,216.32");
  CHECK(plumb::weight_text(347.9999999) == "348");  // whole to 2 decimals
  CHECK(plumb::weight_text(800.0000000001) == "800");
  CHECK(plumb::weight_text(1234567.5) == "1,234,567.50");
  CHECK(plumb::weight_text(-2.5) == "-2.50");
  CHECK(plumb::weight_text(0.5) == "0.500");
  CHECK(plumb::weight_text(0.3333) == "0.333");
  CHECK(plumb::weight_text(0.00123) == "0.00123");
  CHECK(plumb::weight_text(2.5e-5) == "2.50e-05");
  CHECK(plumb::weight_text(1e-300) == "1.00e-300");
  CHECK(plumb::weight_text(nan_) == "n/a");
  CHECK(plumb::weight_text(inf_) == "n/a");
}

TEST_CASE("percent_text, share_text, significant_text, shortest_text", "[number_text]") {
  CHECK(plumb::percent_text(0.95) == "95%");
  CHECK(plumb::percent_text(0.995) == "99.5%");
  CHECK(plumb::percent_text(0.0) == "0%");
  CHECK(plumb::percent_text(1.0) == "100%");
  CHECK(plumb::percent_text(nan_) == "n/a");
  CHECK(plumb::share_text(0.1701) == "17.01%");
  CHECK(plumb::share_text(0.0) == "0.00%");
  CHECK(plumb::share_text(1.0) == "100.00%");
  CHECK(plumb::significant_text(0.00794009123, 6) == "0.00794009");
  CHECK(plumb::significant_text(0.05, 4) == "0.05");
  CHECK(plumb::significant_text(1234567.0, 6) == "1.23457e+06");
  CHECK(plumb::significant_text(1e-300, 6) == "1e-300");
  CHECK(plumb::significant_text(-0.0, 6) == "0");
  CHECK(plumb::significant_text(nan_, 6) == "n/a");
  // Plain std::to_chars: fixed or scientific, whichever is shorter.
  CHECK(plumb::shortest_text(4e-6) == "4e-06");
  CHECK(plumb::shortest_text(1e-4) == "1e-04");
  CHECK(plumb::shortest_text(0.988798) == "0.988798");
  CHECK(plumb::shortest_text(1.0) == "1");
  CHECK(plumb::shortest_text(0.0) == "0");
  CHECK(plumb::shortest_text(-0.0) == "0");
  CHECK(plumb::shortest_text(1e-300) == "1e-300");
  CHECK(plumb::shortest_text(nan_) == "n/a");
}
