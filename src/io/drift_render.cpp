#include "plumb/io/drift_render.hpp"

#include <cmath>

#include "io/report_names.hpp"
#include "plumb/number_text.hpp"

namespace plumb {

namespace rn = report_names;
using nlohmann::json;

namespace {

json number_or_null(double x) { return std::isfinite(x) ? json(x) : json(nullptr); }

json figure_json(const DriftFigure& f) {
  json j = {{"reference", number_or_null(f.reference)},
            {"tonight", number_or_null(f.tonight)},
            {"change", number_or_null(f.difference)}};
  if (f.interval && f.interval->used > 0)
    j["interval"] = json::array({number_or_null(f.interval->lo), number_or_null(f.interval->hi)});
  else
    j["interval"] = nullptr;
  return j;
}

std::string_view verdict_word(RefitVerdict v) {
  switch (v) {
    case RefitVerdict::warranted: return "warranted";
    case RefitVerdict::not_warranted: return "not_warranted";
    case RefitVerdict::not_judged: break;
  }
  return "not_judged";
}

// PSI's rules of thumb (common practice: below 0.1 little shift, 0.1 to
// 0.25 some, above 0.25 a large one; some use 0.2).
std::string psi_words(double psi) {
  if (psi < 0.1) return "below 0.1: little shift";
  if (psi <= 0.25) return "0.1 to 0.25: a moderate shift";
  return "above 0.25: a large shift";
}

constexpr const char* refit_rule =
    "refit when tonight's MCB (the miscalibration a refit removes) is above what the map, were it "
    "calibrated, would show on tonight's rows in all but 1 - confidence of label draws";

}  // namespace

std::string refit_line(const DriftReport& r) {
  const DriftResult& d = r.result;
  if (!d.labelled)
    return "Refit: not judged without labels (give --label when tonight's outcomes have arrived); " +
           std::string(d.psi > 0.25 ? "the scores have shifted a lot, so check the map once they do"
                                    : "the score distribution alone cannot show a miscalibration");
  if (d.refit == RefitVerdict::not_judged)
    return "Refit: not judged without bootstrap intervals (--bootstrap 0); rule: " + std::string(refit_rule);
  const std::string figures = "tonight's MCB " + metric_text(d.mcb.tonight) + ", a calibrated map's " +
                              percent_text(r.options.confidence) + " bound " + metric_text(d.mcb_if_calibrated) +
                              ", p " + p_value_text(d.refit_p_value);
  if (d.refit == RefitVerdict::warranted)
    return "Refit: warranted: " + figures + " (rule: " + refit_rule + ")";
  return "Refit: not warranted: " + figures + " (rule: " + refit_rule + ")";
}

json drift_to_json(const DriftReport& r) {
  const DriftResult& d = r.result;
  json bins = json::array();
  for (const DriftBin& b : d.bins)
    bins.push_back({{"score_lo", b.score_lo},
                    {"score_hi", b.score_hi},
                    {"reference_rows", b.reference},
                    {"rows", b.tonight},
                    {"term", b.term}});
  json gates = json::array();
  for (const GateResult& g : r.gates)
    gates.push_back({{"metric", g.gate.metric},
                     {"bound", g.gate.bound == GateBound::max ? "max" : "min"},
                     {"limit", g.gate.limit},
                     {"value", number_or_null(g.value)},
                     {"passed", !g.exceeded}});
  json j;
  j["source"] = r.source;
  j["source_sha256"] = r.source_sha256;
  j["rows"] = d.tonight_rows;
  j["rows_skipped"] = r.rows_skipped;
  j["map"] = {{"file", r.map_file}, {"kind", r.map_kind}, {"score_column", r.score_column},
              {"fitted_range", json::array({r.fitted_min, r.fitted_max})}};
  j["reference"] = {{"kind", r.reference_kind}, {"source", r.reference_source}, {"rows", d.reference_rows},
                    {"grid_step", r.grid_step}};
  j["psi"] = d.psi;
  j["psi_bins"] = std::move(bins);
  j["ks"] = {{"statistic", d.ks.statistic}, {"p_value", d.ks.p_value}, {"method", "asymptotic"}};
  j["outside_rows"] = d.outside_rows;
  j["outside_share"] = d.tonight_rows > 0 ? static_cast<double>(d.outside_rows) / static_cast<double>(d.tonight_rows) : 0.0;
  j[std::string(rn::mean_forecast.json)] = {{"reference", d.mean_forecast_reference},
                                             {"tonight", d.mean_forecast_tonight},
                                             {"change", d.mean_forecast_tonight - d.mean_forecast_reference}};
  j["labelled"] = d.labelled;
  if (d.labelled) {
    j[std::string(rn::observed_rate.json)] = figure_json(d.base_rate);
    j[std::string(rn::log_loss.json)] = figure_json(d.log_loss);
    j[std::string(rn::brier.json)] = figure_json(d.brier);
    j[std::string(rn::ece.json)] = figure_json(d.ece);
    j[std::string(rn::brier_mcb.json)] = figure_json(d.mcb);
  } else {
    for (const rn::Name* n : {&rn::observed_rate, &rn::log_loss, &rn::brier, &rn::ece, &rn::brier_mcb})
      j[std::string(n->json)] = nullptr;
  }
  j["bootstrap"] = {{"replicates", r.options.bootstrap},
                    {"confidence", r.options.confidence},
                    {"seed", r.options.seed},
                    {"paired", false}};
  j["refit"] = {{"verdict", verdict_word(d.refit)},
                {"rule", refit_rule},
                {"mcb_if_calibrated", number_or_null(d.mcb_if_calibrated)},
                {"p_value", number_or_null(d.refit_p_value)}};
  j["gates"] = std::move(gates);
  return j;
}

std::string render_drift_text(const DriftReport& r, bool unicode) {
  const DriftResult& d = r.result;
  std::string out;
  auto line = [&](const std::string& label, const std::string& value) {
    std::string l = "  " + label;
    if (l.size() < 34) l.resize(34, ' ');
    out += l + value + "\n";
  };
  std::string ref = r.reference_kind == "artifact" ? "the fit rows' reference in " + r.map_file
                                                    : (r.reference_kind == "tally" ? "the tally " : "the rows of ") +
                                                          r.reference_source;
  out += "Drift of " + r.score_column + " in " + r.source + " (" + count_text(d.tonight_rows) + " rows) against " +
         ref + " (" + count_text(d.reference_rows) + " rows), " + r.map_kind + " map\n";
  out += "Scores counted on a grid of step " + shortest_text(r.grid_step) +
         (unicode ? " in log-odds; every figure is of the grid's scores\n" : " in log-odds; every figure is of the grid's scores\n");
  line("PSI (" + std::to_string(d.bins.size()) + " bins of the map)",
       metric_text(d.psi) + "  " + psi_words(d.psi) + " (common practice: 0.1 and 0.25; some use 0.2)");
  line("KS statistic", metric_text(d.ks.statistic) + "  p " + p_value_text(d.ks.p_value) + " (asymptotic)");
  line("outside the fitted range", share_text(d.tonight_rows ? static_cast<double>(d.outside_rows) /
                                                                   static_cast<double>(d.tonight_rows)
                                                             : 0.0) +
                                       " (" + count_text(d.outside_rows) + (d.outside_rows == 1 ? " row" : " rows") +
                                       " outside " +
                                       range_text(shortest_text(r.fitted_min), shortest_text(r.fitted_max), unicode) +
                                       ")");
  line(std::string(rn::mean_forecast.text) + " (expected rate)",
       probability_text(d.mean_forecast_tonight) + "  reference " + probability_text(d.mean_forecast_reference) +
           "  change " + difference_text(d.mean_forecast_tonight - d.mean_forecast_reference));
  if (d.labelled) {
    out += "With labels: reference -> tonight, change";
    if (r.options.bootstrap > 0)
      out += " and its " + percent_text(r.options.confidence) + " bootstrap interval (" +
             std::to_string(r.options.bootstrap) + " replicates, the two sides resampled independently)";
    out += "\n";
    auto figure = [&](const rn::Name& name, const DriftFigure& f, bool probability) {
      const auto text = [&](double x) { return probability ? probability_text(x) : metric_text(x); };
      std::string v = text(f.reference) + (unicode ? " → " : " -> ") + text(f.tonight) + "  " +
                      difference_text(f.difference);
      if (f.interval && f.interval->used > 0)
        v += " " + interval_text(difference_text(f.interval->lo), difference_text(f.interval->hi));
      line(std::string(name.text), v);
    };
    figure(rn::observed_rate, d.base_rate, true);
    figure(rn::log_loss, d.log_loss, false);
    figure(rn::brier, d.brier, false);
    figure(rn::ece, d.ece, false);
    figure(rn::brier_mcb, d.mcb, false);
  }
  out += refit_line(r) + "\n";
  out += "PSI bins: scores (the grid's, 4 significant digits), reference share, tonight's share, PSI term\n";
  for (const DriftBin& b : d.bins) {
    const std::string range =
        range_text(significant_text(b.score_lo, 4), significant_text(b.score_hi, 4), unicode);
    // The en dash is three bytes and one column.
    const std::size_t shown = range.size() - (unicode && range.find("\u2013") != std::string::npos ? 2 : 0);
    std::string l = "  " + range + std::string(shown < 24 ? 24 - shown : 1, ' ');
    std::string ref = share_text(static_cast<double>(b.reference) / static_cast<double>(d.reference_rows));
    std::string now = share_text(static_cast<double>(b.tonight) / static_cast<double>(d.tonight_rows));
    ref.insert(0, ref.size() < 8 ? 8 - ref.size() : 0, ' ');
    now.insert(0, now.size() < 8 ? 8 - now.size() : 0, ' ');
    out += l + ref + "  " + now + "  " + metric_text(b.term) + "\n";
  }
  for (const GateResult& g : r.gates) {
    out += "Gate " + std::string(g.gate.bound == GateBound::max ? "--max " : "--min ") + g.gate.metric + "=" +
           significant_text(g.gate.limit, 6) + ": " + (g.exceeded ? "FAILED" : "passed");
    if (std::isfinite(g.value)) out += " (" + significant_text(g.value, 6) + ")";
    else out += " (could not be computed)";
    out += "\n";
  }
  return out;
}

}  // namespace plumb
