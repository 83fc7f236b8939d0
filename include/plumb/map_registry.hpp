#pragma once
// The map registry: every fact the program asks about a kind of map, in one
// entry per kind (src/core/map_registry.cpp). fit, cross-fit (complexity()
// and the command), the help and the library's fit_map/load_map read it, so
// no other code decides anything by a kind's name.
#include <memory>
#include <nlohmann/json.hpp>
#include <span>
#include <string>
#include <string_view>
#include <vector>

#include "plumb/calibration_map.hpp"
#include "plumb/error.hpp"

namespace plumb {

// Below this weight of rows a nonparametric map (MapKind::nonparametric) is
// cautioned by fit and cross-fit (common practice: about 1,000 rows or more;
// Niculescu-Mizil and Caruana 2005 show isotonic overfitting small sets).
inline constexpr double few_rows_for_nonparametric = 1000;

// One option of a kind, as the command line takes it and the artifact
// records it (`fit.options`).
struct MapOption {
  std::string_view name{};        // the long option without dashes: "between-blocks"
  std::string_view recorded{};    // its key in the artifact's fit.options: "between_blocks"
  std::string_view value_word{};  // what the value is, in the help: "RULE"; empty for "N" (a whole number)
  std::string_view help{};        // one line, starting with the kind's name: "isotonic: ..."
  // The values it takes, in the order the help lists them; empty for a
  // whole number in [min, max].
  std::span<const std::string_view> choices{};
  int min = 0, max = 0;
  std::string_view default_text{};    // the default as typed ("linear", "10")
  std::string_view older_spelling{};  // a hidden earlier name still taken ("between"), or empty
  // Put a value into MapOptions: `text` for a choice (one of `choices`),
  // `count` for a whole number (in [min, max]); the other is unused.
  void (*set)(MapOptions& options, std::string_view text, int count) = nullptr;
  // The value as the artifact records it, read back from MapOptions.
  nlohmann::json (*record)(const MapOptions& options) = nullptr;
};

// A kind of map and everything the program asks about it.
struct MapKind {
  std::string_view name{};  // as in --map and the artifact's "kind"
  bool fittable = true;     // false: made by another command (fold_average), only ever loaded
  // One line for fit's help (what the map is, what it needs); empty when not fittable.
  std::string_view help{};
  bool (*accepts)(Scale) noexcept = nullptr;
  // What to give instead of a scale the kind refuses, naming --scale (fit's
  // refusal); empty when the kind accepts every scale.
  std::string_view scale_hint{};
  // Flexibility for the one-standard-error rule of cross-fit: lower is
  // simpler; fittable kinds have distinct ranks >= 1.
  int complexity = 0;
  // Nonparametric (its shape follows the rows): fit and cross-fit caution it
  // below few_rows_for_nonparametric rows.
  bool nonparametric = false;
  // Whether cross-fit's --map auto makes it a candidate (when it accepts the
  // scale); a kind left out is still a candidate when a --map list names it.
  bool in_auto = true;
  // fit's notes on the fitted map. When it is not monotone: between what it
  // falls ("scores", "bins (noise in bins of few rows)") and the advice; when
  // it reaches 0 or 1: what holds rows of one outcome ("blocks", "bins") and
  // the advice. Empty where the kind cannot do that (a PAV fit never falls; a
  // logistic map never reaches 0 or 1); nonparametric kinds need the latter.
  std::string_view not_monotone_between{};
  std::string_view not_monotone_advice{};
  std::string_view zero_or_one_pieces{};
  std::string_view zero_or_one_advice{};
  std::span<const MapOption> options{};
  std::unique_ptr<CalibrationMap> (*fit)(const FitData&, const MapOptions&) = nullptr;
  std::unique_ptr<CalibrationMap> (*load)(Scale, const nlohmann::json&, const std::string&) = nullptr;
};

// Every registered kind, fittable first in the order the help lists them.
std::span<const MapKind> map_registry() noexcept;

// The kind named `name`, or null.
const MapKind* find_map_kind(std::string_view name) noexcept;

// The fittable kinds' names, "isotonic, platt, ...", for messages.
std::string map_kind_list();

// The fittable kind named `name`. Throws plumb::Error(usage) "unknown map
// kind" listing every fittable kind.
const MapKind& fittable_map_kind(std::string_view name);

// The refusal of scores on `scale` by `kind`: Error(usage) "the KIND map does
// not accept scores on the SCALE scale", expecting `expected`, or the kind's
// scale_hint when `expected` is empty. Returned, not thrown, for the caller
// to throw.
Error scale_refusal(const MapKind& kind, Scale scale, std::string expected = {});

// The options the artifact records for a map of `kind` fitted with
// `options`: an object of each of the kind's options by its recorded key.
nlohmann::json recorded_options(const MapKind& kind, const MapOptions& options);

// What is wrong with `kinds` as a registry, one plain sentence each: a fact
// missing from an entry (no name, help line, fit or load function, scale
// hint for a kind that refuses a scale, complexity rank, the zero-or-one
// note of a nonparametric kind; an option without a name, recorded key, help, setter,
// recorder, default or choices/range), two kinds of one name, two fittable
// kinds of one complexity rank, or an option's default that does not give
// the default MapOptions. Empty when sound. The tests call it on
// map_registry().
std::vector<std::string> registry_problems(std::span<const MapKind> kinds);

}  // namespace plumb
