#pragma once
// The odds_adjustment member of the map artifact (docs/artifact-format.md):
// written beside the fitted map, and read back through add_odds_step so
// that the loaded map applies it. The public side (add_odds_step,
// target_base_rate, artifact_version) is declared in plumb/io/artifact.hpp.
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "plumb/io/artifact.hpp"

namespace plumb::io {

inline constexpr const char* odds_adjustment_key = "odds_adjustment";

// The member's value: {"factor": K, "steps": [...]}. Precondition: steps
// not empty.
nlohmann::json odds_adjustment_json(const std::vector<OddsStep>& steps);

// Reads doc["odds_adjustment"] into `artifact` (whose map, provenance and
// diagnostics are already loaded), step by step through add_odds_step,
// and checks every stated factor and base rate against the recomputation.
// Throws Error(artifact) naming `where` and the field's JSON path.
void read_odds_adjustment(const nlohmann::json& doc, Artifact& artifact, const std::string& where);

}  // namespace plumb::io
