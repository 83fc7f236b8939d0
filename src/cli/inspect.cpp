// plumb inspect: a readable summary of a map artifact, after full validation.
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <iostream>
#include <string>

#include "cli/commands.hpp"
#include "cli/common.hpp"
#include "plumb/io/artifact.hpp"
#include "plumb/io/class_artifact.hpp"
#include "plumb/version.hpp"

namespace plumb::cli {
namespace {

// The command's usage as --help prints it: the summary under the command's
// name, and the text after the options (what it does, examples).
constexpr const char* kUsageSummary =
    "Check a map artifact and summarise it: kind, parameters, provenance, fit";
constexpr const char* kUsageFooter =
    "Exits with code 4 when the artifact is truncated, edited, of an unknown version or invalid.\n\n"
    "Examples:\n"
    "  plumb inspect late.map.json\n"
    "  plumb inspect --json late.map.json | jq .parameters";

struct InspectOptions {
  std::string artifact;
  bool json = false;
  bool all = false;
};

constexpr std::size_t rows_shown = 12;

std::string scalar_text(const nlohmann::json& v) {
  if (v.is_number_float()) return shortest(v.get<double>());
  if (v.is_string()) return v.get<std::string>();
  return v.dump();
}

// The parameters' keys in display order. The artifact's objects keep their
// keys sorted (so its bytes and hash do not depend on the writer's order),
// which puts NAME_hi before NAME_lo; a range reads lo, then hi.
std::vector<std::string> display_order(const nlohmann::json& params) {
  std::vector<std::string> keys;
  for (const auto& item : params.items()) keys.push_back(item.key());
  auto ends_with = [](const std::string& s, std::string_view tail) {
    return s.size() >= tail.size() && s.compare(s.size() - tail.size(), tail.size(), tail) == 0;
  };
  for (std::size_t i = 0; i + 1 < keys.size(); ++i) {
    if (!ends_with(keys[i], "_hi")) continue;
    const std::string lo = keys[i].substr(0, keys[i].size() - 3) + "_lo";
    const auto at = std::find(keys.begin() + static_cast<std::ptrdiff_t>(i) + 1, keys.end(), lo);
    if (at != keys.end()) std::rotate(keys.begin() + static_cast<std::ptrdiff_t>(i), at, at + 1);
  }
  return keys;
}

// Parameters are printed without knowing the kind: scalars one per line,
// arrays of equal length side by side as a table.
void print_parameters(const nlohmann::json& params, bool all) {
  std::vector<std::string> columns;
  std::size_t length = 0;
  for (const std::string& key : display_order(params)) {
    const nlohmann::json& value = params[key];
    if (value.is_array()) {
      if (columns.empty() || value.size() == length) {
        columns.push_back(key);
        length = value.size();
      }
      continue;
    }
    std::printf("  %-22s %s\n", key.c_str(), scalar_text(value).c_str());
  }
  if (columns.empty()) return;
  std::printf("\n  %6s", "#");
  for (const std::string& c : columns) std::printf(" %22s", c.c_str());
  std::printf("\n");
  const bool cut = !all && length > rows_shown;
  for (std::size_t i = 0; i < length; ++i) {
    if (cut && i == rows_shown / 2) {
      std::printf("  %6s  ... %zu more (--all shows every row)\n", "", length - rows_shown);
      i = length - rows_shown / 2;
    }
    std::printf("  %6zu", i + 1);
    for (const std::string& c : columns) std::printf(" %22s", scalar_text(params[c][i]).c_str());
    std::printf("\n");
  }
}

// The evidence `plumb cross-fit` stored, read defensively: it is checked
// by the integrity hash but its inner shape is informational.
void print_cross_fit(const nlohmann::json& e) {
  auto text = [&](const char* key) { return e.contains(key) ? scalar_text(e[key]) : std::string("?"); };
  std::string split = e.contains("split") && e["split"].is_object() && e["split"].contains("kind")
                          ? scalar_text(e["split"]["kind"])
                          : std::string("?");
  // Artifacts of the first release call the column split "given".
  if (split == "given") split = "column";
  split += " split";
  if (e.contains("split") && e["split"].is_object() && e["split"].contains("column"))
    split += " on '" + scalar_text(e["split"]["column"]) + "'";
  // A count of rows with thousands separators, as every other count here.
  const std::string scored = e.contains("scored_rows") && e["scored_rows"].is_number_unsigned()
                                 ? grouped(e["scored_rows"].get<std::uint64_t>())
                                 : text("scored_rows");
  // A section of its own, like "parameters", with its facts indented.
  std::printf("\ncross-fit\n  %-14s %s folds, %s, seed %s, %s rows scored out of fold, shipped: %s\n", "evidence",
              text("folds").c_str(), split.c_str(), text("seed").c_str(), scored.c_str(), text("final").c_str());
  std::printf("  %-14s %s. %s.\n", "chosen", text("chosen").c_str(), text("reason").c_str());
  if (!e.contains("candidates") || !e["candidates"].is_array()) return;
  // The names in one column, as wide as the longest kind.
  int width = 14;
  for (const auto& c : e["candidates"])
    if (c.is_object() && c.contains("kind"))
      width = std::max(width, static_cast<int>(scalar_text(c["kind"]).size()));
  std::printf("  %-*s %12s %12s %10s %10s\n", width, "candidate", "oof log loss", "oof Brier", "oof ECE", "oof AUC");
  auto row = [width](const std::string& name, const nlohmann::json& c) {
    auto num = [&](const char* k) { return c.contains(k) && c[k].is_number() ? c[k].get<double>() : NAN; };
    // Artifacts written before the AUC was part of the evidence have none.
    char auc[32] = "-";
    if (c.contains("auc") && c["auc"].is_number()) std::snprintf(auc, sizeof auc, "%.6f", c["auc"].get<double>());
    std::printf("  %-*s %12.6f %12.6f %10.6f %10s\n", width, name.c_str(), num("log_loss"), num("brier"), num("ece"),
                auc);
  };
  if (e.contains("raw") && e["raw"].is_object()) row("(raw score)", e["raw"]);
  for (const auto& c : e["candidates"])
    if (c.is_object() && c.contains("kind")) row(scalar_text(c["kind"]), c);
}

// The odds steps, in the order they were made; an estimate is read
// defensively, like the cross-fit evidence (informational, hash-checked).
void print_odds_steps(const Artifact& a) {
  double factor = 1.0;
  for (const OddsStep& s : a.odds_steps) factor *= s.factor;
  std::printf("  %-14s x %s on the fitted map's odds: base rate %s in the fit rows, %s after (plumb apply and "
              "plumb report --map use the adjusted map)\n",
              "odds", significant(factor, 6).c_str(), significant(fitted_base_rate(a), 4).c_str(),
              significant(target_base_rate(a), 4).c_str());
  for (const OddsStep& s : a.odds_steps) {
    if (s.reason == OddsStep::Reason::negative_sampling) {
      std::printf("  %-14s x %s: negatives were kept at rate %s in the fit rows\n", "",
                  significant(s.factor, 6).c_str(), shortest(s.negative_rate).c_str());
      continue;
    }
    std::string how = "given";
    const nlohmann::json& e = s.estimate;
    if (e.is_object()) {
      auto text = [&](const char* key) { return e.contains(key) ? scalar_text(e[key]) : std::string("?"); };
      const std::string rows = e.contains("rows") && e["rows"].is_number_unsigned()
                                   ? grouped(e["rows"].get<std::uint64_t>())
                                   : text("rows");
      how = "estimated by EM from " + rows + " rows of " + text("source");
      if (e.contains("interval") && e["interval"].is_array() && e["interval"].size() == 2 &&
          e["interval"][0].is_number() && e["interval"][1].is_number() && e.contains("confidence") &&
          e["confidence"].is_number())
        how += ", " + significant(100.0 * e["confidence"].get<double>(), 4) + "% bootstrap interval " +
               interval_text(significant(e["interval"][0].get<double>(), 4),
                             significant(e["interval"][1].get<double>(), 4));
    }
    std::printf("  %-14s x %s: prior shift, base rate %s -> %s (%s)\n", "", significant(s.factor, 6).c_str(),
                significant(s.base_rate_from, 4).c_str(), significant(s.base_rate_to, 4).c_str(), how.c_str());
  }
}

// A multi-class map: its classes and score columns side by side, then the
// kind's parameters (a dirichlet matrix row by row, a one-vs-rest map's
// binary maps class by class).
int inspect_classes(const InspectOptions& o, const ClassArtifact& a) {
  if (o.json) {
    nlohmann::json doc = class_artifact_to_json(a);
    doc["integrity_sha256"] = integrity_hash(doc);
    std::cout << doc.dump(2) << "\n";
    return 0;
  }
  const ClassProvenance& p = a.provenance;
  const ClassCalibrationMap& m = *a.map;
  const FitDiagnostics& d = m.diagnostics();
  const std::string name = o.artifact == "-" ? "<stdin>" : o.artifact;
  std::printf("%s: %s map on %zu classes (format %s version %d, integrity hash checked)\n\n", name.c_str(),
              std::string(m.kind()).c_str(), m.k(), artifact_format_marker, class_artifact_version(a));
  std::printf("  %-14s %s scale\n", "scores", std::string(to_string(m.scale())).c_str());
  std::printf("  %-14s %s (%s)\n", "fitted on", p.source.c_str(), p.tool.c_str());
  std::printf("  %-14s %s rows, weight %s\n", "", grouped(p.rows).c_str(), weight_text(p.weight_total).c_str());
  if (p.rows_skipped)
    std::printf("  %-14s %s %s with a missing score or label left out (fitted with missing values skipped)\n", "",
                grouped(*p.rows_skipped).c_str(), *p.rows_skipped == 1 ? "row" : "rows");
  std::printf("  %-14s label column '%s'%s\n", "", p.label_column.c_str(),
              p.weight_column.empty() ? "" : (", weights from '" + p.weight_column + "'").c_str());
  std::printf("  %-14s sha256 %s\n", "", p.source_sha256.c_str());
  std::printf("  %-14s %s\n", "created", p.created_utc.empty() ? "(no timestamp)" : p.created_utc.c_str());
  std::printf("  %-14s %d iteration%s, %s, log loss %s on the fit rows, %s rows clipped\n", "fit", d.iterations,
              d.iterations == 1 ? "" : "s", d.converged ? "converged" : "NOT converged", fixed_text(d.log_loss, 6).c_str(),
              grouped(d.clipped).c_str());
  for (const std::string& n : d.notes) std::printf("  %-14s %s\n", "", n.c_str());
  if (!a.fit_options.empty()) std::printf("  %-14s %s\n", "options", a.fit_options.dump().c_str());
  if (a.cross_fit.is_object()) {
    // The multi-class evidence: out-of-fold log loss per candidate, read
    // defensively (informational, hash-checked).
    const nlohmann::json& e = a.cross_fit;
    auto text = [&](const nlohmann::json& obj, const char* key) {
      return obj.contains(key) ? scalar_text(obj[key]) : std::string("?");
    };
    const std::string scored = e.contains("scored_rows") && e["scored_rows"].is_number_unsigned()
                                   ? grouped(e["scored_rows"].get<std::uint64_t>())
                                   : text(e, "scored_rows");
    // The split: stratified by class (the first releases' only split),
    // grouped, by time or from a column of the input.
    std::string how = "stratified by class, seed " + text(e, "seed");
    if (e.contains("split") && e["split"].is_object()) {
      const nlohmann::json& sp = e["split"];
      const std::string kind = text(sp, "kind"), column = text(sp, "column");
      if (kind == "group") how = "grouped by " + column + ", seed " + text(e, "seed");
      else if (kind == "time") how = "forward in time by " + column;
      else if (kind == "column" || kind == "given") how = "from the column " + column;
    }
    std::printf("\ncross-fit\n  %-14s %s folds %s, %s rows scored out of fold, shipped: %s\n", "evidence",
                text(e, "folds").c_str(), how.c_str(), scored.c_str(), text(e, "final").c_str());
    std::printf("  %-14s %s: %s\n", "chosen", text(e, "chosen").c_str(), text(e, "reason").c_str());
    if (e.contains("candidates") && e["candidates"].is_array()) {
      std::printf("  %-22s %12s %12s %10s %10s %10s\n", "candidate", "oof log loss", "minus best", "se", "oof Brier",
                  "se");
      for (const auto& c : e["candidates"]) {
        if (!c.is_object()) continue;
        auto num = [&](const char* k) {
          return c.contains(k) && c[k].is_number() ? fixed_text(c[k].get<double>(), 6) : std::string("?");
        };
        std::printf("  %-22s %12s %12s %10s %10s %10s\n", text(c, "name").c_str(), num("log_loss").c_str(),
                    num("log_loss_minus_best").c_str(), num("log_loss_minus_best_se").c_str(), num("brier").c_str(),
                    num("brier_se").c_str());
      }
    }
  }
  std::size_t width = 5;
  for (const std::string& c : m.classes()) width = std::max(width, c.size());
  std::printf("\nclasses\n  %-*s  %-22s %10s\n", static_cast<int>(width), "class", "score column", "fit share");
  for (std::size_t j = 0; j < m.k(); ++j)
    std::printf("  %-*s  %-22s %10s\n", static_cast<int>(width), m.classes()[j].c_str(), a.score_columns[j].c_str(),
                share_text(p.weight_total > 0 ? p.class_weights[j] / p.weight_total : 0.0).c_str());
  const nlohmann::json params = m.parameters();
  std::printf("\nparameters\n");
  if (params.contains("matrix")) {
    std::printf("  %-22s %s\n", "l2", scalar_text(params["l2"]).c_str());
    std::printf("\n  %-*s", static_cast<int>(width), "row");
    for (const std::string& c : m.classes()) std::printf(" %22s", ("l_" + c).c_str());
    std::printf(" %22s\n", "bias");
    for (std::size_t j = 0; j < m.k(); ++j) {
      std::printf("  %-*s", static_cast<int>(width), m.classes()[j].c_str());
      for (std::size_t i = 0; i < m.k(); ++i) std::printf(" %22s", scalar_text(params["matrix"][j][i]).c_str());
      std::printf(" %22s\n", scalar_text(params["bias"][j]).c_str());
    }
  } else if (m.kind() == "fold_average") {
    const auto& folds = params["maps"];
    for (std::size_t f = 0; f < folds.size(); ++f) {
      std::printf("\n  fold map %zu: %s\n", f + 1, scalar_text(folds[f]["kind"]).c_str());
      print_parameters(folds[f]["parameters"], o.all);
    }
  } else if (params.contains("maps")) {
    std::printf("  %-22s %s\n", "per_class", scalar_text(params["per_class"]).c_str());
    for (std::size_t j = 0; j < m.k(); ++j) {
      std::printf("\n  class '%s'\n", m.classes()[j].c_str());
      print_parameters(params["maps"][j], o.all);
    }
  } else {
    print_parameters(params, o.all);
  }
  return 0;
}

int run_inspect(const InspectOptions& o) {
  const ArtifactFile file = read_artifact_file(o.artifact);
  if (file.multi_class) return inspect_classes(o, class_artifact_from_text(file.text, file.name));
  const Artifact a = artifact_from_text(file.text, file.name);
  if (o.json) {
    nlohmann::json doc = artifact_to_json(a);
    doc["integrity_sha256"] = integrity_hash(doc);
    std::cout << doc.dump(2) << "\n";
    return 0;
  }
  const Provenance& p = a.provenance;
  const FitDiagnostics& d = a.map->diagnostics();
  const std::string name = o.artifact == "-" ? "<stdin>" : o.artifact;
  std::printf("%s: %s map (format %s version %d, integrity hash checked)\n\n", name.c_str(),
              std::string(a.map->kind()).c_str(), artifact_format_marker, artifact_version(a));
  std::printf("  %-14s column '%s', %s scale\n", "scores", a.score_column.c_str(),
              std::string(to_string(a.map->scale())).c_str());
  std::printf("  %-14s %s (%s)\n", "fitted on", p.source.c_str(), p.tool.c_str());
  std::printf("  %-14s %s rows, weight %s, positives %s (%s)\n", "", grouped(p.rows).c_str(),
              weight_text(p.weight_total).c_str(), weight_text(p.positives).c_str(),
              share_text(p.weight_total > 0 ? p.positives / p.weight_total : 0.0).c_str());
  if (p.rows_skipped)
    std::printf("  %-14s %s %s with a missing score or label left out (fitted with missing values skipped)\n", "",
                grouped(*p.rows_skipped).c_str(), *p.rows_skipped == 1 ? "row" : "rows");
  std::printf("  %-14s label column '%s': %s%s\n", "", p.label_column.c_str(), p.positive_rule.c_str(),
              p.weight_column.empty() ? "" : (", weights from '" + p.weight_column + "'").c_str());
  std::printf("  %-14s scores from %s to %s\n", "", shortest(p.score_min).c_str(), shortest(p.score_max).c_str());
  std::printf("  %-14s sha256 %s\n", "", p.source_sha256.c_str());
  std::printf("  %-14s %s\n", "created", p.created_utc.empty() ? "(no timestamp)" : p.created_utc.c_str());
  std::printf("  %-14s %d iteration%s, %s, log loss %.6f on the fit rows, %zu rows clipped\n", "fit", d.iterations,
              d.iterations == 1 ? "" : "s", d.converged ? "converged" : "NOT converged", d.log_loss, d.clipped);
  for (const std::string& n : d.notes) std::printf("  %-14s %s\n", "", n.c_str());
  if (!a.fit_options.empty()) std::printf("  %-14s %s\n", "options", a.fit_options.dump().c_str());
  std::printf("  %-14s %s\n", "monotone", a.map->monotone() ? "yes" : "NO (the map decreases somewhere)");
  if (!a.odds_steps.empty()) print_odds_steps(a);
  if (a.cross_fit.is_object()) print_cross_fit(a.cross_fit);
  std::printf(a.odds_steps.empty() ? "\nparameters\n" : "\nparameters (the fitted map's, before the odds adjustment)\n");
  print_parameters(a.map->parameters(), o.all);
  return 0;
}

}  // namespace

Command add_inspect_command(CLI::App& app) {
  auto o = std::make_shared<InspectOptions>();
  CLI::App* cmd = app.add_subcommand("inspect", kUsageSummary);
  cmd->footer(kUsageFooter);
  cmd->add_option("map", o->artifact, "Map artifact written by plumb fit (- reads standard input)")->required();
  cmd->add_flag("--json", o->json, "Print the validated artifact as JSON instead of the summary");
  cmd->add_flag("--all", o->all, "Show every knot or bin, not only the first and last few");
  return [o] { return run_inspect(*o); };
}

}  // namespace plumb::cli
