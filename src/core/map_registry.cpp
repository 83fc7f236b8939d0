// The one place that knows every kind of map. Adding a kind: write its
// class (its header under include/plumb/maps, its source under
// src/core/maps), give MapOptions a field for each option it takes, then add
// one entry to `registry` below: every fact the rest of the program asks
// about the kind is there (DEVELOPERS.md, "Adding a map kind").
#include "plumb/map_registry.hpp"

#include <algorithm>
#include <limits>
#include <array>
#include <charconv>
#include <cmath>
#include <numeric>

#include "plumb/calibration_map.hpp"
#include "plumb/error.hpp"
#include "plumb/maps/beta_map.hpp"
#include "plumb/maps/centered_isotonic_map.hpp"
#include "plumb/maps/fold_average_map.hpp"
#include "plumb/maps/histogram_map.hpp"
#include "plumb/maps/isotonic_map.hpp"
#include "plumb/maps/platt_map.hpp"
#include "plumb/maps/temperature_map.hpp"
#include "plumb/maps/venn_abers_map.hpp"
#include "plumb/tally.hpp"

namespace plumb {
namespace {

// The options of each kind, with how the command line sets them and the
// artifact records them.
constexpr std::array<std::string_view, 2> between_rules{"linear", "step"};
constexpr std::array isotonic_options{MapOption{
    .name = "between-blocks",
    .recorded = "between_blocks",
    .value_word = "RULE",
    .help = "isotonic: between fitted blocks, interpolate linearly or hold the left block's step",
    .choices = between_rules,
    .default_text = "linear",
    .older_spelling = "between",
    .set = [](MapOptions& m, std::string_view text, int) { m.isotonic_interpolate = text == "linear"; },
    .record = [](const MapOptions& m) { return nlohmann::json(m.isotonic_interpolate ? "linear" : "step"); },
}};

constexpr std::array<std::string_view, 2> platt_target_kinds{"smoothed", "labels"};
constexpr std::array platt_options{MapOption{
    .name = "platt-targets",
    .recorded = "platt_targets",
    .value_word = "TARGETS",
    .help = "platt: fit to Platt's smoothed targets (N+ + 1)/(N+ + 2) and 1/(N- + 2), or to the labels",
    .choices = platt_target_kinds,
    .default_text = "smoothed",
    .set = [](MapOptions& m, std::string_view text, int) { m.platt_smoothed_targets = text == "smoothed"; },
    .record = [](const MapOptions& m) { return nlohmann::json(m.platt_smoothed_targets ? "smoothed" : "labels"); },
}};

constexpr std::array<std::string_view, 3> beta_forms{"full", "midpoint", "shared"};
constexpr std::array beta_options{MapOption{
    .name = "beta-form",
    .recorded = "beta_form",
    .value_word = "FORM",
    .help = "beta: full (a, b, c free), midpoint (c = (a - b) ln 2, so the curve crosses 1/2 at a score of 1/2) or "
            "shared (a = b, a logistic map in the log-odds)",
    .choices = beta_forms,
    .default_text = "full",
    .set = [](MapOptions& m, std::string_view text, int) { m.beta_form = std::string(text); },
    .record = [](const MapOptions& m) { return nlohmann::json(m.beta_form); },
}};

constexpr std::array histogram_options{MapOption{
    .name = "bins",
    .recorded = "bins",
    .value_word = "",
    .help = "histogram: number of equal-mass bins",
    .choices = {},
    .min = 1,
    .max = 1000000,
    .default_text = "10",
    .set = [](MapOptions& m, std::string_view, int count) { m.histogram_bins = count; },
    .record = [](const MapOptions& m) { return nlohmann::json(m.histogram_bins); },
}};

constexpr std::array<std::string_view, 2> increase_rules{"weak", "strict"};
constexpr std::array centered_isotonic_options{MapOption{
    .name = "increase",
    .recorded = "increase",
    .value_word = "RULE",
    .help = "centered_isotonic: weak holds the end values below the first point and above the last (ties there); "
            "strict adds a minimal slope (weight 1e-6) so that distinct scores get distinct probabilities",
    .choices = increase_rules,
    .default_text = "weak",
    .set = [](MapOptions& m, std::string_view text, int) { m.centered_strict = text == "strict"; },
    .record = [](const MapOptions& m) { return nlohmann::json(m.centered_strict ? "strict" : "weak"); },
}};

constexpr std::array cross_venn_abers_options{MapOption{
    .name = "venn-folds",
    .recorded = "venn_folds",
    .value_word = "",
    .help = "cross_venn_abers: number of folds the rows are dealt into, each one calibration set",
    .choices = {},
    .min = 2,
    .max = 20,
    .default_text = "5",
    .set = [](MapOptions& m, std::string_view, int count) { m.venn_folds = count; },
    .record = [](const MapOptions& m) { return nlohmann::json(m.venn_folds); },
}};

template <class M>
constexpr MapKind with_functions(MapKind k) {
  k.accepts = &M::accepts;
  k.fit = &M::fit;
  k.load = &M::from_parameters;
  return k;
}

// Fittable kinds first, in the order fit's help lists them.
constexpr std::array registry{
    with_functions<IsotonicMap>({
        .name = "isotonic",
        .help = "pool-adjacent-violators step fit; any monotone shape; needs many rows",
        .complexity = 5,
        .nonparametric = true,
        .zero_or_one_pieces = "blocks",
        .zero_or_one_advice = "--map platt or beta keeps every probability strictly between 0 and 1",
        .options = isotonic_options,
    }),
    with_functions<CenteredIsotonicMap>({
        .name = "centered_isotonic",
        .help = "isotonic through its blocks' mean scores, joined by lines; keeps ranks",
        .complexity = 6,
        .nonparametric = true,
        .zero_or_one_pieces = "end points",
        .zero_or_one_advice = "--map platt or beta keeps every probability strictly between 0 and 1",
        .options = centered_isotonic_options,
    }),
    with_functions<PlattMap>({
        .name = "platt",
        .help = "logistic sigmoid in the score (or its log-odds); two parameters",
        .complexity = 2,
        .not_monotone_between = "scores",
        .not_monotone_advice = "--map isotonic gives a monotone map",
        .options = platt_options,
    }),
    with_functions<BetaMap>({
        .name = "beta",
        .help = "logistic in ln(s) and -ln(1-s); probability scores only; three parameters",
        .scale_hint = "--scale probability (beta calibration works on ln(s) and ln(1-s))",
        .complexity = 3,
        .not_monotone_between = "scores",
        .not_monotone_advice = "--map isotonic gives a monotone map",
        .options = beta_options,
    }),
    with_functions<TemperatureMap>({
        .name = "temperature",
        .help = "divides the log-odds by one T > 0; probability or logit scores",
        .scale_hint = "--scale probability or logit (temperature divides log-odds)",
        .complexity = 1,
        .not_monotone_between = "scores",
        .not_monotone_advice = "--map isotonic gives a monotone map",
    }),
    with_functions<HistogramMap>({
        .name = "histogram",
        .help = "equal-mass bins, each mapped to its observed frequency",
        .complexity = 4,
        .nonparametric = true,
        .not_monotone_between = "bins (noise in bins of few rows)",
        .not_monotone_advice = "fewer --bins, or --map isotonic, gives a monotone map",
        .zero_or_one_pieces = "bins",
        .zero_or_one_advice = "use fewer --bins, or --map platt or beta",
        .options = histogram_options,
    }),
    with_functions<VennAbersMap>({
        .name = "venn_abers",
        .help = "inductive Venn-Abers: isotonic fits with the score added as 0 and as 1; an interval [p0, p1]",
        .complexity = 7,
        .nonparametric = true,
        .in_auto = false,
        .zero_or_one_pieces = "knots",
        .zero_or_one_advice = "--map platt or beta keeps every probability strictly between 0 and 1",
    }),
    [] {
      MapKind k = with_functions<VennAbersMap>({
          .name = "cross_venn_abers",
          .help = "cross Venn-Abers: inductive Venn-Abers on each of --venn-folds folds, merged",
          .complexity = 8,
          .nonparametric = true,
          .in_auto = false,
          .zero_or_one_pieces = "knots",
          .zero_or_one_advice = "--map platt or beta keeps every probability strictly between 0 and 1",
          .options = cross_venn_abers_options,
      });
      k.fit = &VennAbersMap::fit_cross;
      k.load = &VennAbersMap::from_parameters_cross;
      return k;
    }(),
    with_functions<FoldAverageMap>({
        .name = "fold_average",
        .fittable = false,
    }),
};

constexpr std::size_t fittable_count =
    static_cast<std::size_t>(std::count_if(registry.begin(), registry.end(), [](const MapKind& e) { return e.fittable; }));

// The kinds `plumb fit` and `cross-fit` can fit, in registry order.
const std::array<std::string_view, fittable_count> kind_names = [] {
  std::array<std::string_view, fittable_count> names{};
  std::size_t n = 0;
  for (const MapKind& e : registry)
    if (e.fittable) names[n++] = e.name;
  return names;
}();

}  // namespace

std::span<const MapKind> map_registry() noexcept { return registry; }

const MapKind* find_map_kind(std::string_view name) noexcept {
  const auto it = std::find_if(registry.begin(), registry.end(), [&](const MapKind& e) { return e.name == name; });
  return it == registry.end() ? nullptr : &*it;
}

std::string map_kind_list() {
  std::string out;
  for (std::string_view k : kind_names) out += (out.empty() ? "" : ", ") + std::string(k);
  return out;
}

const MapKind& fittable_map_kind(std::string_view name) {
  const MapKind* e = find_map_kind(name);
  if (!e || !e->fittable)
    throw Error(ErrorKind::usage, "unknown map kind", {}, std::string(name), "one of " + map_kind_list());
  return *e;
}

Error scale_refusal(const MapKind& kind, Scale scale, std::string expected) {
  return Error(ErrorKind::usage,
               "the " + std::string(kind.name) + " map does not accept scores on the " +
                   std::string(to_string(scale)) + " scale",
               {}, {}, expected.empty() ? std::string(kind.scale_hint) : std::move(expected));
}

nlohmann::json recorded_options(const MapKind& kind, const MapOptions& options) {
  nlohmann::json out = nlohmann::json::object();
  for (const MapOption& o : kind.options) out[std::string(o.recorded)] = o.record(options);
  return out;
}

std::vector<std::string> registry_problems(std::span<const MapKind> kinds) {
  std::vector<std::string> problems;
  auto problem = [&](std::string_view kind, const std::string& what) {
    problems.push_back("map kind '" + std::string(kind) + "': " + what);
  };
  constexpr Scale scales[] = {Scale::probability, Scale::logit, Scale::margin};
  for (std::size_t i = 0; i < kinds.size(); ++i) {
    const MapKind& k = kinds[i];
    if (k.name.empty()) problem(k.name, "no name");
    for (std::size_t j = 0; j < i; ++j)
      if (kinds[j].name == k.name) problem(k.name, "registered twice");
    if (!k.accepts || !k.load) {
      problem(k.name, "no scale check or no load function");
      continue;
    }
    if (!k.fittable) continue;
    if (k.help.empty()) problem(k.name, "no help line");
    if (!k.fit) problem(k.name, "no fit function");
    const bool refuses_some = !std::all_of(std::begin(scales), std::end(scales), [&](Scale s) { return k.accepts(s); });
    if (refuses_some && k.scale_hint.empty()) problem(k.name, "refuses a scale but has no scale hint");
    if (!refuses_some && !k.scale_hint.empty()) problem(k.name, "accepts every scale but has a scale hint");
    if (k.complexity < 1) problem(k.name, "no complexity rank");
    for (std::size_t j = 0; j < i; ++j)
      if (kinds[j].fittable && kinds[j].complexity == k.complexity)
        problem(k.name, "the same complexity rank as " + std::string(kinds[j].name));
    if (k.nonparametric && (k.zero_or_one_pieces.empty() || k.zero_or_one_advice.empty()))
      problem(k.name, "nonparametric but no note for a map that reaches 0 or 1");
    if (k.not_monotone_between.empty() != k.not_monotone_advice.empty())
      problem(k.name, "half a note for a map that is not monotone");
    for (const MapOption& o : k.options) {
      const std::string name = "option '" + std::string(o.name) + "'";
      if (o.name.empty() || o.recorded.empty() || o.help.empty() || o.default_text.empty()) {
        problem(k.name, name + " lacks its name, recorded key, help or default");
        continue;
      }
      if (!o.set || !o.record) {
        problem(k.name, name + " lacks its setter or recorder");
        continue;
      }
      for (std::size_t j = 0; j <= i; ++j)
        for (const MapOption& other : kinds[j].options) {
          if (&other == &o) break;
          if (other.name == o.name || (!o.older_spelling.empty() && other.older_spelling == o.older_spelling))
            problem(k.name, name + " has the name of another option");
        }
      if (!o.older_spelling.empty() && o.choices.empty())
        problem(k.name, name + " has an older spelling but no choices to check it against");
      if (o.help.substr(0, k.name.size() + 1) != std::string(k.name) + ":")
        problem(k.name, name + "'s help does not start with the kind's name");
      MapOptions from_default;
      if (o.choices.empty()) {
        int n = 0;
        const auto [end, ec] = std::from_chars(o.default_text.data(), o.default_text.data() + o.default_text.size(), n);
        if (o.min > o.max || ec != std::errc() || end != o.default_text.data() + o.default_text.size() || n < o.min ||
            n > o.max) {
          problem(k.name, name + " has no choices and no range holding its default");
          continue;
        }
        o.set(from_default, {}, n);
      } else {
        if (std::find(o.choices.begin(), o.choices.end(), o.default_text) == o.choices.end())
          problem(k.name, name + "'s default is not one of its choices");
        o.set(from_default, o.default_text, 0);
      }
      if (o.record(from_default) != o.record(MapOptions{}))
        problem(k.name, name + "'s default is not the default of MapOptions");
    }
  }
  return problems;
}

ScoreTally tally_by_score(const FitData& data) {
  Tally t;
  tally_scores(data, t);
  return to_score_tally(t);
}

std::span<const std::string_view> map_kinds() noexcept { return kind_names; }

bool accepts_scale(std::string_view kind, Scale scale) noexcept {
  const MapKind* e = find_map_kind(kind);
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
  // Not fittable_map_kind: a kind that is only ever loaded says so from its fit.
  const MapKind* e = find_map_kind(kind);
  if (!e) throw Error(ErrorKind::usage, "unknown map kind", {}, std::string(kind), "one of " + map_kind_list());
  if (!e->accepts(scale)) throw scale_refusal(*e, scale);
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
  if (options.row_diagnostics) {
    for (std::size_t i = 0; i < sums.score.size(); ++i)
      if (map->map(sums.score[i]).clipped) d.clipped += sums.count[i];
  } else {
    d.log_loss = std::numeric_limits<double>::quiet_NaN();
  }
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
  const MapKind* e = find_map_kind(kind);
  Location loc;
  loc.file = where;
  if (!e) throw Error(ErrorKind::artifact, "unknown map kind", loc, std::string(kind), "one of " + map_kind_list());
  if (!e->accepts(scale))
    throw Error(ErrorKind::artifact,
                kind_with_article(kind) + " map cannot hold scores on the " + std::string(to_string(scale)) +
                    " scale",
                loc);
  return e->load(scale, parameters, where);
}

}  // namespace plumb
