#pragma once
// plumb drift's output: the terminal text and the JSON object (its shape is
// docs/drift-format.md), both from one DriftReport.
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "plumb/drift.hpp"
#include "plumb/report.hpp"

namespace plumb {

struct DriftReport {
  DriftResult result;
  DriftOptions options;
  std::string source, source_sha256;  // tonight's file as named, and its SHA-256
  std::uint64_t rows_skipped = 0;     // rows left out for a missing score (--missing skip)
  std::string map_file, map_kind, score_column;
  // Where the reference came from: "artifact" (the map's own reference),
  // "rows" (--reference FILE) or "tally" (--reference-tally FILE), and that file.
  std::string reference_kind, reference_source;
  double grid_step = 0.0;
  double fitted_min = 0.0, fitted_max = 0.0;  // the map's fitted score range
  std::vector<GateResult> gates;
};

// The JSON object (docs/drift-format.md): deterministic for one report.
nlohmann::json drift_to_json(const DriftReport& report);

// The terminal text: a few lines of figures, the rules of thumb marked as
// common practice, the refit line and the PSI bins. `unicode` false uses
// ASCII only.
std::string render_drift_text(const DriftReport& report, bool unicode = true);

// The one line on the refit: the verdict and its rule, in words.
std::string refit_line(const DriftReport& report);

}  // namespace plumb
