#pragma once
// The formatting layer's concept table: one entry per concept of the report,
// shared by the text, Markdown, SVG and JSON renderers so that a figure is
// called the same everywhere. The number rules are the other half of the
// layer (plumb/number_text.hpp, included here: namespace plumb).
// - `text`: the terminal report's label (short: its tables share 80 columns);
// - `markdown`: the full name, which the Markdown tables and every sentence
//   use (the Markdown report has room to say what a figure is);
// - `json`: the report JSON's key for it at its place in
//   docs/report-format.md (empty: not a key of its own);
// - `gate`: the gate metric (--max/--min) that reads it (empty: none).
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
  std::string_view text;
  std::string_view markdown;
  std::string_view json;
  std::string_view gate;  // empty: no gate reads it

  std::string text_label() const { return std::string(text); }
  std::string markdown_label() const { return std::string(markdown); }
};

// Headline figures, in the order the text and Markdown reports list them.
inline constexpr Name observed_rate{"observed rate", "observed rate", "observed_rate", ""};
inline constexpr Name mean_forecast{"mean forecast", "mean forecast", "mean_forecast", ""};
inline constexpr Name calibration_in_the_large{"calibration in the large",
                                               "calibration in the large (mean forecast - observed)",
                                               "calibration_in_the_large", "calibration_in_the_large"};
inline constexpr Name brier{"Brier score", "Brier score", "brier", "brier"};
inline constexpr Name brier_mcb{"MCB miscalibration", "CORP Brier MCB (miscalibration)", "mcb", "mcb"};
inline constexpr Name brier_dsc{"DSC discrimination", "CORP Brier DSC (discrimination)", "dsc", ""};
inline constexpr Name brier_unc{"UNC uncertainty", "CORP Brier UNC (uncertainty)", "unc", ""};
inline constexpr Name log_loss{"log loss (nats)", "log loss (nats)", "log_loss", "log_loss"};
// The CORP terms of the log loss, one row (corp.log_loss.{mcb,dsc,unc}).
inline constexpr Name log_loss_terms{"MCB, DSC, UNC", "CORP log loss MCB / DSC / UNC", "log_loss", "mcb_log"};
inline constexpr Name ece{"ECE", "ECE", "ece", ""};  // its gate depends on the binning, below
inline constexpr Name mce{"MCE", "MCE", "mce", "mce"};
inline constexpr Name l2_debiased{"l2 debiased", "debiased l2 error", "l2_debiased", "l2_debiased"};
inline constexpr Name l2_plugin{"plug-in", "plug-in l2 error", "l2_plugin", ""};
inline constexpr Name calibration_slope{"calibration slope", "calibration slope", "slope", "slope"};
// The intercept of the fit with the slope fixed at 1 (an offset): the trade's
// "calibration intercept"; the two-parameter fit's intercept is named apart.
inline constexpr Name calibration_intercept{"calibration intercept", "calibration intercept (slope fixed at 1)",
                                            "intercept_at_unit_slope", ""};
inline constexpr Name intercept_slope_free{"intercept, slope free", "intercept, slope free", "intercept_free", ""};
inline constexpr Name hosmer_lemeshow{"H-L", "Hosmer-Lemeshow", "hosmer_lemeshow", ""};
inline constexpr Name hosmer_lemeshow_p{"p", "Hosmer-Lemeshow p-value", "p_value", "hosmer_lemeshow_p"};
inline constexpr Name spiegelhalter{"Spiegelhalter Z", "Spiegelhalter Z", "spiegelhalter", ""};
inline constexpr Name spiegelhalter_p{"p", "Spiegelhalter p-value", "p_value", "spiegelhalter_p"};
inline constexpr Name auc{"AUC", "AUC", "auc", "auc"};
// A Venn-Abers map's interval [p0, p1]: its width over the rows.
inline constexpr Name interval_width{"interval width", "interval width p1 - p0 (Venn-Abers)", "interval_width", ""};
inline constexpr Name at_zero_or_one{"forecasts of 0 or 1", "forecasts exactly 0 or 1", "forecasts_at_0_or_1", ""};

