// The map registry (include/plumb/map_registry.hpp): every registered kind
// fits a small case, saves and reloads to the same bits, accepts and refuses
// the scales its method allows, and is named when a kind is unknown; the
// registry's self-check finds an entry that lacks one of its facts.
#include <catch2/catch.hpp>
#include <cmath>
#include <cstring>
#include <functional>
#include <map>
#include <random>
#include <string>
#include <vector>

#include "plumb/io/artifact.hpp"
#include "plumb/cross_fit.hpp"
#include "plumb/error.hpp"
#include "plumb/map_registry.hpp"
#include "plumb/maps/fold_average_map.hpp"
#include "support/test_helpers.hpp"

using plumb::ErrorKind;
using plumb::FitData;
using plumb::MapKind;
using plumb::MapOption;
using plumb::MapOptions;
using plumb::Scale;

namespace {

// The scales each kind's method allows, from the literature rather than the
// code: beta calibration models ln(s) and ln(1 - s) of a probability s (Kull,
// Silva Filho and Flach 2017); temperature scaling divides log-odds (Guo et
// al. 2017), which a probability or a logit gives and a bare margin does
// not; Platt scaling (1999), isotonic regression (Zadrozny and Elkan 2002)
// and equal-mass binning (Zadrozny and Elkan 2001) only need scores that
// order the rows, as does centered isotonic regression (Oron and Flournoy
// 2017, whose doses need only an order and a mean), as do the Venn-Abers
// predictors (Vovk and Petej 2014), isotonic fits of any ordering score. A kind registered without a row here fails the test.
struct Facts {
  bool probability, logit, margin;
  bool nonparametric;  // its shape follows the rows, not a formula
};
const std::map<std::string, Facts> facts{
    {"isotonic", {true, true, true, true}},  {"platt", {true, true, true, false}},
    {"beta", {true, false, false, false}},   {"temperature", {true, true, false, false}},
    {"histogram", {true, true, true, true}}, {"fold_average", {true, true, true, false}},
    {"centered_isotonic", {true, true, true, true}},
    {"venn_abers", {true, true, true, true}},        {"cross_venn_abers", {true, true, true, true}},
};

bool accepts_per_facts(const Facts& f, Scale s) {
  return s == Scale::probability ? f.probability : s == Scale::logit ? f.logit : f.margin;
}

constexpr Scale all_scales[] = {Scale::probability, Scale::logit, Scale::margin};

// 400 invented rows: scores on `scale` (a probability, or its log-odds for
// logit and margin), labels drawn from a miscalibrated truth, seeded.
struct Rows {
  std::vector<double> score, label;
  FitData data(Scale scale) const { return FitData{score, label, {}, scale}; }
};
Rows small_case(Scale scale) {
  std::mt19937_64 g(20261203);
  Rows r;
  for (int i = 0; i < 400; ++i) {
    const double p = 0.02 + 0.96 * plumb::test::uniform01(g);
    const double truth = 1.0 / (1.0 + std::exp(-1.5 * std::log(p / (1.0 - p)) + 0.3));
    r.score.push_back(scale == Scale::probability ? p : std::log(p / (1.0 - p)));
    r.label.push_back(plumb::test::uniform01(g) < truth ? 1.0 : 0.0);
  }
  return r;
}

bool same_bits(double a, double b) { return std::memcmp(&a, &b, sizeof a) == 0; }

std::string expected_of_error(const std::function<void()>& f) {
  try {
    f();
  } catch (const plumb::Error& e) {
    return e.expected();
  }
  return "(no error)";
}

}  // namespace

TEST_CASE("map registry: every registered kind has a row of facts in this test, and the self-check passes") {
  for (const MapKind& k : plumb::map_registry()) {
    INFO("kind " << k.name);
    CHECK(facts.count(std::string(k.name)) == 1);
  }
  const std::vector<std::string> problems = plumb::registry_problems(plumb::map_registry());
  for (const std::string& p : problems) FAIL_CHECK(p);
  CHECK(problems.empty());
}

