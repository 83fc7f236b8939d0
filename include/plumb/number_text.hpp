#pragma once
// Number formats of the report, one per kind of figure, shared by the text
// and Markdown renderers and the report's cautions so that a figure reads
// the same wherever it is printed:
// - fixed_text: `decimals` decimals;
// - metric_text: scores and calibration errors, 4 decimals; a small
//   non-zero value (|x| < 1e-3) in 3 significant digits, scientific (an
//   ECE of 3e-5 is not an ECE of 0);
// - stat_text: test statistics, 2 decimals;
// - p_value_text: 4 decimals down to the floor 1e-4 (0.5 -> "0.5000",
//   1e-4 -> "0.0001"), below it 2 significant digits in scientific
//   notation (9.9e-5 -> "9.9e-05"); "<1e-300" when it underflowed to 0.
// Non-finite numbers print as "n/a"; a negative number that rounds to zero
// prints without its sign ("0.0000", not "-0.0000").
#include <string>

namespace plumb {

inline constexpr double p_value_floor = 1e-4;

std::string fixed_text(double x, int decimals);
std::string metric_text(double x);
std::string stat_text(double x);
std::string p_value_text(double p);

}  // namespace plumb
