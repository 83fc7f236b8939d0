// The multi-class report as JSON (docs/report-format.md, "The multi-class
// document"): every number, non-finite ones as null. Keys of the concepts
// the other renderers show come from report_names.hpp.
#include <cmath>
#include <vector>

#include "plumb/error.hpp"
#include "plumb/io/class_report_render.hpp"
#include "plumb/version.hpp"
#include "report_names.hpp"

namespace plumb {
namespace {

using nlohmann::json;
namespace rn = report_names;

// Version 1: one model, its members at the top level. Version 2: several
// models side by side (the scores and each map's model of them), under
// `models`; the writer uses version 1 whenever it holds the content.
constexpr int class_report_format_version = 1;
constexpr int class_report_models_version = 2;

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

namespace {

json segments_json(const std::vector<ClassSegmentSummary>& segments) {
  json out = json::array();
  for (const ClassSegmentSummary& g : segments) {
    json j = {{"value", g.value}, {key(rn::rows), g.rows}, {key(rn::weight), num(g.weight)}, {"too_few", g.too_few}};
    if (!g.too_few) {
      j[key(rn::class_brier)] = num(g.brier);
      j[key(rn::class_log_loss)] = num(g.log_loss);
      j[key(rn::accuracy)] = num(g.accuracy);
      j[key(rn::confidence_gap)] = num(g.confidence_gap);
      j["top_label_ece"] = num(g.top_label_ece);  // a number here, named as its gate
      j[key(rn::classwise_ece)] = num(g.classwise_ece);
      j["spiegelhalter_z"] = num(g.spiegelhalter.z);
      j["spiegelhalter_p"] = num(g.spiegelhalter.p_value);
      j["p_adjusted"] = num(g.p_adjusted);
      j["flagged"] = g.flagged;
    }
    out.push_back(std::move(j));
  }
  return out;
}

// The members of one model: its figures, tables and intervals.
json model_members(const ClassReport& r) {
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
  return {{"score_columns", r.score_columns},
          {"scale", r.scale == ClassScale::logit ? "logit" : "probability"},
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
          {"bootstrap", bootstrap}};
}

// With --by: the segment column and its rule at the top, each model's segments in its members.
void add_segments(json& doc, json& model, const ClassReport& r) {
  if (r.segment_column.empty()) return;
  doc["segment_column"] = r.segment_column;
  doc["options"]["min_segment"] = num(r.min_segment_weight);
  doc["options"]["segment_alpha"] = num(r.segment_alpha);
  model["segments"] = segments_json(r.segments);
}

// The members every model shares: the input and the options.
json shared_members(const ClassReport& r, int version) {
  const ClassReportOptions& o = r.options;
  return {{"format", "plumb-class-report"},
          {"format_version", version},
          {"tool", std::string("plumb ") + version_string},
          {"source", r.source},
          {"label_column", r.label_column},
          {"weight_column", r.weight_column.empty() ? json(nullptr) : json(r.weight_column)},
          {"rows_skipped", r.rows_skipped ? json(*r.rows_skipped) : json(nullptr)},
          {"options",
           {{"bins", o.bins},
            {"binning", std::string(to_string(o.binning))},
            {"bootstrap", o.bootstrap},
            {"seed", o.seed},
            {"confidence", o.confidence},
            {"histogram_bins", o.histogram_bins}}}};
}

json gate_json(const GateResult& g, bool with_model) {
  json j = {{"metric", g.gate.metric},
            {"bound", g.gate.bound == GateBound::max ? "max" : "min"},
            {"limit", num(g.gate.limit)},
            {"value", num(g.value)},
            {"exceeded", g.exceeded}};
  if (with_model) j["model"] = g.column;
  return j;
}

json map_json(const std::optional<ClassMapOrigin>& m) {
  if (!m) return nullptr;
  return {{"file", m->file},
          {"kind", m->kind},
          {"integrity_sha256", m->integrity},
          {"created_utc", m->created_utc.empty() ? json(nullptr) : json(m->created_utc)},
          {"tool", m->tool},
          {"fitted_source", m->fitted_source},
          {"fitted_sha256", m->fitted_sha256},
          {"fitted_rows", m->fitted_rows}};
}

}  // namespace

json class_report_to_json(const ClassReport& r) {
  ClassReportSet set;
  set.models.push_back(r);
  set.gates = r.gates;
  return class_report_to_json(set);
}

json class_report_to_json(const ClassReportSet& set) {
  if (set.models.empty()) throw Error(ErrorKind::internal, "class_report_to_json: no model");
  const ClassReport& first = set.models.front();
  if (set.models.size() == 1 && !first.map) {
    // One model as read: version 1, its members at the top level.
    json doc = shared_members(first, class_report_format_version);
    json model = model_members(first);
    add_segments(doc, model, first);
    doc.update(model);
    json gates = json::array();
    for (const GateResult& g : set.gates) gates.push_back(gate_json(g, false));
    doc["gates"] = gates;
    doc["any_gate_exceeded"] = set.any_gate_exceeded();
    doc["cautions"] = first.cautions;
    return doc;
  }
  json doc = shared_members(first, class_report_models_version);
  json models = json::array();
  for (const ClassReport& r : set.models) {
    json m = model_members(r);
    add_segments(doc, m, r);
    m["name"] = r.name;
    m["map"] = map_json(r.map);
    m["cautions"] = r.cautions;
    models.push_back(std::move(m));
  }
  doc["models"] = models;
  json gates = json::array();
  for (const GateResult& g : set.gates) gates.push_back(gate_json(g, true));
  doc["gates"] = gates;
  doc["any_gate_exceeded"] = set.any_gate_exceeded();
  return doc;
}

}  // namespace plumb
