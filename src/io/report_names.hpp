#pragma once
// One display name per concept of the report, shared by the text, Markdown,
// SVG and JSON renderers so that a figure is called the same everywhere.
// `display` is what a reader sees; `json` is the report JSON's key (or
// value) for the same thing; `gate` the gate metric that reads it, if any.
// A later formatting layer builds on this table.
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstddef>
#include <numeric>
#include <string>
#include <string_view>
#include <vector>

#include "plumb/report.hpp"

namespace plumb::report_names {

struct Name {
  std::string_view display;
  std::string_view json;
  std::string_view gate;  // empty: no gate reads it
};

inline constexpr Name calibration_in_the_large{"calibration in the large", "calibration_in_the_large",
                                               "calibration_in_the_large"};
inline constexpr Name calibration_slope{"calibration slope", "slope", "slope"};
// The intercept of the fit with the slope fixed at 1 (an offset): the trade's
// "calibration intercept"; the two-parameter fit's intercept is named apart.
inline constexpr Name calibration_intercept{"calibration intercept", "intercept_at_unit_slope", ""};
inline constexpr Name intercept_slope_free{"intercept, slope free", "intercept_free", ""};
inline constexpr Name pav_curve{"PAV (CORP) curve", "pav_curve", ""};
inline constexpr Name diagonal{"forecast = observed", "", ""};
inline constexpr Name consistency_band{"band if calibrated", "band", ""};
inline constexpr Name equal_width{"equal-width", "equal_width", "ece"};
inline constexpr Name equal_mass{"equal-mass", "equal_mass", "ece_mass"};
inline constexpr Name hosmer_lemeshow{"Hosmer-Lemeshow", "hosmer_lemeshow", "hosmer_lemeshow_p"};
inline constexpr Name spiegelhalter{"Spiegelhalter Z", "spiegelhalter", "spiegelhalter_p"};
inline constexpr Name holm_p{"Holm-adjusted p", "p_adjusted", ""};

// Segment tables in text and Markdown show at most this many rows: every
// flagged segment, then the largest (by weight) of the others; a line says
// how many were left out. The JSON keeps every segment.
inline constexpr std::size_t segment_rows_shown = 20;

// Which of `segments` a capped table shows: every flagged one, then the
// others by weight, largest first (ties: the report's order), until `cap`
// rows are chosen. Flagged segments are shown even beyond the cap.
inline std::vector<bool> segments_shown(const std::vector<SegmentSummary>& segments,
                                        std::size_t cap = segment_rows_shown) {
  std::vector<bool> shown(segments.size(), false);
  std::size_t chosen = 0;
  for (std::size_t i = 0; i < segments.size(); ++i)
    if (segments[i].flagged) {
      shown[i] = true;
      ++chosen;
    }
  std::vector<std::size_t> order(segments.size());
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) {
    return segments[a].weight > segments[b].weight;
  });
  for (std::size_t i : order) {
    if (chosen >= cap) break;
    if (shown[i]) continue;
    shown[i] = true;
    ++chosen;
  }
  return shown;
}

// Number formats shared by the text and Markdown renderers, one per kind
// of figure so that a column of a table has one format:
// - metric_text: scores and calibration errors, 4 decimals; a small
//   non-zero value (|x| < 1e-3) in 3 significant digits, scientific (an
//   ECE of 3e-5 is not an ECE of 0);
// - stat_text: test statistics, 2 decimals;
// - p_value_text: 4 decimals down to the floor 1e-4, below it 2 significant
//   digits in scientific notation; "<1e-300" when it underflowed to 0.
// Non-finite numbers print as "n/a"; "-0.0000" prints without its sign.
inline std::string format_number(const char* format, int precision, double x) {
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, format, precision, x);
  std::string s = buffer;
  if (!s.empty() && s[0] == '-' && s.find_first_not_of("0.", 1) == std::string::npos) s.erase(0, 1);
  return s;
}
inline std::string fixed_text(double x, int decimals) {
  if (!std::isfinite(x)) return "n/a";
  return format_number("%.*f", decimals, x);
}
inline std::string metric_text(double x) {
  if (!std::isfinite(x)) return "n/a";
  if (x != 0.0 && std::fabs(x) < 1e-3) return format_number("%.*e", 2, x);
  return fixed_text(x, 4);
}
inline std::string stat_text(double x) { return fixed_text(x, 2); }
inline constexpr double p_value_floor = 1e-4;
inline std::string p_value_text(double p) {
  if (!std::isfinite(p)) return "n/a";
  if (p >= p_value_floor) return fixed_text(p, 4);
  if (p > 0.0) return format_number("%.*e", 1, p);
  return "<1e-300";  // underflowed: smaller than any double we could print
}

}  // namespace plumb::report_names