namespace {

// Saves `map` in an artifact, reads it back, and checks the same kind,
// parameters, options and bytes, and the same double, bit for bit, for
// every score of the case and a grid between.
void check_round_trip(std::unique_ptr<plumb::CalibrationMap> map, const nlohmann::json& options, const Rows& rows) {
  plumb::Artifact a;
  a.map = std::move(map);
  a.score_column = "risk";
  a.fit_options = options;
  a.provenance.source = "small.csv";
  a.provenance.rows = rows.score.size();
  a.provenance.weight_total = static_cast<double>(rows.score.size());
  a.provenance.label_column = "missed";
  const std::string text = plumb::artifact_to_text(a);
  const plumb::Artifact back = plumb::artifact_from_text(text, "small.map.json");
  CHECK(back.map->kind() == a.map->kind());
  CHECK(back.map->parameters() == a.map->parameters());
  CHECK(back.fit_options == a.fit_options);
  CHECK(plumb::artifact_to_text(back) == text);
  std::vector<double> probe = rows.score;
  for (int i = 0; i <= 100; ++i) probe.push_back(i / 100.0);
  std::size_t differ = 0;
  for (double s : probe)
    if (!same_bits(a.map->map(s).probability, back.map->map(s).probability)) ++differ;
  CHECK(differ == 0);
}

}  // namespace

TEST_CASE("map registry: each kind fits (or is made from fits) on a small case and reloads to the same bits") {
  const Rows rows = small_case(Scale::probability);
  const FitData data = rows.data(Scale::probability);
  for (const MapKind& k : plumb::map_registry()) {
    INFO("kind " << k.name);
    if (k.fittable) {
      auto map = plumb::fit_map(k.name, data);
      CHECK(map->kind() == k.name);
      check_round_trip(std::move(map), plumb::recorded_options(k, MapOptions{}), rows);
      continue;
    }
    // A kind that is only loaded (fold_average, from cross-fit --final
    // folds) refuses a fit, and is made here from one fit of each fittable kind.
    CHECK(plumb::test::error_kind([&] { plumb::fit_map(k.name, data); }) == ErrorKind::usage);
    std::vector<std::unique_ptr<plumb::CalibrationMap>> parts;
    for (std::string_view fittable : plumb::map_kinds()) parts.push_back(plumb::fit_map(fittable, data));
    auto made = std::make_unique<plumb::FoldAverageMap>(Scale::probability, std::move(parts));
    CHECK(made->kind() == k.name);
    check_round_trip(std::move(made), nlohmann::json::object(), rows);
  }
}

TEST_CASE("map registry: each kind accepts the scales its method allows and refuses the others with a --scale hint") {
  for (const MapKind& k : plumb::map_registry()) {
    INFO("kind " << k.name);
    const auto row = facts.find(std::string(k.name));
    REQUIRE(row != facts.end());
    for (Scale s : all_scales) {
      INFO("scale " << std::string(plumb::to_string(s)));
      const bool accepted = accepts_per_facts(row->second, s);
      CHECK(plumb::accepts_scale(k.name, s) == accepted);
      CHECK(k.accepts(s) == accepted);
      if (!k.fittable) continue;
      const Rows rows = small_case(s);
      if (accepted) {
        CHECK_NOTHROW(plumb::fit_map(k.name, rows.data(s)));
        continue;
      }
      CHECK(plumb::test::error_kind([&] { plumb::fit_map(k.name, rows.data(s)); }) == ErrorKind::usage);
      const std::string expected = expected_of_error([&] { plumb::fit_map(k.name, rows.data(s)); });
      CHECK(expected.find("--scale") != std::string::npos);
      // The refusal names a scale the kind does accept.
      bool names_an_accepted_scale = false;
      for (Scale t : all_scales)
        if (accepts_per_facts(row->second, t) && expected.find(plumb::to_string(t)) != std::string::npos)
          names_an_accepted_scale = true;
      CHECK(names_an_accepted_scale);
      // A map of the kind cannot be loaded on a scale it refuses either.
      const auto fitted = plumb::fit_map(k.name, small_case(Scale::probability).data(Scale::probability));
      CHECK(plumb::test::error_kind([&] { plumb::load_map(k.name, s, fitted->parameters(), "x.json"); }) ==
            ErrorKind::artifact);
    }
  }
}

