#pragma once
// The drift_reference member of the map artifact (docs/artifact-format.md,
// "drift_reference"): the fit rows counted on drift's grid of the score,
// which plumb drift compares tonight's rows with.
#include <nlohmann/json.hpp>
#include <string>

#include "plumb/drift.hpp"

namespace plumb::io {

inline constexpr const char* drift_reference_key = "drift_reference";

// The member's value: {"grid_step", "index", "count", "positive"} and, on the
// probability scale, "at_zero" and "at_one" as [count, positive].
nlohmann::json drift_reference_json(const GridCells& cells);

// Reads doc["drift_reference"] for a map on `scale`. Throws Error(artifact)
// naming `where` and the field's JSON path: a step that is not a positive
// finite number, arrays of different lengths or that are empty, indices not
// strictly ascending or beyond +-2^52, counts of 0, positives above their
// counts, and at_zero or at_one on another scale than probability.
GridCells read_drift_reference(const nlohmann::json& doc, Scale scale, const std::string& where);

}  // namespace plumb::io
