// The multi-class report as JSON (docs/report-format.md, "The multi-class
// document"): every number, non-finite ones as null. Keys of the concepts
// the other renderers show come from report_names.hpp.
#include <cmath>

#include "plumb/io/class_report_render.hpp"
#include "plumb/version.hpp"
#include "report_names.hpp"

namespace plumb {
namespace {

using nlohmann::json;
namespace rn = report_names;

constexpr int class_report_format_version = 1;

json num(double v) { return std::isfinite(v) ? json(v) : json(nullptr); }
std::string key(const rn::Name& n) { return std::string(n.json); }

json interval(const BootstrapInterval& i) {
  return {{"lo", num(i.lo)}, {"hi", num(i.hi)}, {"replicates_used", i.used}};
}

json calibration_error_json(const CalibrationError& c) {
  return {{"binning", std::string(to_string(c.binning))},
          {"bins", c.bins},
          {"nonempty_bins", c.nonempty_bins},
          {key(rn::ece), num(c.ece)},
          {key(rn::mce), num(c.mce)},
          {key(rn::l2_plugin), num(c.l2_plugin)},
          {"l2_squared_debiased", num(c.l2_squared_debiased)},
          {key(rn::l2_debiased), num(c.l2_debiased)}};
}

json table_json(const ReliabilityTable& t, const std::vector<Interval>& band) {
  json bins = json::array();
  for (std::size_t b = 0; b < t.bins.size(); ++b) {
    const ReliabilityBin& r = t.bins[b];
    json row = {{"edge_lo", num(r.edge_lo)},
                {"edge_hi", num(r.edge_hi)},
                {"forecast_min", num(r.forecast_min)},
                {"forecast_max", num(r.forecast_max)},
                {key(rn::rows), r.rows},
                {key(rn::weight), num(r.weight)},
                {key(rn::effective_size), num(r.effective_size)},
                {key(rn::mean_forecast), num(r.mean_forecast)},
                {"observed", num(r.observed)},
                {"observed_lo", num(r.observed_lo)},
                {"observed_hi", num(r.observed_hi)},
                {key(rn::gap), num(r.gap)}};
    if (b < band.size()) row[key(rn::consistency_band)] = {{"lo", num(band[b].lo)}, {"hi", num(band[b].hi)}};
    bins.push_back(std::move(row));
  }
  return {{"binning", std::string(to_string(t.binning))}, {"confidence", t.confidence}, {"bins", bins}};
}

}  // namespace

json class_report_to_json(const ClassReport& r) {
  const ClassReportOptions& o = r.options;
  json pav = json::array();
  for (const PavBlock& b : r.top_label_pav)
    pav.push_back({{"score_lo", num(b.score_lo)},
                   {"score_hi", num(b.score_hi)},
                   {"value", num(b.value)},
                   {key(rn::weight), num(b.weight)}});
  json histogram = json::array();
  for (double h : r.confidence_histogram) histogram.push_back(num(h));
  json classes = json::array();
  for (const ClassSummary& c : r.classes)
    classes.push_back({{"name", c.name},
                       {key(rn::rows), c.rows},
                       {key(rn::weight), num(c.weight)},
                       {key(rn::class_share), num(c.observed_rate)},
                       {key(rn::mean_forecast), num(c.mean_forecast)},
                       {key(rn::calibration_in_the_large), num(c.calibration_in_the_large)},
                       {"calibration_error",
                        {{key(rn::equal_width), calibration_error_json(c.ece_equal_width)},
                         {key(rn::equal_mass), calibration_error_json(c.ece_equal_mass)}}},
                       {"reliability_table", table_json(c.table, {})}});
  json bootstrap = nullptr;
  if (r.bootstrap) {
    const ClassBootstrapResult& b = *r.bootstrap;
    bootstrap = {{key(rn::class_brier), interval(b.brier)},
                 {key(rn::class_log_loss), interval(b.log_loss)},
                 {key(rn::accuracy), interval(b.accuracy)},
                 {key(rn::confidence_gap), interval(b.confidence_gap)},
                 {key(rn::top_label_ece), interval(b.top_label_ece)},
                 {key(rn::classwise_ece), interval(b.classwise_ece)}};
  }
  json gates = json::array();
  for (const GateResult& g : r.gates)
    gates.push_back({{"metric", g.gate.metric},
                     {"bound", g.gate.bound == GateBound::max ? "max" : "min"},
                     {"limit", num(g.gate.limit)},
                     {"value", num(g.value)},
                     {"exceeded", g.exceeded}});
  return {{"format", "plumb-class-report"},
          {"format_version", class_report_format_version},
          {"tool", std::string("plumb ") + version_string},
          {"source", r.source},
          {"label_column", r.label_column},
          {"weight_column", r.weight_column.empty() ? json(nullptr) : json(r.weight_column)},
          {"score_columns", r.score_columns},
          {"rows_skipped", r.rows_skipped ? json(*r.rows_skipped) : json(nullptr)},
          {"scale", r.scale == ClassScale::logit ? "logit" : "probability"},
          {"options",
           {{"bins", o.bins},
            {"binning", std::string(to_string(o.binning))},
            {"bootstrap", o.bootstrap},
            {"seed", o.seed},
            {"confidence", o.confidence},
            {"histogram_bins", o.histogram_bins}}},
          {key(rn::rows), r.rows},
          {key(rn::weight), num(r.weight)},
          {key(rn::class_brier), num(r.brier)},
          {key(rn::class_log_loss), num(r.log_loss)},
          {key(rn::label_probability_zero), r.true_class_at_zero},
          {key(rn::accuracy), num(r.accuracy)},
          {key(rn::mean_confidence), num(r.mean_confidence)},
          {key(rn::confidence_gap), num(r.confidence_gap)},
          {key(rn::top_label_ece),
           {{"calibration_error",
             {{key(rn::equal_width), calibration_error_json(r.top_label_equal_width)},
              {key(rn::equal_mass), calibration_error_json(r.top_label_equal_mass)}}},
            {"reliability_table", table_json(r.top_label_table, r.top_label_band)},
            {key(rn::pav_curve), pav},
            {"confidence_histogram", histogram}}},
          {key(rn::classwise_ece),
           {{key(rn::equal_width), num(r.classwise_ece_equal_width)},
            {key(rn::equal_mass), num(r.classwise_ece_equal_mass)}}},
          {"classes", classes},
          {"bootstrap", bootstrap},
          {"gates", gates},
          {"any_gate_exceeded", r.any_gate_exceeded()},
          {"cautions", r.cautions}};
}

}  // namespace plumb