TEST_CASE("map registry: an unknown kind is refused with every fittable kind listed") {
  const Rows rows = small_case(Scale::probability);
  CHECK(plumb::test::error_kind([&] { plumb::fit_map("spline", rows.data(Scale::probability)); }) == ErrorKind::usage);
  const std::string fit_list = expected_of_error([&] { plumb::fit_map("spline", rows.data(Scale::probability)); });
  CHECK(plumb::test::error_kind([&] {
          plumb::load_map("spline", Scale::probability, nlohmann::json::object(), "x.json");
        }) == ErrorKind::artifact);
  const std::string load_list =
      expected_of_error([&] { plumb::load_map("spline", Scale::probability, nlohmann::json::object(), "x.json"); });
  std::size_t fittable = 0;
  for (const MapKind& k : plumb::map_registry()) {
    if (!k.fittable) continue;
    ++fittable;
    INFO("kind " << k.name);
    CHECK(fit_list.find(std::string(k.name)) != std::string::npos);
    CHECK(load_list.find(std::string(k.name)) != std::string::npos);
  }
  // Eight kinds are fitted today (docs/methods.md); fold_average is only loaded.
  CHECK(fittable == 8);
  CHECK(plumb::map_kinds().size() == fittable);
}

TEST_CASE("map registry: nonparametric kinds and the complexity order of the one-standard-error rule") {
  // One threshold for the few-rows caution of fit and cross-fit (common
  // practice: about 1,000 rows; Niculescu-Mizil and Caruana 2005).
  CHECK(plumb::few_rows_for_nonparametric == 1000);
  for (const MapKind& k : plumb::map_registry()) {
    INFO("kind " << k.name);
    CHECK(k.nonparametric == facts.at(std::string(k.name)).nonparametric);
  }
  // By number of free parameters (temperature 1, platt 2, beta 3), then the
  // nonparametric kinds, binning before the finer isotonic fit, and the
  // centered isotonic line after it: as many free values as isotonic's
  // blocks, and a newer method, so plain isotonic is kept within one standard
  // error. The Venn-Abers kinds last: a value per distinct score, and the
  // cross form K such fits.
  const std::vector<std::string> simplest_first{"temperature", "platt",      "beta",
                                                "histogram",   "isotonic",   "centered_isotonic",
                                                "venn_abers",  "cross_venn_abers"};
  for (std::size_t i = 0; i + 1 < simplest_first.size(); ++i) {
    INFO(simplest_first[i] << " before " << simplest_first[i + 1]);
    CHECK(plumb::complexity(simplest_first[i]) < plumb::complexity(simplest_first[i + 1]));
    CHECK(plumb::find_map_kind(simplest_first[i])->complexity == plumb::complexity(simplest_first[i]));
  }
}

TEST_CASE("map registry: the options each kind records in the artifact, from MapOptions") {
  // The keys and values docs/artifact-format.md gives for fit.options.
  MapOptions m;
  CHECK(plumb::recorded_options(*plumb::find_map_kind("isotonic"), m) == nlohmann::json{{"between_blocks", "linear"}});
  CHECK(plumb::recorded_options(*plumb::find_map_kind("platt"), m) == nlohmann::json{{"platt_targets", "smoothed"}});
  CHECK(plumb::recorded_options(*plumb::find_map_kind("beta"), m) == nlohmann::json{{"beta_form", "full"}});
  CHECK(plumb::recorded_options(*plumb::find_map_kind("histogram"), m) == nlohmann::json{{"bins", 10}});
  CHECK(plumb::recorded_options(*plumb::find_map_kind("temperature"), m) == nlohmann::json::object());
  CHECK(plumb::recorded_options(*plumb::find_map_kind("centered_isotonic"), m) == nlohmann::json{{"increase", "weak"}});
  CHECK(plumb::recorded_options(*plumb::find_map_kind("venn_abers"), m) == nlohmann::json::object());
  CHECK(plumb::recorded_options(*plumb::find_map_kind("cross_venn_abers"), m) == nlohmann::json{{"venn_folds", 5}});
  m.venn_folds = 3;
  CHECK(plumb::recorded_options(*plumb::find_map_kind("cross_venn_abers"), m) == nlohmann::json{{"venn_folds", 3}});
  m.isotonic_interpolate = false;
  m.centered_strict = true;
  m.platt_smoothed_targets = false;
  m.beta_form = "shared";
  m.histogram_bins = 7;
  CHECK(plumb::recorded_options(*plumb::find_map_kind("isotonic"), m) == nlohmann::json{{"between_blocks", "step"}});
  CHECK(plumb::recorded_options(*plumb::find_map_kind("platt"), m) == nlohmann::json{{"platt_targets", "labels"}});
  CHECK(plumb::recorded_options(*plumb::find_map_kind("beta"), m) == nlohmann::json{{"beta_form", "shared"}});
  CHECK(plumb::recorded_options(*plumb::find_map_kind("histogram"), m) == nlohmann::json{{"bins", 7}});
  CHECK(plumb::recorded_options(*plumb::find_map_kind("centered_isotonic"), m) == nlohmann::json{{"increase", "strict"}});
  // Each option's setter puts what the recorder reads back.
  for (const MapKind& k : plumb::map_registry())
    for (const MapOption& o : k.options) {
      INFO("option " << o.name);
      MapOptions set;
      if (o.choices.empty()) {
        o.set(set, {}, o.max);
        CHECK(o.record(set) == nlohmann::json(o.max));
      } else {
        for (std::string_view c : o.choices) {
          o.set(set, c, 0);
          CHECK(o.record(set) == nlohmann::json(std::string(c)));
        }
      }
    }
}

