#include "plumb/artifact.hpp"

#include <cmath>
#include <fstream>
#include <iterator>
#include <limits>
#include <sstream>

#include "core/json_fields.hpp"
#include "io/byte_source.hpp"
#include "io/json_input.hpp"
#include "plumb/error.hpp"
#include "plumb/odds_adjustment.hpp"
#include "plumb/version.hpp"

namespace plumb {

namespace jf = json_fields;
using nlohmann::json;

namespace {

constexpr const char* integrity_key = "integrity_sha256";

json diagnostics_json(const FitDiagnostics& d) {
  return {{"iterations", d.iterations},
          {"converged", d.converged},
          {"log_loss", d.log_loss},
          {"clipped_rows", d.clipped},
          {"notes", d.notes}};
}

constexpr const char* odds_key = "odds_adjustment";

double product_of_factors(const std::vector<OddsStep>& steps) noexcept {
  double k = 1.0;
  for (const OddsStep& s : steps) k *= s.factor;
  return k;
}

json odds_json(const std::vector<OddsStep>& steps) {
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

bool agrees(double recorded, double recomputed) noexcept {
  return std::fabs(recorded - recomputed) <= 1e-9 * std::fabs(recomputed);
}

// Rebuilds the steps through add_odds_step, so that the map applies them,
// and checks that what the document states agrees with the recomputation.
void read_odds_steps(const json& doc, Artifact& a, const std::string& where) {
  const json& adj = jf::require(doc, odds_key, where, odds_key);
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

}  // namespace

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

int artifact_version(const Artifact& a) { return a.odds_steps.empty() ? 1 : 2; }

std::string integrity_hash(const json& document) { return io::sha256_hex(document.dump()); }

json artifact_to_json(const Artifact& a) {
  const Provenance& p = a.provenance;
  json doc;
  doc["format"] = artifact_format_marker;
  doc["format_version"] = artifact_version(a);
  doc["kind"] = std::string(a.map->kind());
  doc["input"] = {{"score_column", a.score_column}, {"scale", std::string(to_string(a.map->scale()))}};
  doc["parameters"] = a.map->parameters();
  doc["fit"] = diagnostics_json(a.map->diagnostics());
  doc["fit"]["options"] = a.fit_options;
  doc["provenance"] = {{"source", p.source},
                       {"source_sha256", p.source_sha256},
                       {"rows", p.rows},
                       {"positives", p.positives},
                       {"weight_total", p.weight_total},
                       {"label_column", p.label_column},
                       {"weight_column", p.weight_column.empty() ? json(nullptr) : json(p.weight_column)},
                       {"positive_rule", p.positive_rule},
                       {"score_min", p.score_min},
                       {"score_max", p.score_max},
                       {"tool", p.tool},
                       {"created_utc", p.created_utc.empty() ? json(nullptr) : json(p.created_utc)}};
  if (p.rows_skipped) doc["provenance"]["rows_skipped"] = *p.rows_skipped;
  if (!a.cross_fit.is_null()) doc["cross_fit"] = a.cross_fit;
  if (!a.odds_steps.empty()) doc[odds_key] = odds_json(a.odds_steps);
  return doc;
}

std::string artifact_to_text(const Artifact& a) {
  json doc = artifact_to_json(a);
  try {
    doc[integrity_key] = integrity_hash(doc);
    return doc.dump(2) + "\n";
  } catch (const json::type_error&) {
    // JSON text must be UTF-8; the only free text is names from the input.
    Location loc;
    loc.file = a.provenance.source;
    throw Error(ErrorKind::input, "a file or column name is not valid UTF-8 and cannot be kept in the artifact",
                loc, {}, "UTF-8 file and column names");
  }
}

Artifact artifact_from_text(const std::string& text, const std::string& where) {
  if (io::json_nested_deeper_than(text)) {
    Location loc;
    loc.file = where;
    throw Error(ErrorKind::artifact,
                "the map artifact nests arrays or objects more than " + std::to_string(io::max_json_nesting) + " levels deep",
                loc, {}, "a JSON document written by plumb fit");
  }
  json doc;
  try {
    doc = json::parse(text);
  } catch (const json::out_of_range&) {
    Location loc;
    loc.file = where;
    throw Error(ErrorKind::artifact, "the map artifact holds a number too large for a double", loc, {},
                "finite numbers, as written by plumb fit");
  } catch (const json::parse_error& e) {
    // Turn the byte offset into a line and column.
    Location loc;
    loc.file = where;
    io::locate_byte(text, e.byte, loc);
    const bool truncated = e.byte >= text.size();
    throw Error(ErrorKind::artifact,
                truncated ? "the map artifact ends early (truncated?)" : "the map artifact is not valid JSON", loc,
                {}, "a complete JSON document written by plumb fit");
  }
  Location loc;
  loc.file = where;
  if (!doc.is_object() || !doc.contains("format") || doc["format"] != artifact_format_marker)
    throw Error(ErrorKind::artifact, "not a plumb map artifact", loc, {},
                std::string("a JSON object with \"format\": \"") + artifact_format_marker + "\"");
  const std::int64_t version = jf::require_integer(doc, "format_version", where, "format_version");
  if (version < artifact_format_version_oldest || version > artifact_format_version)
    throw Error(ErrorKind::artifact,
                version > artifact_format_version
                    ? "the map artifact has format version " + std::to_string(version) +
                          ", written by a newer plumb"
                    : "the map artifact has unknown format version " + std::to_string(version),
                loc, {},
                "format version " + std::to_string(artifact_format_version_oldest) + " to " +
                    std::to_string(artifact_format_version) + " (plumb " + version_string + ")");
  const std::string stated = jf::require_string(doc, integrity_key, where, integrity_key);
  json content = doc;
  content.erase(integrity_key);
  if (integrity_hash(content) != stated)
    throw Error(ErrorKind::artifact, "the map artifact's content does not match its integrity hash (edited or corrupted)",
                loc, {}, "an artifact as written by plumb fit");

  Artifact a;
  const std::string kind = jf::require_string(doc, "kind", where, "kind");
  const json& input = jf::require(doc, "input", where, "input");
  a.score_column = jf::require_string(input, "score_column", where, "input.score_column");
  const std::string scale_text = jf::require_string(input, "scale", where, "input.scale");
  const auto scale = parse_scale(scale_text);
  if (!scale) jf::fail(where, "input.scale", "is '" + scale_text + "'", "probability, logit or margin");
  a.map = load_map(kind, *scale, jf::require(doc, "parameters", where, "parameters"), where);

  const json& fit = jf::require(doc, "fit", where, "fit");
  a.fit_options = jf::require(fit, "options", where, "fit.options");
  FitDiagnostics d;
  // FitDiagnostics holds an int: a larger count would wrap to a negative
  // number, which plumb would then write and refuse to read back.
  const std::uint64_t iterations = jf::require_count(fit, "iterations", where, "fit.iterations");
  if (iterations > static_cast<std::uint64_t>(std::numeric_limits<int>::max()))
    jf::fail(where, "fit.iterations", "is too large", "a count below 2^31");
  d.iterations = static_cast<int>(iterations);
  d.converged = jf::require_bool(fit, "converged", where, "fit.converged");
  d.log_loss = jf::require_finite(fit, "log_loss", where, "fit.log_loss");
  d.clipped = static_cast<std::size_t>(jf::require_count(fit, "clipped_rows", where, "fit.clipped_rows"));
  const json& notes = jf::require(fit, "notes", where, "fit.notes");
  if (!notes.is_array()) jf::fail(where, "fit.notes", "is not an array", "an array of strings");
  for (const json& n : notes) {
    if (!n.is_string()) jf::fail(where, "fit.notes", "holds a value that is not a string", "an array of strings");
    d.notes.push_back(n.get<std::string>());
  }
  a.map->restore_diagnostics(std::move(d));
  if (doc.contains("cross_fit")) {
    if (!doc["cross_fit"].is_object())
      jf::fail(where, "cross_fit", "is not an object", "the evidence written by plumb cross-fit");
    a.cross_fit = doc["cross_fit"];
  }
  const json& p = jf::require(doc, "provenance", where, "provenance");
  Provenance& pr = a.provenance;
  pr.source = jf::require_string(p, "source", where, "provenance.source");
  pr.source_sha256 = jf::require_string(p, "source_sha256", where, "provenance.source_sha256");
  pr.rows = jf::require_count(p, "rows", where, "provenance.rows");
  pr.positives = jf::require_finite(p, "positives", where, "provenance.positives");
  pr.weight_total = jf::require_finite(p, "weight_total", where, "provenance.weight_total");
  if (!(pr.positives >= 0.0 && pr.positives <= pr.weight_total))
    jf::fail(where, "provenance.positives", "lies outside [0, weight_total]", "the weight of the positive rows");
  pr.label_column = jf::require_string(p, "label_column", where, "provenance.label_column");
  const json& wc = jf::require(p, "weight_column", where, "provenance.weight_column");
  if (!wc.is_string() && !wc.is_null())
    jf::fail(where, "provenance.weight_column", "is neither a string nor null", "a column name, or null");
  pr.weight_column = wc.is_string() ? wc.get<std::string>() : std::string();
  pr.positive_rule = jf::require_string(p, "positive_rule", where, "provenance.positive_rule");
  if (p.contains("rows_skipped"))
    pr.rows_skipped = jf::require_count(p, "rows_skipped", where, "provenance.rows_skipped");
  pr.score_min = jf::require_finite(p, "score_min", where, "provenance.score_min");
  pr.score_max = jf::require_finite(p, "score_max", where, "provenance.score_max");
  pr.tool = jf::require_string(p, "tool", where, "provenance.tool");
  const json& created = jf::require(p, "created_utc", where, "provenance.created_utc");
  if (!created.is_string() && !created.is_null())
    jf::fail(where, "provenance.created_utc", "is neither a string nor null", "a UTC time, or null");
  pr.created_utc = created.is_string() ? created.get<std::string>() : std::string();
  // Last: a prior shift's starting base rate is the fit rows'.
  if (doc.contains(odds_key)) {
    if (version < 2)
      jf::fail(where, odds_key, "is present in a format version 1 document",
               "format version 2 for a map with an odds adjustment");
    read_odds_steps(doc, a, where);
  }
  return a;
}

Artifact load_artifact(const std::string& path) {
  io::ByteSourceOptions read_options;
  read_options.decompress = true;  // an artifact written with -o NAME.gz
  io::ByteSource source(path, read_options);
  std::string text;
  char chunk[1 << 16];
  for (std::size_t n; (n = source.read(chunk, sizeof chunk)) > 0;) {
    text.append(chunk, n);
    if (text.size() > (std::size_t{256} << 20)) {
      Location loc;
      loc.file = source.name();
      throw Error(ErrorKind::artifact, "the file is too large to be a map artifact", loc);
    }
  }
  if (text.empty()) {
    Location loc;
    loc.file = source.name();
    throw Error(ErrorKind::artifact, "the map artifact is empty", loc, {}, "a JSON document written by plumb fit");
  }
  return artifact_from_text(text, source.name());
}

}  // namespace plumb
