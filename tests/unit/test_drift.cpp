// plumb drift's computation (plumb/drift.hpp): the PSI by hand, the
// Kolmogorov distribution at a value known from the literature, the grid
// (the table rule against the nearest log-odds, and a counter against a
// plain map of counts), the bins as unions of the map's pieces, identical
// sides, and the artifact's drift reference (version 5) round trip and
// refusals. Data are invented, with fixed seeds.
#include <catch2/catch.hpp>
#include <cmath>
#include <map>
#include <random>
#include <vector>

#include "plumb/drift.hpp"
#include "plumb/error.hpp"
#include "plumb/io/artifact.hpp"
#include "support/test_helpers.hpp"

using plumb::GridCells;
using plumb::Scale;

namespace {

GridCells counted(const std::vector<double>& scores, const std::vector<int>& labels, Scale scale, double step) {
  plumb::GridCounter counter(scale, step, !labels.empty());
  for (std::size_t i = 0; i < scores.size(); ++i) counter.add(scores[i], !labels.empty() && labels[i] == 1);
  return counter.finish();
}

}  // namespace

TEST_CASE("PSI worked by hand", "[drift]") {
  // Shares tonight 0.30, 0.50, 0.20 against 0.25, 0.50, 0.25:
  // 0.05 ln(0.30/0.25) + 0 + (-0.05) ln(0.20/0.25)
  // = 0.05 * 0.1823215568 + 0.05 * 0.2231435513 = 0.0202732554.
  const std::vector<std::uint64_t> tonight{30, 50, 20}, reference{25, 50, 25};
  CHECK(plumb::population_stability_index(tonight, reference) == Approx(0.0202732554).margin(1e-10));
  // The same shares from other totals give the same index.
  const std::vector<std::uint64_t> tonight10{300, 500, 200};
  CHECK(plumb::population_stability_index(tonight10, reference) == Approx(0.0202732554).margin(1e-10));
  // An empty bin counts as half a row of its side: tonight 0 and 10 rows
  // against 5 and 5: (0.05 - 0.5) ln(0.05 / 0.5) + (1 - 0.5) ln(1 / 0.5)
  // = 0.45 * 2.302585093 + 0.5 * 0.6931471806 = 1.382736682.
  const std::vector<std::uint64_t> empty{0, 10}, even{5, 5};
  CHECK(plumb::population_stability_index(empty, even) == Approx(1.382736682).margin(1e-9));
  // Symmetric in its two sides, zero for equal shares.
  CHECK(plumb::population_stability_index(reference, tonight) ==
        Approx(plumb::population_stability_index(tonight, reference)));
  CHECK(plumb::population_stability_index(even, even) == 0.0);
}

TEST_CASE("the Kolmogorov distribution's upper tail", "[drift]") {
  // P(K <= 1) = 0.7300003283 (the Kolmogorov distribution at 1; value from
  // memory of the tables, and R's 1 - psmirnov at sqrt(n) D = 1 gives it).
  CHECK(plumb::kolmogorov_upper_tail(1.0) == Approx(1.0 - 0.7300003283).margin(1e-8));
  // The two series meet at x = 1 without a jump, and the tail falls.
  CHECK(plumb::kolmogorov_upper_tail(1.0 - 1e-9) == Approx(plumb::kolmogorov_upper_tail(1.0)).margin(1e-8));
  // The 5% critical value 1.3581 (common tables, from memory).
  CHECK(plumb::kolmogorov_upper_tail(1.3581) == Approx(0.05).margin(1e-4));
  CHECK(plumb::kolmogorov_upper_tail(0.0) == 1.0);
  CHECK(plumb::kolmogorov_upper_tail(0.2) == Approx(1.0).margin(1e-12));
  // Far in the tail the first term, 2 exp(-2 x^2), is the value (the
  // second is exp(-6 x^2) smaller): no digits lost to 1 - K(x).
  CHECK(plumb::kolmogorov_upper_tail(4.56) == Approx(2.0 * std::exp(-2.0 * 4.56 * 4.56)).epsilon(1e-12));
  CHECK(plumb::kolmogorov_upper_tail(6.0) == Approx(2.0 * std::exp(-72.0)).epsilon(1e-12));
}