namespace {

// The registry with entry `at` replaced by `changed`.
std::vector<MapKind> with_entry(std::size_t at, const MapKind& changed) {
  std::vector<MapKind> kinds(plumb::map_registry().begin(), plumb::map_registry().end());
  kinds[at] = changed;
  return kinds;
}

}  // namespace

TEST_CASE("map registry: the self-check finds an entry registered without one of its facts") {
  const auto registry = plumb::map_registry();
  for (std::size_t i = 0; i < registry.size(); ++i) {
    const MapKind& k = registry[i];
    INFO("kind " << k.name);
    auto lacks = [&](const char* what, auto change) {
      INFO("without " << what);
      MapKind c = k;
      change(c);
      CHECK_FALSE(plumb::registry_problems(with_entry(i, c)).empty());
    };
    lacks("a name", [](MapKind& c) { c.name = {}; });
    lacks("a load function", [](MapKind& c) { c.load = nullptr; });
    lacks("a scale check", [](MapKind& c) { c.accepts = nullptr; });
    if (!k.fittable) continue;
    lacks("a help line", [](MapKind& c) { c.help = {}; });
    lacks("a fit function", [](MapKind& c) { c.fit = nullptr; });
    lacks("a complexity rank", [](MapKind& c) { c.complexity = 0; });
    lacks("a rank of its own", [&](MapKind& c) {
      for (const MapKind& other : registry)
        if (other.fittable && other.name != c.name) c.complexity = other.complexity;
    });
    lacks("a name of its own", [&](MapKind& c) { c.name = registry[(i + 1) % registry.size()].name; });
    if (!k.scale_hint.empty())
      lacks("its scale hint", [](MapKind& c) { c.scale_hint = {}; });
    else
      lacks("a scale it refuses (with a hint)", [](MapKind& c) { c.scale_hint = "--scale probability"; });
    if (k.nonparametric) {
      lacks("the zero-or-one pieces", [](MapKind& c) { c.zero_or_one_pieces = {}; });
      lacks("the zero-or-one advice", [](MapKind& c) { c.zero_or_one_advice = {}; });
    }
    if (!k.not_monotone_advice.empty())
      lacks("half its not-monotone note", [](MapKind& c) { c.not_monotone_advice = {}; });
    for (std::size_t j = 0; j < k.options.size(); ++j) {
      INFO("option " << k.options[j].name);
      auto option_lacks = [&](const char* what, auto change) {
        std::vector<MapOption> options(k.options.begin(), k.options.end());
        change(options[j]);
        lacks(what, [&](MapKind& c) { c.options = options; });
      };
      option_lacks("its name", [](MapOption& o) { o.name = {}; });
      option_lacks("its recorded key", [](MapOption& o) { o.recorded = {}; });
      option_lacks("its help", [](MapOption& o) { o.help = {}; });
      option_lacks("its help's kind", [](MapOption& o) { o.help = "no kind named first"; });
      option_lacks("its default", [](MapOption& o) { o.default_text = {}; });
      option_lacks("its setter", [](MapOption& o) { o.set = nullptr; });
      option_lacks("its recorder", [](MapOption& o) { o.record = nullptr; });
      option_lacks("its choices or range", [](MapOption& o) {
        o.choices = {};
        o.min = o.max = 0;
      });
      option_lacks("a default that MapOptions holds", [](MapOption& o) {
        // A default other than MapOptions' own: the second choice, or the range's end.
        if (o.choices.size() > 1)
          o.default_text = o.choices[1];
        else
          o.default_text = "1000000";
      });
    }
  }
}
