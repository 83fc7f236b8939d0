// Fuzz target for the map artifact loader, artifact_from_text
// (plumb/io/artifact.hpp). The input is the artifact text itself.
//
// Each input is loaded twice: as it is, and, when it is a JSON object, with
// its integrity hash recomputed, so that mutations of the fields reach the
// validation of the map's parameters instead of stopping at the hash.
//
// Invariants beyond "no crash":
//  - only plumb::Error escapes;
//  - a loaded artifact maps every admissible score on its scale (the
//    numbers in the document, their neighbours and midpoints, 8-byte
//    windows of the input read as doubles, and a fixed grid with 0, 1,
//    +-1e300, the largest doubles and denormals) to a probability in
//    [0, 1], never NaN;
//  - a map that says it is monotone is non-decreasing over those scores
//    (up to a few ulps for the kinds that end in the logistic function,
//    whose e / (1 + e) can fall by an ulp where e rises by one); a map
//    with an odds adjustment falls only where its fitted map falls;
//  - artifact_to_text of the loaded artifact loads again, gives the same
//    text when written once more, and maps every score to the same
//    probability and flags (a round trip).
#include <algorithm>
#include <cfloat>
#include <cmath>
#include <cstring>
#include <limits>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "fuzz_support.hpp"
#include "io/json_input.hpp"
#include "plumb/io/artifact.hpp"
#include "plumb/odds_adjustment.hpp"