// Reliability tables, segments and charts.
inline constexpr Name rows{"rows", "rows", "rows", ""};
inline constexpr Name weight{"weight", "weight", "weight", ""};
inline constexpr Name effective_size{"effective size", "effective size", "effective_size", ""};
inline constexpr Name positives{"positives", "positives (weight)", "positives", ""};
inline constexpr Name gap{"gap", "gap (forecast - observed)", "gap", ""};
inline constexpr Name holm_p{"Holm p", "Holm p", "p_adjusted", ""};
inline constexpr Name pav_curve{"PAV (CORP) curve", "PAV (CORP) curve", "pav_curve", ""};
inline constexpr Name diagonal{"forecast = observed", "forecast = observed", "", ""};
inline constexpr Name consistency_band{"band if calibrated", "band if calibrated", "band", ""};
inline constexpr Name equal_width{"equal-width", "equal-width", "equal_width", "ece"};
inline constexpr Name equal_mass{"equal-mass", "equal-mass", "equal_mass", "ece_mass"};

// The name of a binning (its `gate` reads that binning's ECE).
inline constexpr const Name& binning(BinningKind kind) {
  return kind == BinningKind::equal_mass ? equal_mass : equal_width;
}

// Every entry, for the tests that hold the table to the JSON and the gates.
inline constexpr const Name* all[] = {
    &observed_rate, &mean_forecast, &calibration_in_the_large, &brier, &brier_mcb, &brier_dsc,
    &brier_unc, &log_loss, &log_loss_terms, &ece, &mce, &l2_debiased, &l2_plugin, &calibration_slope,
    &calibration_intercept, &intercept_slope_free, &hosmer_lemeshow, &hosmer_lemeshow_p, &spiegelhalter,
    &spiegelhalter_p, &auc, &at_zero_or_one, &interval_width,
    &rows, &weight, &effective_size, &positives, &gap, &holm_p, &pav_curve, &diagonal, &consistency_band,
    &equal_width, &equal_mass};

// The multi-class report (class_report.hpp). Its JSON keys are those of
// docs/report-format.md's multi-class document; no gate reads them yet.
inline constexpr Name class_brier{"Brier score, sum over classes", "Brier score (sum over classes, range 0 to 2)",
                                  "brier", ""};
inline constexpr Name class_log_loss{"log loss (nats)", "log loss of the label's probability (nats)", "log_loss", ""};
inline constexpr Name accuracy{"accuracy", "accuracy (share of rows whose top label is right)", "accuracy", ""};
inline constexpr Name mean_confidence{"mean confidence", "mean confidence (probability of the top label)",
                                      "mean_confidence", ""};
inline constexpr Name confidence_gap{"confidence gap", "confidence gap (mean confidence - accuracy)",
                                     "confidence_gap", ""};
inline constexpr Name top_label_ece{"top-label ECE", "top-label (confidence) ECE", "top_label", ""};
inline constexpr Name classwise_ece{"class-wise ECE", "class-wise ECE (mean of the one-vs-rest ECEs)",
                                    "classwise_ece", ""};
inline constexpr Name class_name{"class", "class", "class", ""};
inline constexpr Name class_share{"share", "share of rows (weight)", "observed_rate", ""};
inline constexpr Name label_probability_zero{"label given 0", "rows giving their label probability 0",
                                             "label_probability_zero", ""};

// Every multi-class entry, for the tests that hold it to the multi-class JSON.
inline constexpr const Name* class_all[] = {&class_brier,   &class_log_loss, &accuracy,   &mean_confidence,
                                            &confidence_gap, &top_label_ece, &classwise_ece, &class_name,
                                            &class_share,   &label_probability_zero};

// Segment tables in text and Markdown show at most this many rows: every
// flagged segment, then the largest (by weight) of the others; a line says
// how many were left out. The JSON keeps every segment.
inline constexpr std::size_t segment_rows_shown = 20;

// Which of `segments` a capped table shows: every flagged one, then the
// others by weight, largest first (ties: the report's order), until `cap`
// rows are chosen. Flagged segments are shown even beyond the cap.
// Any segment type with `flagged` and `weight` (the binary and the
// multi-class report's).
template <class Segment>
std::vector<bool> segments_shown(const std::vector<Segment>& segments, std::size_t cap = segment_rows_shown) {
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

}  // namespace plumb::report_names
