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

namespace plumb {
namespace {

struct Entry {
  std::string_view kind;
  bool fittable;     // false: made by another command, only ever loaded
  bool merge_rows;   // fit on tally_by_score: iterative fits whose cost grows with the rows
  bool (*accepts)(Scale) noexcept;
  std::unique_ptr<CalibrationMap> (*fit)(const FitData&, const MapOptions&);
  std::unique_ptr<CalibrationMap> (*load)(Scale, const nlohmann::json&, const std::string&);
};

template <class M>
constexpr Entry entry(std::string_view kind, bool merge_rows, bool fittable = true) {
  return Entry{kind, fittable, merge_rows, &M::accepts, &M::fit, &M::from_parameters};
}

constexpr std::array registry{
    // Isotonic and histogram maps pool tied scores themselves in one pass
    // after their sort; the parametric maps iterate over every row.
    entry<IsotonicMap>("isotonic", /*merge_rows=*/false),
    entry<PlattMap>("platt", /*merge_rows=*/true),
    entry<BetaMap>("beta", /*merge_rows=*/true),
    entry<TemperatureMap>("temperature", /*merge_rows=*/true),
    entry<HistogramMap>("histogram", /*merge_rows=*/false),
    entry<FoldAverageMap>("fold_average", /*merge_rows=*/false, /*fittable=*/false),
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
  const std::size_t n = data.score.size();
  std::vector<std::size_t> order(n);
  std::iota(order.begin(), order.end(), std::size_t{0});
  // Stable, so rows of one score are summed in input order whoever calls.
  if (!std::is_sorted(data.score.begin(), data.score.end()))
    std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return data.score[a] < data.score[b]; });
  ScoreTally t;
  for (std::size_t k = 0; k < n;) {
    const double s = data.score[order[k]];
    double positive = 0.0, negative = 0.0;
    for (; k < n && data.score[order[k]] == s; ++k) {
      const std::size_t i = order[k];
      const double w = data.weight.empty() ? 1.0 : data.weight[i];
      (data.label[i] > 0.5 ? positive : negative) += w;
    }
    if (negative > 0.0) {
      t.score.push_back(s);
      t.label.push_back(0.0);
      t.weight.push_back(negative);
    }
    if (positive > 0.0) {
      t.score.push_back(s);
      t.label.push_back(1.0);
      t.weight.push_back(positive);
    }
  }
  return t;
}

std::span<const std::string_view> map_kinds() noexcept { return kind_names; }

bool accepts_scale(std::string_view kind, Scale scale) noexcept {
  const Entry* e = find(kind);
  return e && e->accepts(scale);
}

std::unique_ptr<CalibrationMap> fit_map(std::string_view kind, const FitData& data, const MapOptions& options) {
  const Entry* e = find(kind);
  if (!e) throw Error(ErrorKind::usage, "unknown map kind", {}, std::string(kind), "one of " + kind_list());
  if (!e->accepts(data.scale))
    throw Error(ErrorKind::usage, "the " + std::string(kind) + " map does not accept scores on the " +
                                      std::string(to_string(data.scale)) + " scale",
                {}, {}, "a --scale this map accepts (see plumb fit --help)");
  double w_pos = 0.0, w_neg = 0.0;
  for (std::size_t i = 0; i < data.score.size(); ++i) {
    const double w = data.weight.empty() ? 1.0 : data.weight[i];
    (data.label[i] > 0.5 ? w_pos : w_neg) += w;
  }
  if (!(w_pos + w_neg > 0.0)) throw Error(ErrorKind::fit, "no rows of positive weight to fit");
  if (!(w_pos > 0.0) || !(w_neg > 0.0))
    throw Error(ErrorKind::fit,
                std::string("the calibration rows hold only ") + (w_pos > 0.0 ? "positive" : "negative") +
                    " labels",
                {}, {}, "both positive and negative labels");
  if (!e->merge_rows) return e->fit(data, options);
  // A parametric fit depends on the rows only through the weight of
  // positives and of negatives at each distinct score, so the rows are
  // merged to that first: exact up to the order of additions, and the same
  // for every caller (fit and cross-fit give bit-identical maps on the same
  // rows), while each Newton step passes over far fewer entries.
  const ScoreTally tally = tally_by_score(data);
  std::unique_ptr<CalibrationMap> map = e->fit(FitData{tally.score, tally.label, tally.weight, data.scale}, options);
  // Clipping is reported per input row, not per merged entry.
  FitDiagnostics d = map->diagnostics();
  d.clipped = 0;
  for (std::size_t i = 0; i < data.score.size(); ++i)
    if ((data.weight.empty() || data.weight[i] > 0.0) && map->map(data.score[i]).clipped) ++d.clipped;
  map->restore_diagnostics(std::move(d));
  return map;
}

std::unique_ptr<CalibrationMap> load_map(std::string_view kind, Scale scale, const nlohmann::json& parameters,
                                         const std::string& where) {
  const Entry* e = find(kind);
  Location loc;
  loc.file = where;
  if (!e) throw Error(ErrorKind::artifact, "unknown map kind", loc, std::string(kind), "one of " + kind_list());
  if (!e->accepts(scale))
    throw Error(ErrorKind::artifact,
                "a " + std::string(kind) + " map cannot hold scores on the " + std::string(to_string(scale)) +
                    " scale",
                loc);
  return e->load(scale, parameters, where);
}

}  // namespace plumb
