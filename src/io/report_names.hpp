#pragma once
// One display name per concept of the report, shared by the text, Markdown,
// SVG and JSON renderers so that a figure is called the same everywhere.
// `display` is what a reader sees; `json` is the report JSON's key (or
// value) for the same thing; `gate` the gate metric that reads it, if any.
// A later formatting layer builds on this table.
#include <algorithm>
#include <cstddef>
#include <numeric>
#include <string>
#include <string_view>
#include <vector>

#include "plumb/number_text.hpp"
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

// Number formats shared by the text and Markdown renderers (one per kind
// of figure, so that a column of a table has one format) are those of
// plumb/number_text.hpp, which the report's cautions use too.
using plumb::fixed_text;
using plumb::metric_text;
using plumb::p_value_floor;
using plumb::p_value_text;
using plumb::stat_text;

}  // namespace plumb::report_names