TEST_CASE("grid cells: the table rule is the nearest log-odds, and counts are kept", "[drift]") {
  std::mt19937_64 gen(5);
  std::uniform_real_distribution<double> z(-12.0, 12.0);
  const double step = 0.02;
  const plumb::GridIndexer index(Scale::probability, step);
  std::size_t off = 0;
  for (int i = 0; i < 20000; ++i) {
    const double p = plumb::sigmoid(z(gen));
    const double exact = (std::log(p) - std::log1p(-p)) / step;
    const std::int64_t k = index(p);
    // Away from a boundary the table gives the nearest cell; at one, either.
    if (std::fabs(exact - std::nearbyint(exact)) < 0.5 - 1e-6) CHECK(k == static_cast<std::int64_t>(std::nearbyint(exact)));
    else ++off;
    CHECK(std::fabs(static_cast<double>(k) - exact) <= 0.5 + 1e-6);
  }
  CHECK(off < 10);
  // Tiny and near-one probabilities (outside the buckets, and many cells per bucket).
  for (double p : {1e-300, 1e-12, 3e-10, 0.999999, 1.0 - 1e-15}) {
    const double exact = (std::log(p) - std::log1p(-p)) / step;
    CHECK(std::fabs(static_cast<double>(index(p)) - exact) <= 0.5 + 1e-6);
  }
  // A counter whose range grows both ways keeps every count (against std::map).
  std::vector<double> scores;
  std::vector<int> labels;
  std::map<std::int64_t, std::pair<std::uint64_t, std::uint64_t>> expect;
  std::uniform_real_distribution<double> wide(-40.0, 40.0);
  for (int i = 0; i < 5000; ++i) {
    const double s = i < 10 ? 0.5 * i : (i % 2 ? wide(gen) : -wide(gen) / 3.0);
    scores.push_back(s);
    labels.push_back(i % 3 == 0);
    auto& e = expect[plumb::grid_index(s, Scale::logit, 0.1)];
    ++e.first;
    e.second += i % 3 == 0;
  }
  const GridCells g = counted(scores, labels, Scale::logit, 0.1);
  REQUIRE(g.index.size() == expect.size());
  std::size_t i = 0;
  for (const auto& [k, c] : expect) {
    CHECK(g.index[i] == k);
    CHECK(g.count[i] == c.first);
    CHECK(g.positive[i] == c.second);
    ++i;
  }
  CHECK(g.rows() == 5000);
}

TEST_CASE("drift of identical sides is nil, and bins are unions of the map's pieces", "[drift]") {
  std::mt19937_64 gen(11);
  std::uniform_real_distribution<double> u(0.0, 1.0);
  std::vector<double> score, label, weight;
  for (int i = 0; i < 3000; ++i) {
    const double s = u(gen);
    score.push_back(s);
    label.push_back(u(gen) < s ? 1.0 : 0.0);
  }
  auto map = plumb::fit_map("isotonic", plumb::FitData{score, label, weight, Scale::probability});
  std::vector<int> y(label.begin(), label.end());
  const GridCells ref = counted(score, y, Scale::probability, 0.02);
  plumb::DriftOptions options;
  options.bootstrap = 50;
  const plumb::DriftResult same = plumb::compute_drift(ref, ref, *map, options);
  CHECK(same.psi == 0.0);
  CHECK(same.ks.statistic == 0.0);
  CHECK(same.ks.p_value == 1.0);
  CHECK(same.brier.difference == 0.0);
  CHECK(same.mcb.difference == 0.0);
  CHECK(same.refit == plumb::RefitVerdict::not_warranted);
  REQUIRE(same.bins.size() <= options.bins);
  // No piece of the map (cells of one forecast) is split between two bins.
  for (std::size_t b = 0; b + 1 < same.bins.size(); ++b)
    CHECK((*map)(same.bins[b].score_hi) != (*map)(same.bins[b + 1].score_lo));

  // Tonight's scores shifted up: a PSI and KS that see it, and gates on them.
  std::vector<double> shifted;
  for (double s : score) shifted.push_back(std::min(1.0, s * 0.5 + 0.5));
  const GridCells now = counted(shifted, {}, Scale::probability, 0.02);
  options.bootstrap = 0;
  const plumb::DriftResult moved = plumb::compute_drift(ref, now, *map, options);
  CHECK(moved.psi > 1.0);
  CHECK(moved.ks.statistic > 0.4);
  CHECK(moved.ks.p_value < 1e-10);
  CHECK(!moved.labelled);
  plumb::Gate psi{"", "psi", 0.25, plumb::GateBound::max};
  CHECK(plumb::check_drift_gate(psi, moved).exceeded);
  CHECK_FALSE(plumb::check_drift_gate(psi, same).exceeded);
  // A labelled figure without labels fails its gate (it cannot be computed).
  plumb::Gate ll{"", "log_loss_change", 1.0, plumb::GateBound::max};
  CHECK(plumb::check_drift_gate(ll, moved).exceeded);
  CHECK(std::isnan(plumb::check_drift_gate(ll, moved).value));
}

