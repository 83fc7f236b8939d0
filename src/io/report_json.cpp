// The report as JSON (docs/report-format.md): every number, non-finite ones
// as null, key names our own and stable across releases of one
// format_version. The keys of the concepts the other renderers show come
// from the formatting layer's concept table (report_names.hpp), so a figure
// and its key are named in one place.
#include <cmath>

#include "plumb/io/report_render.hpp"
#include "plumb/version.hpp"
#include "report_names.hpp"

namespace plumb {
namespace {

using nlohmann::json;

// 2: scores[i].column is the source column and the map has its own member
// (`map`), the display name moved to `name` (docs/report-format.md).
constexpr int report_format_version = 2;

namespace rn = report_names;

json num(double v) { return std::isfinite(v) ? json(v) : json(nullptr); }
std::string key(const rn::Name& n) { return std::string(n.json); }

json interval(const BootstrapInterval& i) {
  return {{"lo", num(i.lo)}, {"hi", num(i.hi)}, {"replicates_used", i.used}};
}

json corp(const CorpTerms& t) {
  return {{"score", num(t.score)}, {"mcb", num(t.mcb)}, {"dsc", num(t.dsc)}, {"unc", num(t.unc)}};
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

json summary_json(const ScoreSummary& s) {
  json pav = json::array();
  for (const PavBlock& b : s.pav_curve)
    pav.push_back({{"score_lo", num(b.score_lo)},
                   {"score_hi", num(b.score_hi)},
                   {"value", num(b.value)},
                   {key(rn::weight), num(b.weight)}});
  json histogram = json::array();
  for (double h : s.histogram) histogram.push_back(num(h));
  json out = {
      {key(rn::rows), s.rows},
      {key(rn::weight), num(s.weight)},
      {key(rn::positives), num(s.positives)},
      {key(rn::observed_rate), num(s.observed_rate)},
      {key(rn::mean_forecast), num(s.mean_forecast)},
      {key(rn::at_zero_or_one), s.at_zero_or_one},
      {key(rn::brier), num(s.brier)},
      {key(rn::log_loss), num(s.log_loss)},
      {key(rn::auc), num(s.auc)},
      {key(rn::calibration_in_the_large), num(s.calibration_in_the_large)},
      {"calibration_regression",
       {{key(rn::calibration_slope), num(s.regression.slope)},
        {key(rn::intercept_slope_free), num(s.regression.intercept_free)},
        {key(rn::calibration_intercept), num(s.regression.intercept_at_unit_slope)},
        {"converged", s.regression.converged},
        {"clipped", s.regression.clipped}}},
      {"murphy",
       {{key(rn::brier), num(s.murphy.brier)},
        {"reliability", num(s.murphy.reliability)},
        {"resolution", num(s.murphy.resolution)},
        {"uncertainty", num(s.murphy.uncertainty)},
        {"within_bin_variance", num(s.murphy.within_bin_variance)},
        {"within_bin_covariance", num(s.murphy.within_bin_covariance)}}},
      {"corp", {{key(rn::brier), corp(s.corp_brier)}, {key(rn::log_loss), corp(s.corp_log_loss)}}},
      {"calibration_error",
       {{key(rn::equal_width), calibration_error_json(s.ece_equal_width)},
        {key(rn::equal_mass), calibration_error_json(s.ece_equal_mass)}}},
      {key(rn::hosmer_lemeshow),
       {{"statistic", num(s.hosmer_lemeshow.statistic)},
        {"df", num(s.hosmer_lemeshow.df)},
        {"p_value", num(s.hosmer_lemeshow.p_value)},
        {"groups_requested", s.hosmer_lemeshow.groups_requested},
        {"used_groups", s.hosmer_lemeshow.used_groups},
        {"degenerate_groups", s.hosmer_lemeshow.degenerate_groups}}},
      {key(rn::spiegelhalter), {{"z", num(s.spiegelhalter.z)}, {"p_value", num(s.spiegelhalter.p_value)}}},
      {"reliability_table", table_json(s.table, s.band)},
      {key(rn::pav_curve), pav},
      {"forecast_histogram", histogram},
  };
  if (s.bootstrap) {
    const BootstrapResult& b = *s.bootstrap;
    out["bootstrap"] = {{key(rn::ece), interval(b.ece)},
                        {key(rn::l2_debiased), interval(b.l2_debiased)},
                        {key(rn::brier), interval(b.brier)},
                        {"mcb", interval(b.mcb_brier)},
                        {key(rn::auc), interval(b.auc)}};
  } else {
    out["bootstrap"] = nullptr;
  }
  return out;
}

json segment_json(const SegmentSummary& g) {
  json out = {{"value", g.value},
              {key(rn::rows), g.rows},
              {key(rn::weight), num(g.weight)},
              {key(rn::positives), num(g.positives)},
              {"too_few_rows", g.too_few}};
  if (g.too_few) return out;
  out[key(rn::mean_forecast)] = num(g.mean_forecast);
  out[key(rn::observed_rate)] = num(g.observed_rate);
  out[key(rn::calibration_in_the_large)] = num(g.calibration_in_the_large);
  out[key(rn::ece)] = num(g.ece);
  out[key(rn::brier)] = num(g.brier);
  out[key(rn::log_loss)] = num(g.log_loss);
  out["spiegelhalter_z"] = num(g.spiegelhalter.z);
  out["p_value"] = num(g.spiegelhalter.p_value);
  out[key(rn::holm_p)] = num(g.p_adjusted);
  out["flagged"] = g.flagged;
  return out;
}

}  // namespace

json report_to_json(const Report& r) {
  const ReportOptions& o = r.options;
  json scores = json::array();
  for (const ScoreReport& sr : r.scores) {
    json segments = json::array();
    for (const SegmentSummary& g : sr.segments) segments.push_back(segment_json(g));
    json entry = summary_json(sr.overall);
    entry["name"] = sr.overall.name;
    entry["column"] = sr.map ? sr.map->column : sr.overall.name;
    entry["map"] = sr.map ? json{{"file", sr.map->file}, {"kind", sr.map->kind}} : json(nullptr);
    if (sr.map && sr.overall.interval_width)
      entry["map"][std::string(key(rn::interval_width))] = {{"mean", num(sr.overall.interval_width->mean)},
                                                            {"median", num(sr.overall.interval_width->median)},
                                                            {"p90", num(sr.overall.interval_width->p90)}};
    entry["segments"] = segments;
    scores.push_back(std::move(entry));
  }
  json gates = json::array();
  for (const GateResult& g : r.gates)
    gates.push_back({{"column", g.column},
                     {"metric", g.gate.metric},
                     {"bound", g.gate.bound == GateBound::max ? "max" : "min"},
                     {"limit", num(g.gate.limit)},
                     {"value", num(g.value)},
                     {"exceeded", g.exceeded}});
  return {{"format", "plumb-report"},
          {"format_version", report_format_version},
          {"tool", std::string("plumb ") + version_string},
          {"source", r.source},
          {"label_column", r.label_column},
          {"weight_column", r.weight_column.empty() ? json(nullptr) : json(r.weight_column)},
          {"segment_column", r.segment_column.empty() ? json(nullptr) : json(r.segment_column)},
          {"rows_skipped", r.rows_skipped ? json(*r.rows_skipped) : json(nullptr)},
          {"options",
           {{"bins", o.bins},
            {"binning", std::string(to_string(o.binning))},
            {"bootstrap", o.bootstrap},
            {"seed", o.seed},
            {"confidence", o.confidence},
            {"hosmer_lemeshow_groups", o.hl_groups},
            {"min_segment_weight", o.min_segment_weight},
            {"segment_alpha", o.segment_alpha},
            {"histogram_bins", o.histogram_bins}}},
          {"scores", scores},
          {"gates", gates},
          {"any_gate_exceeded", r.any_gate_exceeded()},
          {"cautions", r.cautions}};
}

}  // namespace plumb
