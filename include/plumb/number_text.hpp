#pragma once
// The formatting layer's number rules: one rule per kind of figure, used by
// every renderer of a report (text, Markdown, SVG), by the report's cautions
// and by the CLI's summary lines, so that a figure reads the same wherever
// it is printed. The names of the concepts (labels, JSON keys, gate names)
// are the other half of the layer, src/io/report_names.hpp.
//
// Rules (docs/report-format.md has them as a table):
// - probability_text: probabilities and frequencies (forecasts, observed
//   rates, bin edges, interval ends of frequencies): 4 decimals.
// - difference_text: signed differences of probabilities (calibration in the
//   large, gaps, intercepts): 4 decimals, "+" when the printed digits are
//   not all zero and the value is positive ("+0.0015", "-0.0837", "0.0000").
// - metric_text: scores and calibration errors: 4 decimals; a small non-zero
//   value (|x| < 1e-3) in 3 significant digits, scientific (an ECE of 3e-5
//   is not an ECE of 0).
// - stat_text: test statistics: 2 decimals.
// - p_value_text: 4 decimals down to the floor 1e-4 (0.5 -> "0.5000",
//   1e-4 -> "0.0001"), below it 2 significant digits in scientific notation
//   (9.9e-5 -> "9.9e-05"); "<1e-300" when it underflowed to 0.
// - interval_text: "[lo, hi]", each end already in its figure's rule.
// - range_text: a range of forecasts "lo–hi" (en dash; "-" in ASCII).
// - count_text: whole counts with a comma every three digits ("20,000").
// - weight_text: a whole weight as a count ("3,402"); any other weight of
//   1 or more with 2 decimals ("1,216.32"), left out when they are ".00"
//   (a sum whole but for rounding error, 800.0000000001 -> "800"); one below
//   1 with 3 significant digits ("0.333"), below 1e-4 scientific
//   ("2.50e-05").
// - percent_text: a level (confidence 0.95 -> "95%"), up to 4 significant
//   digits.
// - share_text: a share as a percentage with 2 decimals (0.1701 -> "17.01%").
// - significant_text: `digits` significant digits, printf's %g (gate values
//   and limits take 6: enough to tell a value from a limit it is close to).
// - shortest_text: the shortest decimal that reads back to the same double
//   (score ranges, which the user compares with their own data).
//
// Not a number: no rule prints "nan" or "inf" digits; a non-finite value
// gives the one placeholder "n/a" (not_a_number), whatever the rule. A
// negative number that rounds to zero prints without its sign ("0.0000",
// not "-0.0000"). Every rule is locale-independent (plain '.' and ',').
#include <cstdint>
#include <string>
#include <string_view>

namespace plumb {

inline constexpr double p_value_floor = 1e-4;
inline constexpr std::string_view not_a_number = "n/a";

std::string fixed_text(double x, int decimals);
std::string probability_text(double p);
std::string difference_text(double d);
std::string metric_text(double x);
std::string stat_text(double x);
std::string p_value_text(double p);
std::string interval_text(std::string_view lo, std::string_view hi);
std::string range_text(std::string_view lo, std::string_view hi, bool unicode = true);
std::string count_text(std::uint64_t n);
std::string weight_text(double w);
std::string percent_text(double fraction);
std::string share_text(double fraction);
std::string significant_text(double x, int digits);
std::string shortest_text(double x);

}  // namespace plumb
