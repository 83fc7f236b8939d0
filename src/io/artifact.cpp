#include "plumb/io/artifact.hpp"

#include <ctime>
#include <fstream>
#include <iterator>
#include <limits>
#include <sstream>

#include "core/json_fields.hpp"
#include "io/byte_source.hpp"
#include "io/artifact_document.hpp"
#include "io/artifact_odds.hpp"
#include "io/artifact_reference.hpp"
#include "io/json_input.hpp"
#include "plumb/error.hpp"
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

json figures_json(const OutOfFoldFigures& f) {
  return {{"log_loss", f.log_loss},
          {"brier", f.brier},
          {"ece", f.ece},
          {"mcb", f.mcb},
          {"auc", f.auc},
          {"fold_log_loss", f.fold_log_loss},
          {"fold_log_loss_sd", f.fold_log_loss_sd}};
}

}  // namespace

json cross_fit_evidence(const CrossFitResult& r, SplitKind split, const std::string& split_column,
                        std::uint64_t seed, const std::string& final_kind) {
  json candidates = json::array();
  for (const Candidate& c : r.candidates) {
    json e = figures_json(c.figures);
    e["kind"] = c.kind;
    e["log_loss_minus_best"] = c.diff_vs_best;
    e["log_loss_minus_best_se"] = c.diff_se;
    candidates.push_back(std::move(e));
  }
  json split_json = {{"kind", std::string(to_string(split))}};
  if (!split_column.empty()) split_json["column"] = split_column;
  return {{"folds", r.folds.count},
          {"split", split_json},
          {"seed", seed},
          {"final", final_kind},
          {"scored_rows", r.scored_rows},
          {"candidates", candidates},
          {"raw", r.has_raw ? figures_json(r.raw) : json(nullptr)},
          {"chosen", r.candidates[r.chosen].kind},
          {"reason", r.reason}};
}

std::string evidence_to_text(const json& evidence) { return evidence.dump(2) + "\n"; }

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
  if (!a.odds_steps.empty()) doc[io::odds_adjustment_key] = io::odds_adjustment_json(a.odds_steps);
  if (a.reference) doc[io::drift_reference_key] = io::drift_reference_json(*a.reference);
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

namespace io {

json artifact_document(const std::string& text, const std::string& where) {
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
  // Version 4 is a multi-class map's, refused below by the binary reader
  // when its classes are missing (docs/artifact-format.md, "Versioning").
  const bool newer = version > artifact_format_version;
  if (version < artifact_format_version_oldest || newer)
    throw Error(ErrorKind::artifact,
                newer ? "the map artifact has format version " + std::to_string(version) +
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

  return doc;
}

}  // namespace io

Artifact artifact_from_text(const std::string& text, const std::string& where) {
  const json doc = io::artifact_document(text, where);
  const std::int64_t version = doc["format_version"].get<std::int64_t>();
  if (doc.contains("classes")) {
    Location loc;
    loc.file = where;
    throw Error(ErrorKind::artifact, "the map artifact holds a multi-class map", loc, {},
                "a binary map here (plumb apply, inspect and export, plumb_class_map_load in C and "
                "plumb.load_class_map in Python read a multi-class map)");
  }
  // Version 4 is the multi-class feature's (docs/artifact-format.md, "Versioning").
  if (version == 4)
    jf::fail(where, "classes", "is missing", "the classes of a format version 4 (multi-class) document");
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
  if (doc.contains(io::odds_adjustment_key)) {
    if (version < 2)
      jf::fail(where, io::odds_adjustment_key, "is present in a format version 1 document",
               "format version 2 for a map with an odds adjustment");
    io::read_odds_adjustment(doc, a, where);
  }
  if (doc.contains(io::drift_reference_key)) {
    if (version < 5)
      jf::fail(where, io::drift_reference_key, "is present in a format version " + std::to_string(version) + " document",
               "format version 5 for a map with a drift reference");
    a.reference = io::read_drift_reference(doc, a.map->scale(), where);
  }
  return a;
}

namespace io {

std::string artifact_text(const std::string& path, std::string* name) {
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
  if (name) *name = source.name();
  return text;
}

}  // namespace io

Artifact load_artifact(const std::string& path) {
  std::string name;
  const std::string text = io::artifact_text(path, &name);
  return artifact_from_text(text, name);
}

std::string utc_now() {
  const std::time_t t = std::time(nullptr);
  std::tm tm{};
  ::gmtime_r(&t, &tm);
  char text[32];
  std::strftime(text, sizeof text, "%Y-%m-%dT%H:%M:%SZ", &tm);
  return text;
}

}  // namespace plumb
