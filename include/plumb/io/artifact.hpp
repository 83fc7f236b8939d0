#pragma once
// The map artifact: a fitted map with the input it expects, where it came
// from and how the fit went, as one JSON document (docs/artifact-format.md).
#include <cstdint>
#include <memory>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "plumb/calibration_map.hpp"
#include "plumb/cross_fit.hpp"
#include "plumb/drift.hpp"
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
  std::string created_utc;     // ISO 8601 (utc_now), empty when written with --no-timestamp
};

// The current time as ISO 8601 UTC with seconds ("2026-12-02T11:32:40Z"),
// as a provenance's created_utc records it.
std::string utc_now();

// One adjustment of the map's odds, as the artifact records it
// (docs/artifact-format.md, "odds_adjustment"; docs/methods.md).
struct OddsStep {
  enum class Reason {
    negative_sampling,  // the fit rows kept each negative at rate negative_rate: odds x negative_rate
    prior_shift,        // the base rate moved from base_rate_from to base_rate_to: Bayes' rule on the odds
  };
  Reason reason = Reason::prior_shift;
  double negative_rate = 1.0;   // negative_sampling: in (0, 1]
  double base_rate_from = 0.0;  // prior_shift: the base rate the map gave before this step (add_odds_step sets it)
  double base_rate_to = 0.0;    // prior_shift: the new base rate, in (0, 1)
  // prior_shift: how base_rate_to was estimated (method, rows, interval...);
  // null when it was given.
  nlohmann::json estimate = nullptr;
  double factor = 1.0;          // this step's odds factor (add_odds_step sets it)
};

struct Artifact {
  // The map as `apply`, `report --map` and `inspect` use it: with
  // odds_steps, an OddsAdjustedMap (plumb/odds_adjustment.hpp) around the
  // fitted map, applying the product of the steps' factors.
  std::unique_ptr<CalibrationMap> map;
  std::string score_column;
  Provenance provenance;
  nlohmann::json fit_options = nlohmann::json::object();  // the options the map was fitted with
  // What `plumb cross-fit` measured and chose (folds, split, seed, out-of-fold
  // evidence, the choice and its reason); null for a map from `plumb fit`.
  nlohmann::json cross_fit = nullptr;
  // Odds adjustments in the order they were made; empty for a map as
  // fitted. Added with add_odds_step only, which keeps `map` in step.
  std::vector<OddsStep> odds_steps;
  // The fit rows counted on drift's grid of the score (plumb drift's
  // reference; docs/artifact-format.md, "drift_reference"); absent for a
  // map fitted on weighted rows, with fit --no-reference, and in artifacts
  // older than format version 5.
  std::optional<GridCells> reference;
};

// The base rate of the fit rows (weight of positives over total weight),
// and the base rate the map's probabilities are calibrated for once every
// odds step is applied (the fit rows' base rate with its odds multiplied by
// each step's factor).
double fitted_base_rate(const Artifact& artifact);
double target_base_rate(const Artifact& artifact);

// Append `step` and make artifact.map apply every step. Sets the step's
// factor (negative_rate; or the prior shift from target_base_rate() before
// the step to base_rate_to) and base_rate_from. Throws Error(usage),
// leaving the artifact as it was, for a negative_rate outside (0, 1], a base
// rate outside (0, 1), or a product of factors outside the normal doubles.
void add_odds_step(Artifact& artifact, OddsStep step);

// The format version the artifact is written with: the highest version
// among the features it carries, 1 for a map as fitted without any (which
// every plumb reads); 2 with odds steps (which a plumb that reads only
// version 1 refuses as "written by a newer plumb", rather than applying the
// map without them); 3 for a Venn-Abers kind (venn_abers,
// cross_venn_abers); 5 with a drift reference. (4, a multi-class map, is
// written by plumb/io/class_artifact.hpp.)
int artifact_version(const Artifact& artifact);

// The whole document, including its integrity hash. Deterministic: the same
// artifact gives the same bytes.
std::string artifact_to_text(const Artifact& artifact);

// Parse and validate a document. `where` names it in messages. Rejects with
// plumb::Error(artifact): text that is not JSON (with line and column),
// another format, a format version this build does not read, missing or
// mistyped fields, non-finite numbers, invalid map parameters, an odds
// adjustment in a version 1 document or one whose recorded base rates and
// factors disagree with their recomputation, and a document whose integrity
// hash does not match its content, and a drift reference in a document
// below version 5. Reads versions 1, 2 and 5 (3 and 4 belong to features
// this build does not have and are refused as written by a newer plumb).
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
