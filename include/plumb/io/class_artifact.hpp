#pragma once
// The multi-class map artifact: a fitted multi-class map with its classes,
// the score columns it expects, where it came from and how the fit went, as
// one JSON document (docs/artifact-format.md, "Multi-class maps"). It is the
// binary artifact's document with a `classes` member, `input.score_columns`
// in place of `input.score_column`, and per-class weights in the provenance;
// it is written at format version 4, which a plumb that reads only versions
// 1 and 2 refuses as "written by a newer plumb".
#include <cstdint>
#include <memory>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "plumb/class_map.hpp"

namespace plumb {

// The format version of the multi-class feature (the `classes` member).
inline constexpr int class_artifact_feature_version = 4;

struct ClassProvenance {
  std::string source;         // file name as given ("<stdin>" for standard input)
  std::string source_sha256;  // SHA-256 of the input bytes, lowercase hex
  std::uint64_t rows = 0;     // rows read
  double weight_total = 0.0;
  std::vector<double> class_weights;  // weight of the rows of each class, in class order
  std::string label_column;
  std::string weight_column;  // empty when unweighted
  std::optional<std::uint64_t> rows_skipped;  // with --missing skip
  std::string tool;           // "plumb 0.1.0"
  std::string created_utc;    // empty when written with --no-timestamp
};

struct ClassArtifact {
  std::unique_ptr<ClassCalibrationMap> map;  // holds the classes and the scale
  std::vector<std::string> score_columns;    // the header name of each class's scores, in class order
  ClassProvenance provenance;
  nlohmann::json fit_options = nlohmann::json::object();
  nlohmann::json cross_fit = nullptr;  // cross-fit's evidence, null for a map from fit
};

// The version the artifact is written with: the highest among the features
// it carries (the classes: class_artifact_feature_version).
int class_artifact_version(const ClassArtifact& artifact);

// The whole document with its integrity hash; the same artifact gives the
// same bytes. Throws Error(input) when a name is not valid UTF-8.
std::string class_artifact_to_text(const ClassArtifact& artifact);
nlohmann::json class_artifact_to_json(const ClassArtifact& artifact);

// Parse and validate a document (all of artifact_from_text's checks of the
// shared fields, then the classes: at least two, distinct; one score column
// per class; the map's parameters; per-class weights). Throws
// plumb::Error(artifact) naming `where` and the field, and for a document
// holding a binary map ("a binary map", expecting apply --score).
ClassArtifact class_artifact_from_text(const std::string& text, const std::string& where);

// Whether the artifact at `path` holds a multi-class map, and its text (read
// once: the caller parses it with class_artifact_from_text or
// artifact_from_text). Throws plumb::Error as artifact_from_text does for
// what every artifact must hold; io when it cannot be read.
struct ArtifactFile {
  std::string text;
  std::string name;  // as messages name it
  bool multi_class = false;
};
ArtifactFile read_artifact_file(const std::string& path);

}  // namespace plumb
