#include "io/artifact_odds.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <memory>
#include <string>
#include <string_view>

#include "core/json_fields.hpp"
#include "plumb/error.hpp"
#include "plumb/odds_adjustment.hpp"

namespace plumb {

namespace jf = json_fields;
using nlohmann::json;

namespace {

double product_of_factors(const std::vector<OddsStep>& steps) noexcept {
  double k = 1.0;
  for (const OddsStep& s : steps) k *= s.factor;
  return k;
}

bool agrees(double recorded, double recomputed) noexcept {
  return std::fabs(recorded - recomputed) <= 1e-9 * std::fabs(recomputed);
}

}  // namespace

namespace io {

json odds_adjustment_json(const std::vector<OddsStep>& steps) {
  json list = json::array();
  for (const OddsStep& s : steps) {
    json step;
    if (s.reason == OddsStep::Reason::negative_sampling) {
      step = {{"reason", "negative_sampling"}, {"negative_rate", s.negative_rate}, {"factor", s.factor}};
    } else {
      step = {{"reason", "prior_shift"},
              {"base_rate_from", s.base_rate_from},
              {"base_rate_to", s.base_rate_to},
              {"factor", s.factor}};
      if (!s.estimate.is_null()) step["estimate"] = s.estimate;
    }
    list.push_back(std::move(step));
  }
  return {{"factor", product_of_factors(steps)}, {"steps", std::move(list)}};
}

void read_odds_adjustment(const json& doc, Artifact& a, const std::string& where) {
  const json& adj = jf::require(doc, odds_adjustment_key, where, odds_adjustment_key);
  const json& steps = jf::require(adj, "steps", where, "odds_adjustment.steps");
  if (!steps.is_array() || steps.empty())
    jf::fail(where, "odds_adjustment.steps", "is not a non-empty array", "the steps written by plumb");
  for (std::size_t i = 0; i < steps.size(); ++i) {
    const std::string path = "odds_adjustment.steps[" + std::to_string(i) + "]";
    const json& s = steps[i];
    if (!s.is_object()) jf::fail(where, path, "is not an object", "a step written by plumb");
    OddsStep step;
    const std::string reason = jf::require_string(s, "reason", where, path + ".reason");
    if (reason == "negative_sampling") {
      step.reason = OddsStep::Reason::negative_sampling;
      step.negative_rate = jf::require_finite(s, "negative_rate", where, path + ".negative_rate");
      if (!(step.negative_rate > 0.0 && step.negative_rate <= 1.0))
        jf::fail(where, path + ".negative_rate", "lies outside (0, 1]", "the rate negatives were kept at");
    } else if (reason == "prior_shift") {
      step.base_rate_to = jf::require_finite(s, "base_rate_to", where, path + ".base_rate_to");
      if (!(step.base_rate_to > 0.0 && step.base_rate_to < 1.0))
        jf::fail(where, path + ".base_rate_to", "lies outside (0, 1)", "a base rate strictly between 0 and 1");
      if (s.contains("estimate")) {
        if (!s["estimate"].is_object())
          jf::fail(where, path + ".estimate", "is not an object", "how plumb adjust estimated the base rate");
        step.estimate = s["estimate"];
      }
    } else {
      jf::fail(where, path + ".reason", "is '" + reason + "'", "negative_sampling or prior_shift");
    }
    try {
      add_odds_step(a, step);
    } catch (const Error& e) {
      jf::fail(where, path, e.message(), e.expected());
    }
    const OddsStep& made = a.odds_steps.back();
    if (!agrees(jf::require_finite(s, "factor", where, path + ".factor"), made.factor))
      jf::fail(where, path + ".factor", "disagrees with the step's rates", "the factor the rates give");
    if (step.reason == OddsStep::Reason::prior_shift &&
        !agrees(jf::require_finite(s, "base_rate_from", where, path + ".base_rate_from"), made.base_rate_from))
      jf::fail(where, path + ".base_rate_from", "disagrees with the fit's base rate and the steps before",
               "the base rate the map gave before this step");
  }
  if (!agrees(jf::require_finite(adj, "factor", where, "odds_adjustment.factor"), product_of_factors(a.odds_steps)))
    jf::fail(where, "odds_adjustment.factor", "disagrees with its steps", "the product of the steps' factors");
}


}  // namespace io

double fitted_base_rate(const Artifact& a) {
  return a.provenance.weight_total > 0.0 ? a.provenance.positives / a.provenance.weight_total : 0.0;
}

double target_base_rate(const Artifact& a) {
  return shifted_base_rate(fitted_base_rate(a), product_of_factors(a.odds_steps));
}

void add_odds_step(Artifact& a, OddsStep step) {
  if (step.reason == OddsStep::Reason::negative_sampling) {
    if (!(step.negative_rate > 0.0 && step.negative_rate <= 1.0))
      throw Error(ErrorKind::usage, "the rate negatives were kept at lies outside (0, 1]", {},
                  std::to_string(step.negative_rate), "a rate in (0, 1], such as 0.1 for one negative in ten");
    step.factor = step.negative_rate;
  } else {
    step.base_rate_from = target_base_rate(a);
    step.factor = prior_shift_factor(step.base_rate_from, step.base_rate_to);
  }
  std::vector<OddsStep> steps = a.odds_steps;
  steps.push_back(std::move(step));
  // A factor beyond the normal doubles would make k p overflow or vanish
  // for ordinary p (base rates within 1e-300 of 0 or 1, or many steps).
  // Refused before the artifact changes.
  const double k = product_of_factors(steps);
  if (!(k >= std::numeric_limits<double>::min() && k <= std::numeric_limits<double>::max()))
    throw Error(ErrorKind::usage, "the odds factor of the adjustment is out of the range of a double", {},
                std::to_string(k), "base rates and rates well inside (0, 1)");
  std::unique_ptr<CalibrationMap> base = std::move(a.map);
  if (auto* adjusted = dynamic_cast<OddsAdjustedMap*>(base.get())) {
    FitDiagnostics d = adjusted->diagnostics();
    base = adjusted->release_base();
    base->restore_diagnostics(std::move(d));
  }
  a.odds_steps = std::move(steps);
  a.map = std::make_unique<OddsAdjustedMap>(std::move(base), k);
}

// The highest version among the features the artifact carries (each
// feature's number is in docs/artifact-format.md, "Versioning"); a feature
// added later takes one more line here. Multi-class maps (4) are written by
// their own writer (plumb/io/class_artifact.hpp).
int artifact_version(const Artifact& a) {
  // The highest version among the features the artifact carries.
  int version = 1;
  if (!a.odds_steps.empty()) version = std::max(version, 2);
  // A Venn-Abers kind, alone or as a part of a fold average: 3.
  auto venn_abers = [](std::string_view kind) { return kind == "venn_abers" || kind == "cross_venn_abers"; };
  bool has_venn_abers = a.map && venn_abers(a.map->kind());
  if (a.map && a.map->kind() == "fold_average")
    for (const json& part : a.map->parameters().value("maps", json::array()))
      has_venn_abers = has_venn_abers || (part.contains("kind") && part["kind"].is_string() &&
                                          venn_abers(part["kind"].get<std::string>()));
  if (has_venn_abers) version = std::max(version, 3);
  if (a.reference) version = std::max(version, 5);
  return version;
}

}  // namespace plumb