TEST_CASE("the artifact's drift reference: version 5, round trip, refusals", "[drift][artifact]") {
  std::vector<double> score{0.1, 0.2, 0.2, 0.7, 0.9, 0.0, 1.0}, label{0, 0, 1, 1, 1, 0, 1}, weight;
  plumb::Artifact a;
  a.map = plumb::fit_map("isotonic", plumb::FitData{score, label, weight, Scale::probability});
  a.score_column = "risk";
  a.provenance.source = "small.csv";
  a.provenance.rows = score.size();
  a.provenance.positives = 4;
  a.provenance.weight_total = static_cast<double>(score.size());
  a.provenance.label_column = "missed";
  CHECK(plumb::artifact_version(a) == 1);
  std::vector<int> y(label.begin(), label.end());
  a.reference = counted(score, y, Scale::probability, 0.02);
  CHECK(plumb::artifact_version(a) == 5);
  const std::string text = plumb::artifact_to_text(a);
  const plumb::Artifact back = plumb::artifact_from_text(text, "small.map.json");
  REQUIRE(back.reference);
  CHECK(back.reference->index == a.reference->index);
  CHECK(back.reference->count == a.reference->count);
  CHECK(back.reference->positive == a.reference->positive);
  CHECK(back.reference->zero_count == 1);
  CHECK(back.reference->one_positive == 1);
  CHECK(plumb::artifact_to_text(back) == text);

  // Edited documents (the integrity hash recomputed): a reference in a
  // version 2 document, cells out of order, more positives than rows.
  auto edited = [&](auto edit) {
    nlohmann::json doc = nlohmann::json::parse(text);
    doc.erase("integrity_sha256");
    edit(doc);
    doc["integrity_sha256"] = plumb::integrity_hash(doc);
    return doc.dump(2);
  };
  using plumb::test::error_kind;
  CHECK(error_kind([&] { plumb::artifact_from_text(edited([](auto& d) { d["format_version"] = 2; }), "m"); }) ==
        plumb::ErrorKind::artifact);
  CHECK(error_kind([&] {
          plumb::artifact_from_text(edited([](auto& d) {
                                      auto& i = d["drift_reference"]["index"];
                                      std::swap(i[0], i[1]);
                                    }),
                                    "m");
        }) == plumb::ErrorKind::artifact);
  CHECK(error_kind([&] {
          plumb::artifact_from_text(edited([](auto& d) { d["drift_reference"]["positive"][0] = 99; }), "m");
        }) == plumb::ErrorKind::artifact);
  // Versions 3 and 4 belong to other features: refused as unknown here.
  CHECK(error_kind([&] { plumb::artifact_from_text(edited([](auto& d) { d["format_version"] = 3; }), "m"); }) ==
        plumb::ErrorKind::artifact);
}
