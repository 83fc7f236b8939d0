// The one place that knows every kind of map. Adding a kind: write its
// class (see DEVELOPERS.md), then add one row to `registry` below.
#include <algorithm>
#include <array>
#include <cmath>
#include <numeric>

#include "plumb/calibration_map.hpp"
#include "plumb/error.hpp"
#include "plumb/maps/beta_map.hpp"
#include "plumb/maps/fold_average_map.hpp"
#include "plumb/maps/histogram_map.hpp"
#include "plumb/maps/isotonic_map.hpp"
#include "plumb/maps/platt_map.hpp"
#include "plumb/maps/temperature_map.hpp"
#include "plumb/tally.hpp"

namespace plumb {
namespace {

struct Entry {
  std::string_view kind;
  bool fittable;     // false: made by another command, only ever loaded
  bool (*accepts)(Scale) noexcept;
  std::unique_ptr<CalibrationMap> (*fit)(const FitData&, const MapOptions&);
  std::unique_ptr<CalibrationMap> (*load)(Scale, const nlohmann::json&, const std::string&);
};

template <class M>
constexpr Entry entry(std::string_view kind, bool fittable = true) {
  return Entry{kind, fittable, &M::accepts, &M::fit, &M::from_parameters};
}

constexpr std::array registry{
    entry<IsotonicMap>("isotonic"),
    entry<PlattMap>("platt"),
    entry<BetaMap>("beta"),
    entry<TemperatureMap>("temperature"),
    entry<HistogramMap>("histogram"),
    entry<FoldAverageMap>("fold_average", /*fittable=*/false),
};

constexpr std::size_t fittable_count =
    static_cast<std::size_t>(std::count_if(registry.begin(), registry.end(), [](const Entry& e) { return e.fittable; }));

// The kinds `plumb fit` and `cross-fit` can fit, in registry order.
const std::array<std::string_view, fittable_count> kind_names = [] {
  std::array<std::string_view, fittable_count> names{};
  std::size_t n = 0;
  for (const Entry& e : registry)
    if (e.fittable) names[n++] = e.kind;
  return names;
}();

const Entry* find(std::string_view kind) noexcept {
  const auto it = std::find_if(registry.begin(), registry.end(), [&](const Entry& e) { return e.kind == kind; });
  return it == registry.end() ? nullptr : &*it;
}

std::string kind_list() {
  std::string out;
  for (std::string_view k : kind_names) out += (out.empty() ? "" : ", ") + std::string(k);
  return out;
}

}  // namespace

ScoreTally tally_by_score(const FitData& data) {
  Tally t;
  tally_scores(data, t);
  return to_score_tally(t);
}

std::span<const std::string_view> map_kinds() noexcept { return kind_names; }

bool accepts_scale(std::string_view kind, Scale scale) noexcept {
  const Entry* e = find(kind);
  return e && e->accepts(scale);
}

namespace {

// Every kind is fitted on the per-score sums, whether they came from rows
// or from a tally file, so that both give bit-identical maps: the sums are
// the same numbers (exactly so for unweighted rows), and the fit never sees
// the rows themselves. For the parametric kinds it also makes each Newton
// step pass over far fewer entries.
std::unique_ptr<CalibrationMap> fit_on_sums(std::string_view kind, const Tally& sums, Scale scale,
                                            const MapOptions& options) {
  const Entry* e = find(kind);
  if (!e) throw Error(ErrorKind::usage, "unknown map kind", {}, std::string(kind), "one of " + kind_list());
  if (!e->accepts(scale))
    throw Error(ErrorKind::usage, "the " + std::string(kind) + " map does not accept scores on the " +
                                      std::string(to_string(scale)) + " scale",
                {}, {}, "a --scale this map accepts (see plumb fit --help)");
  double w_pos = 0.0, w_neg = 0.0;
  for (std::size_t i = 0; i < sums.score.size(); ++i) {
    w_pos += sums.positive[i];
    w_neg += sums.negative[i];
  }
  if (!(w_pos + w_neg > 0.0)) throw Error(ErrorKind::fit, "no rows of positive weight to fit");
  if (!(w_pos > 0.0) || !(w_neg > 0.0))
    throw Error(ErrorKind::fit,
                std::string("the calibration rows hold only ") + (w_pos > 0.0 ? "positive" : "negative") +
                    " labels",
                {}, {}, "both positive and negative labels");
  const ScoreTally entries = to_score_tally(sums);
  std::unique_ptr<CalibrationMap> map =
      e->fit(FitData{entries.score, entries.label, entries.weight, scale}, options);
  // Clipping is reported per input row of positive weight, not per entry.
  FitDiagnostics d = map->diagnostics();
  d.clipped = 0;
  for (std::size_t i = 0; i < sums.score.size(); ++i)
    if (map->map(sums.score[i]).clipped) d.clipped += sums.count[i];
  map->restore_diagnostics(std::move(d));
  return map;
}

}  // namespace

std::unique_ptr<CalibrationMap> fit_map(std::string_view kind, const FitData& data, const MapOptions& options) {
  Tally sums;
  tally_scores(data, sums);
  return fit_on_sums(kind, sums, data.scale, options);
}

std::unique_ptr<CalibrationMap> fit_map_on_tally(std::string_view kind, const Tally& tally,
                                                 const MapOptions& options) {
  return fit_on_sums(kind, tally, tally.scale, options);
}

std::unique_ptr<CalibrationMap> load_map(std::string_view kind, Scale scale, const nlohmann::json& parameters,
                                         const std::string& where) {
  const Entry* e = find(kind);
  Location loc;
  loc.file = where;
  if (!e) throw Error(ErrorKind::artifact, "unknown map kind", loc, std::string(kind), "one of " + kind_list());
  if (!e->accepts(scale))
    throw Error(ErrorKind::artifact,
                kind_with_article(kind) + " map cannot hold scores on the " + std::string(to_string(scale)) +
                    " scale",
                loc);
  return e->load(scale, parameters, where);
}

}  // namespace plumb