namespace {

using nlohmann::json;

void collect_numbers(const json& j, std::vector<double>& out) {
  if (j.is_number()) {
    out.push_back(j.get<double>());
  } else if (j.is_structured()) {
    for (const json& v : j) collect_numbers(v, out);
  }
}

std::vector<double> sample_scores(const std::string& text, const json* doc, plumb::Scale scale) {
  constexpr double big = std::numeric_limits<double>::max();
  constexpr double tiny = std::numeric_limits<double>::denorm_min();
  std::vector<double> s = {0.0, -0.0, 1.0, -1.0, 0.5, 1e-300, -1e-300, 1e300, -1e300, big, -big, tiny, -tiny,
                           DBL_MIN, -DBL_MIN, 1e-12, 2e-12, 1.0 - 1e-12, 1.0 - 2e-12,
                           std::nextafter(1.0, 0.0), 1e-320, 27.6, -27.6, 700.0, -700.0, 1e10, -1e10};
  for (std::size_t i = 0; i + 8 <= text.size(); i += 8) {
    double d;
    std::memcpy(&d, text.data() + i, 8);
    s.push_back(d);
  }
  if (doc) {
    std::vector<double> numbers;
    collect_numbers(*doc, numbers);
    std::sort(numbers.begin(), numbers.end());
    numbers.erase(std::unique(numbers.begin(), numbers.end()), numbers.end());
    if (numbers.size() > 2000) numbers.resize(2000);
    for (std::size_t i = 0; i < numbers.size(); ++i) {
      const double x = numbers[i];
      s.push_back(x);
      s.push_back(std::nextafter(x, -big));
      s.push_back(std::nextafter(x, big));
      if (i + 1 < numbers.size()) {
        s.push_back(x + 0.5 * (numbers[i + 1] - x));
        s.push_back(0.5 * x + 0.5 * numbers[i + 1]);
      }
    }
  }
  std::vector<double> valid;
  for (double x : s)
    if (plumb::valid_on_scale(x, scale)) valid.push_back(x);
  std::sort(valid.begin(), valid.end());
  return valid;
}

void check_loaded(const plumb::Artifact& a, const std::string& text, const json* doc) {
  FUZZ_CHECK(a.map != nullptr, "an artifact without a map was loaded");
  const plumb::CalibrationMap& map = *a.map;
  const std::vector<double> scores = sample_scores(text, doc, map.scale());
  // An adjusted map is checked through its fitted map: the fitted map by
  // the rule of its kind, and the adjustment exactly (multiply_odds never
  // falls as p rises), so the adjusted map falls only where the fitted one
  // does (where a logistic map's rounding drops by an ulp, the odds factor's
  // slope near 0 or 1 can widen that drop beyond the ulps allowed here).
  const auto* adjusted = dynamic_cast<const plumb::OddsAdjustedMap*>(&map);
  const plumb::CalibrationMap& fitted = adjusted ? adjusted->base() : map;
  double previous = -1.0, previous_fitted = -1.0, previous_score = 0.0;
  for (double s : scores) {
    const double p = map.map(s).probability;
    FUZZ_CHECK(p >= 0.0 && p <= 1.0,
               std::string(map.kind()) + " map: score " + std::to_string(s) + " gives " + std::to_string(p));
    const double q = fitted.map(s).probability;
    // Exactly for the piecewise kinds; up to a few ulps of rounding in the
    // logistic function for the others (plumb/calibration_map.hpp).
    const bool piecewise = map.kind() == "isotonic" || map.kind() == "histogram";
    const double slack = piecewise ? 0.0 : 8 * DBL_EPSILON * previous_fitted + std::numeric_limits<double>::denorm_min();
    if (fitted.monotone())
      FUZZ_CHECK(q >= previous_fitted - slack, std::string(map.kind()) + " map says it is monotone but falls from " +
                                    std::to_string(previous_fitted) + " at " + std::to_string(previous_score) + " to " +
                                    std::to_string(q) + " at " + std::to_string(s));
    if (adjusted && q >= previous_fitted)
      FUZZ_CHECK(p >= previous, "the odds adjustment falls from " + std::to_string(previous) + " at " +
                                    std::to_string(previous_score) + " to " + std::to_string(p) + " at " +
                                    std::to_string(s) + " where the fitted map does not");
    previous = p;
    previous_fitted = q;
    previous_score = s;
  }

  std::string written;
  if (!plumb::fuzz::only_plumb_errors([&] { written = plumb::artifact_to_text(a); })) return;
  plumb::Artifact again;
  plumb::Error why(plumb::ErrorKind::internal, "");
  FUZZ_CHECK(plumb::fuzz::only_plumb_errors([&] { again = plumb::artifact_from_text(written, "round trip"); }, &why),
             "the artifact as written again does not load: " + plumb::format_error(why));
  FUZZ_CHECK(again.map->kind() == map.kind() && again.map->scale() == map.scale() &&
                 again.map->monotone() == map.monotone() && again.score_column == a.score_column,
             "the round trip changed the map's kind, scale, monotonicity or score column");
  FUZZ_CHECK(plumb::artifact_to_text(again) == written, "writing the reloaded artifact gives other text");
  for (double s : scores) {
    const plumb::Mapped x = map.map(s), y = again.map->map(s);
    FUZZ_CHECK(std::memcmp(&x.probability, &y.probability, sizeof(double)) == 0 &&
                   x.outside_fit_range == y.outside_fit_range && x.clipped == y.clipped,
               "the round trip maps score " + std::to_string(s) + " differently");
  }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string text(reinterpret_cast<const char*>(data), size);
  json doc;
  // The loader refuses deeper documents before parsing, and this target must
  // not overflow its stack on them either.
  if (!plumb::io::json_nested_deeper_than(text)) doc = json::parse(text, nullptr, /*allow_exceptions=*/false);
  const json* numbers = doc.is_structured() ? &doc : nullptr;

  plumb::Artifact as_is;
  if (plumb::fuzz::only_plumb_errors([&] { as_is = plumb::artifact_from_text(text, "fuzz input"); }))
    check_loaded(as_is, text, numbers);

  if (!doc.is_object()) return 0;
  doc.erase("integrity_sha256");
  doc["integrity_sha256"] = plumb::integrity_hash(doc);
  const std::string rehashed = doc.dump();
  plumb::Artifact fixed;
  if (plumb::fuzz::only_plumb_errors([&] { fixed = plumb::artifact_from_text(rehashed, "fuzz input, rehashed"); }))
    check_loaded(fixed, rehashed, &doc);
  return 0;
}
