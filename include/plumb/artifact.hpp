#pragma once
// The map artifact: a fitted map with the input it expects, where it came
// from and how the fit went, as one JSON document (docs/artifact-format.md).
#include <cstdint>
#include <memory>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>

#include "plumb/calibration_map.hpp"
#include "plumb/cross_fit.hpp"
#include "plumb/folds.hpp"

namespace plumb {

inline constexpr const char* artifact_format_marker = "plumb-map";

struct Provenance {
  std::string source;          // file name as given ("<stdin>" for standard input)
  std::string source_sha256;   // SHA-256 of the input bytes, lowercase hex
  std::uint64_t rows = 0;      // rows read
  double positives = 0.0;      // weight of positive rows (their count when unweighted)
  double weight_total = 0.0;
  std::string label_column;
  std::string weight_column;   // empty when unweighted
  std::string positive_rule;   // how labels were read, e.g. "1/0 or true/false" (LabelRule::describe)
  // Rows left out for a missing score or label when fitted with --missing
  // skip; nullopt when the fit refused missing values (and in artifacts
  // written before the option existed).
  std::optional<std::uint64_t> rows_skipped;
  double score_min = 0.0, score_max = 0.0;
  std::string tool;            // "plumb 0.1.0"
  std::string created_utc;     // ISO 8601, empty when written with --no-timestamp
};

struct Artifact {
  std::unique_ptr<CalibrationMap> map;
  std::string score_column;
  Provenance provenance;
  nlohmann::json fit_options = nlohmann::json::object();  // the options the map was fitted with
  // What `plumb cross-fit` measured and chose (folds, split, seed, out-of-fold
  // evidence, the choice and its reason); null for a map from `plumb fit`.
  nlohmann::json cross_fit = nullptr;
};

// The whole document, including its integrity hash. Deterministic: the same
// artifact gives the same bytes.
std::string artifact_to_text(const Artifact& artifact);

// Parse and validate a document. `where` names it in messages. Rejects with
// plumb::Error(artifact): text that is not JSON (with line and column),
// another format, a format version this build does not read, missing or
// mistyped fields, non-finite numbers, invalid map parameters, and a
// document whose integrity hash does not match its content.
Artifact artifact_from_text(const std::string& text, const std::string& where);

// Read a file ("-" for standard input) and parse it as above; plumb::Error(io)
// if it cannot be read.
Artifact load_artifact(const std::string& path);

// The document without its integrity field, as JSON, and the hash of its
// canonical (compact, sorted-key) serialisation.
nlohmann::json artifact_to_json(const Artifact& artifact);
std::string integrity_hash(const nlohmann::json& document_without_integrity);

// The evidence of a cross-fit as the artifact's "cross_fit" member holds it
// (docs/artifact-format.md): folds, the split (its kind, and its column when
// `split_column` is not empty), the seed, the shipped map (`final_kind`:
// "refit" or "folds"), the rows scored, each candidate's out-of-fold figures
// and paired difference against the best, the raw score's figures (null when
// the score is not a probability), the chosen kind and the reason.
// Precondition: `result` holds at least one candidate.
nlohmann::json cross_fit_evidence(const CrossFitResult& result, SplitKind split, const std::string& split_column,
                                  std::uint64_t seed, const std::string& final_kind);

// The evidence as cross-fit's --json file writes it: indented, one newline at the end.
std::string evidence_to_text(const nlohmann::json& evidence);

}  // namespace plumb
