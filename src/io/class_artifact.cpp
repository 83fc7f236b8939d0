#include "plumb/io/class_artifact.hpp"

#include <algorithm>
#include <limits>
#include <set>

#include "core/json_fields.hpp"
#include "io/artifact_document.hpp"
#include "plumb/error.hpp"
#include "plumb/io/artifact.hpp"

namespace plumb {

namespace jf = json_fields;
using nlohmann::json;

int class_artifact_version(const ClassArtifact&) {
  int version = 1;
  version = std::max(version, class_artifact_feature_version);  // the classes member
  return version;
}

json class_artifact_to_json(const ClassArtifact& a) {
  const ClassProvenance& p = a.provenance;
  const FitDiagnostics& d = a.map->diagnostics();
  json doc;
  doc["format"] = artifact_format_marker;
  doc["format_version"] = class_artifact_version(a);
  doc["kind"] = std::string(a.map->kind());
  doc["classes"] = a.map->classes();
  doc["input"] = {{"score_columns", a.score_columns}, {"scale", std::string(to_string(a.map->scale()))}};
  doc["parameters"] = a.map->parameters();
  doc["fit"] = {{"iterations", d.iterations},
                {"converged", d.converged},
                {"log_loss", d.log_loss},
                {"clipped_rows", d.clipped},
                {"notes", d.notes},
                {"options", a.fit_options}};
  doc["provenance"] = {{"source", p.source},
                       {"source_sha256", p.source_sha256},
                       {"rows", p.rows},
                       {"weight_total", p.weight_total},
                       {"class_weights", p.class_weights},
                       {"label_column", p.label_column},
                       {"weight_column", p.weight_column.empty() ? json(nullptr) : json(p.weight_column)},
                       {"tool", p.tool},
                       {"created_utc", p.created_utc.empty() ? json(nullptr) : json(p.created_utc)}};
  if (p.rows_skipped) doc["provenance"]["rows_skipped"] = *p.rows_skipped;
  if (!a.cross_fit.is_null()) doc["cross_fit"] = a.cross_fit;
  return doc;
}

std::string class_artifact_to_text(const ClassArtifact& a) {
  json doc = class_artifact_to_json(a);
  try {
    doc["integrity_sha256"] = integrity_hash(doc);
    return doc.dump(2) + "\n";
  } catch (const json::type_error&) {
    Location loc;
    loc.file = a.provenance.source;
    throw Error(ErrorKind::input, "a file, column or class name is not valid UTF-8 and cannot be kept in the artifact",
                loc, {}, "UTF-8 file, column and class names");
  }
}

namespace {

std::vector<std::string> string_array(const json& obj, std::string_view key, const std::string& where,
                                      const std::string& path) {
  const json& v = jf::require(obj, key, where, path);
  if (!v.is_array()) jf::fail(where, path, "is not an array", "an array of strings");
  std::vector<std::string> out;
  for (const json& e : v) {
    if (!e.is_string()) jf::fail(where, path, "holds a value that is not a string", "an array of strings");
    out.push_back(e.get<std::string>());
  }
  return out;
}

}  // namespace

ClassArtifact class_artifact_from_text(const std::string& text, const std::string& where) {
  const json doc = io::artifact_document(text, where);
  const std::int64_t version = doc["format_version"].get<std::int64_t>();
  Location loc;
  loc.file = where;
  if (!doc.contains("classes"))
    throw Error(ErrorKind::artifact, "the map artifact holds a binary map", loc, {},
                "a multi-class map here (a binary map is applied with plumb apply --score)");
  if (version < class_artifact_feature_version)
    jf::fail(where, "classes", "is present in a format version " + std::to_string(version) + " document",
             "format version " + std::to_string(class_artifact_feature_version) + " for a multi-class map");
  std::vector<std::string> classes = string_array(doc, "classes", where, "classes");
  if (classes.size() < 2) jf::fail(where, "classes", "holds fewer than two classes", "two or more class names");
  if (std::set<std::string>(classes.begin(), classes.end()).size() != classes.size())
    jf::fail(where, "classes", "names a class twice", "distinct class names");
  const std::size_t k = classes.size();

  ClassArtifact a;
  const std::string kind = jf::require_string(doc, "kind", where, "kind");
  const json& input = jf::require(doc, "input", where, "input");
  a.score_columns = string_array(input, "score_columns", where, "input.score_columns");
  if (a.score_columns.size() != k)
    jf::fail(where, "input.score_columns", "does not hold one column per class",
             std::to_string(k) + " column names, in the order of the classes");
  const std::string scale_text = jf::require_string(input, "scale", where, "input.scale");
  const auto scale = parse_class_scale(scale_text);
  if (!scale) jf::fail(where, "input.scale", "is '" + scale_text + "'", "probability or logit");
  a.map = load_class_map(kind, std::move(classes), *scale, jf::require(doc, "parameters", where, "parameters"), where);

  const json& fit = jf::require(doc, "fit", where, "fit");
  a.fit_options = jf::require(fit, "options", where, "fit.options");
  if (!a.fit_options.is_object()) jf::fail(where, "fit.options", "is not an object", "the options of the fit");
  FitDiagnostics d;
  const std::uint64_t iterations = jf::require_count(fit, "iterations", where, "fit.iterations");
  if (iterations > static_cast<std::uint64_t>(std::numeric_limits<int>::max()))
    jf::fail(where, "fit.iterations", "is too large", "a count below 2^31");
  d.iterations = static_cast<int>(iterations);
  d.converged = jf::require_bool(fit, "converged", where, "fit.converged");
  d.log_loss = jf::require_finite(fit, "log_loss", where, "fit.log_loss");
  d.clipped = static_cast<std::size_t>(jf::require_count(fit, "clipped_rows", where, "fit.clipped_rows"));
  d.notes = string_array(fit, "notes", where, "fit.notes");
  a.map->restore_diagnostics(std::move(d));
  if (doc.contains("cross_fit")) {
    if (!doc["cross_fit"].is_object())
      jf::fail(where, "cross_fit", "is not an object", "the evidence written by plumb cross-fit");
    a.cross_fit = doc["cross_fit"];
  }
  const json& p = jf::require(doc, "provenance", where, "provenance");
  ClassProvenance& pr = a.provenance;
  pr.source = jf::require_string(p, "source", where, "provenance.source");
  pr.source_sha256 = jf::require_string(p, "source_sha256", where, "provenance.source_sha256");
  pr.rows = jf::require_count(p, "rows", where, "provenance.rows");
  pr.weight_total = jf::require_finite(p, "weight_total", where, "provenance.weight_total");
  pr.class_weights = jf::require_finite_array(p, "class_weights", where, "provenance.class_weights");
  if (pr.class_weights.size() != k)
    jf::fail(where, "provenance.class_weights", "does not hold one weight per class", std::to_string(k) + " weights");
  for (double w : pr.class_weights)
    if (!(w >= 0.0)) jf::fail(where, "provenance.class_weights", "holds a negative weight", "weights >= 0");
  pr.label_column = jf::require_string(p, "label_column", where, "provenance.label_column");
  const json& wc = jf::require(p, "weight_column", where, "provenance.weight_column");
  if (!wc.is_string() && !wc.is_null())
    jf::fail(where, "provenance.weight_column", "is neither a string nor null", "a column name, or null");
  pr.weight_column = wc.is_string() ? wc.get<std::string>() : std::string();
  if (p.contains("rows_skipped"))
    pr.rows_skipped = jf::require_count(p, "rows_skipped", where, "provenance.rows_skipped");
  pr.tool = jf::require_string(p, "tool", where, "provenance.tool");
  const json& created = jf::require(p, "created_utc", where, "provenance.created_utc");
  if (!created.is_string() && !created.is_null())
    jf::fail(where, "provenance.created_utc", "is neither a string nor null", "a UTC time, or null");
  pr.created_utc = created.is_string() ? created.get<std::string>() : std::string();
  return a;
}

ArtifactFile read_artifact_file(const std::string& path) {
  ArtifactFile f;
  f.text = io::artifact_text(path, &f.name);
  const json doc = io::artifact_document(f.text, f.name);
  f.multi_class = doc.contains("classes");
  return f;
}

}  // namespace plumb
