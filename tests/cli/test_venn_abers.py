"""The Venn-Abers kinds through the command line: fit, the artifact (format
version 3, the published schema), apply's probability and --interval
columns against the knots as docs/artifact-format.md states them, and the
refusals (--interval for a map without an interval, fractional weights for
the cross form)."""
import json
import os
import unittest

import jsonschema  # Debian python3-jsonschema

from plumbtest import SOURCE_DIR, PlumbCase, read_rows, run, simulated_holdout, write

USAGE, FIT = 2, 6


def step_values(params, s, names):
    """The values at score s by the documented rule: step r + 1 starts at
    step_score[r], and a score equal to it belongs to step r + 1 when
    step_closed[r], else to step r."""
    r = 0
    for x, closed in zip(params["step_score"], params["step_closed"]):
        if s > x or (s == x and closed):
            r += 1
        else:
            break
    return [params[n][r] for n in names]


class VennAbers(PlumbCase):
    def setUp(self):
        super().setUp()
        rows = ["risk,missed"] + [f"{s},{y}" for s, y in simulated_holdout(1200, seed=5)]
        write(self.path("h.csv"), "\n".join(rows) + "\n")
        grid = [k / 100 for k in range(101)] + [s for s, _ in simulated_holdout(1200, seed=5)]
        write(self.path("grid.csv"), "id,risk\n" + "\n".join(f"{i},{s!r}" for i, s in enumerate(grid)) + "\n")
        self.grid = grid

    def fit(self, kind, *extra):
        out = self.path(kind + ".json")
        rc, _, err = run("fit", "-q", "--map", kind, "--score", "risk", "--label", "missed", self.path("h.csv"),
                         "-o", out, *extra)
        self.assertEqual(rc, 0, err)
        return out

    def test_artifact_is_version_3_and_matches_the_schema(self):
        with open(os.path.join(SOURCE_DIR, "docs", "artifact.schema.json")) as f:
            validator = jsonschema.Draft202012Validator(json.load(f))
        for kind, extra in (("venn_abers", ()), ("cross_venn_abers", ()), ("cross_venn_abers", ("--venn-folds", "3"))):
            # Without the drift reference (version 5, which outranks 3).
            self.assertEqual(self.load_json(self.fit(kind, *extra))["format_version"], 5, kind)
            doc = self.load_json(self.fit(kind, "--no-reference", *extra))
            self.assertEqual(doc["format_version"], 3, kind)
            self.assertEqual(doc["kind"], kind)
            self.assertEqual([e.message for e in validator.iter_errors(doc)], [], kind)
            if kind == "cross_venn_abers":
                self.assertEqual(doc["fit"]["options"], {"venn_folds": int(extra[1]) if extra else 5})
                self.assertEqual(doc["parameters"]["folds"], int(extra[1]) if extra else 5)
            # The schema holds version 3 to the kind: 2 is refused for it.
            doc["format_version"] = 2
            self.assertTrue(list(validator.iter_errors(doc)), "the schema accepts version 2 for " + kind)
        # A plain map without the drift reference stays version 1.
        self.assertEqual(self.load_json(self.fit("isotonic", "--no-reference"))["format_version"], 1)

    def test_apply_writes_the_documented_probability_and_interval(self):
        # docs/artifact-format.md: p0/p1 at the score's place; the probability
        # is p1 / (1 - p0 + p1) (Vovk and Petej 2014) for venn_abers and the
        # stored merged value for cross_venn_abers.
        for kind in ("venn_abers", "cross_venn_abers"):
            path = self.fit(kind)
            params = self.load_json(path)["parameters"]
            rc, out, err = run("apply", "-q", "--interval", path, self.path("grid.csv"))
            self.assertEqual(rc, 0, err)
            rows = read_rows(out, is_text=True)
            self.assertEqual(rows[0], ["id", "risk", "risk_calibrated", "risk_calibrated_p0", "risk_calibrated_p1"])
            self.assertEqual(len(rows), len(self.grid) + 1)
            for row, s in zip(rows[1:], self.grid):
                p0, p1 = step_values(params, s, ("p0", "p1"))
                self.assertEqual(float(row[3]), p0, (kind, s))
                self.assertEqual(float(row[4]), p1, (kind, s))
                if kind == "venn_abers":
                    self.assertAlmostEqual(float(row[2]), p1 / (1 - p0 + p1), places=15)
                else:
                    self.assertEqual(float(row[2]), step_values(params, s, ("probability",))[0])
                self.assertLessEqual(p0, p1)
            # The grid meets step scores exactly, closed and open ones.
            hits = {c for x, c in zip(params["step_score"], params["step_closed"]) if x in self.grid}
            self.assertEqual(hits, {True, False})
            # Without --interval: the same probabilities, no interval columns.
            rc, plain, err = run("apply", "-q", path, self.path("grid.csv"))
            self.assertEqual(rc, 0, err)
            self.assertEqual([r[:3] for r in rows], read_rows(plain, is_text=True))
            # --replace: the interval follows the probability in the score's place.
            rc, replaced, err = run("apply", "-q", "--interval", "--replace", path, self.path("grid.csv"))
            self.assertEqual(rc, 0, err)
            rrows = read_rows(replaced, is_text=True)
            self.assertEqual(rrows[0], ["id", "risk", "risk_p0", "risk_p1"])
            self.assertEqual([r[0:1] + r[2:] for r in rows[1:]], rrows[1:])

    def test_interval_columns_for_a_missing_score_are_empty(self):
        path = self.fit("venn_abers")
        write(self.path("m.csv"), "risk,x\n0.3,a\n,b\n")
        rc, out, err = run("apply", "-q", "--interval", "--missing", "empty", path, self.path("m.csv"))
        self.assertEqual(rc, 0, err)
        self.assertEqual(out.splitlines()[2], ",b,,,")

    def test_interval_is_refused_for_a_map_without_one(self):
        path = self.fit("isotonic")
        line = self.assert_refused(["apply", "--interval", path, self.path("grid.csv")], USAGE,
                                   "--interval", "an isotonic map has none", "no --interval")
        self.assertIn(path, line)

    def test_interval_column_names_that_clash_are_refused(self):
        path = self.fit("venn_abers")
        write(self.path("c.csv"), "risk,risk_calibrated_p1\n0.3,x\n")
        self.assert_refused(["apply", "--interval", path, self.path("c.csv")], USAGE,
                            "already has a column named 'risk_calibrated_p1'", "--as")

    def test_cross_form_refuses_fractional_weights(self):
        write(self.path("w.csv"), "risk,missed,w\n" + "".join(f"{k / 40},{k % 2},{1.5 if k == 3 else 1}\n"
                                                              for k in range(40)))
        self.assert_refused(["fit", "--map", "cross_venn_abers", "--score", "risk", "--label", "missed",
                             "--weight", "w", self.path("w.csv")], FIT, "whole-number weights", "--map venn_abers")

    def test_export_refuses_the_kinds_with_the_kind_named(self):
        for kind in ("venn_abers", "cross_venn_abers"):
            path = self.fit(kind)
            self.assert_refused(["export", "--sql", "sqlite", path], USAGE, "no SQL form for a " + kind + " map")
            self.assert_refused(["export", "--c", path], USAGE, "no C form for a " + kind + " map")

    def test_inspect_names_the_kind(self):
        for kind in ("venn_abers", "cross_venn_abers"):
            rc, out, err = run("inspect", self.fit(kind, "--no-reference"))
            self.assertEqual(rc, 0, err)
            self.assertIn(kind + " map (format plumb-map version 3", out)


class VennAbersVersions(VennAbers):
    def test_fold_average_of_venn_abers_maps_and_adjusted_maps_are_version_3(self):
        rc, out, err = run("cross-fit", "--map", "venn_abers", "--final", "folds", "--score", "risk", "--label",
                           "missed", self.path("h.csv"), "-o", self.path("f.json"))
        self.assertEqual(rc, 0, err)
        doc = self.load_json(self.path("f.json"))
        # cross-fit's chosen map carries the drift reference (version 5, which outranks 3).
        self.assertIn("drift_reference", doc)
        self.assertEqual((doc["kind"], doc["format_version"]), ("fold_average", 5))
        # An adjusted Venn-Abers map: both features, the higher number; the
        # interval's ends move by the same odds factor as the probability.
        path = self.fit("venn_abers", "--no-reference")
        rc, out, err = run("adjust", "-q", "--prior", "0.3", path, "-o", self.path("adj.json"))
        self.assertEqual(rc, 0, err)
        adj = self.load_json(self.path("adj.json"))
        self.assertEqual(adj["format_version"], 3)
        k = adj["odds_adjustment"]["factor"]
        rc, out, err = run("apply", "-q", "--interval", self.path("adj.json"), self.path("grid.csv"))
        self.assertEqual(rc, 0, err)
        params = adj["parameters"]
        for row, s in zip(read_rows(out, is_text=True)[1:], self.grid):
            p0, p1 = step_values(params, s, ("p0", "p1"))
            for got, p in ((float(row[3]), p0), (float(row[4]), p1)):
                self.assertAlmostEqual(got, k * p / (k * p + 1 - p), places=14)
            self.assertLessEqual(float(row[3]), float(row[2]))
            self.assertLessEqual(float(row[2]), float(row[4]))


class VennAbersReport(VennAbers):
    def widths_from_apply(self, path, data):
        rc, out, err = run("apply", "-q", "--interval", path, data)
        self.assertEqual(rc, 0, err)
        rows = read_rows(out, is_text=True)[1:]
        return [float(r[-1]) - float(r[-2]) for r in rows]

    @staticmethod
    def type1(values, q):
        """R's quantile(type = 1) (Hyndman and Fan 1996): the inverse of the
        empirical distribution function, x[ceil(n q)] of the sorted values."""
        import math
        v = sorted(values)
        return v[max(math.ceil(len(v) * q), 1) - 1]

    def test_report_shows_the_interval_width_in_text_json_and_markdown(self):
        for kind in ("venn_abers", "cross_venn_abers"):
            path = self.fit(kind)
            widths = self.widths_from_apply(path, self.path("h.csv"))
            mean = sum(widths) / len(widths)
            rc, out, err = run("report", "--label", "missed", "--map", path, "--bootstrap", "0",
                               "--json", self.path("r.json"), "--markdown", self.path("r.md"), self.path("h.csv"))
            self.assertEqual(rc, 0, err)
            got = self.load_json(self.path("r.json"))["scores"][0]["map"]["interval_width"]
            self.assertAlmostEqual(got["mean"], mean, places=12)
            self.assertAlmostEqual(got["median"], self.type1(widths, 0.5), places=15)
            self.assertAlmostEqual(got["p90"], self.type1(widths, 0.9), places=15)
            with open(os.path.join(SOURCE_DIR, "docs", "report.schema.json")) as f:
                validator = jsonschema.Draft202012Validator(json.load(f))
            self.assertEqual([e.message for e in validator.iter_errors(self.load_json(self.path("r.json")))], [])
            self.assertIn("interval width, mean", out)
            self.assertIn("median | 90%", out)
            with open(self.path("r.md")) as f:
                md = f.read()
            self.assertIn("interval width p1 - p0 (Venn-Abers), 90th percentile", md)
        # A map without an interval has no such row or key.
        rc, out, err = run("report", "--label", "missed", "--map", self.fit("isotonic"), "--bootstrap", "0",
                           "--json", self.path("i.json"), self.path("h.csv"))
        self.assertEqual(rc, 0, err)
        self.assertNotIn("interval width", out)
        self.assertNotIn("interval_width", self.load_json(self.path("i.json"))["scores"][0]["map"])

    def test_report_from_a_tally_gives_the_same_widths(self):
        path = self.fit("venn_abers")
        rc, _, err = run("tally", "-q", "--score", "risk", "--label", "missed", self.path("h.csv"),
                         "-o", self.path("t.json"))
        self.assertEqual(rc, 0, err)
        figures = []
        for args in (("--label", "missed", self.path("h.csv")), ("--tally", self.path("t.json"))):
            rc, _, err = run("report", "-q", "--map", path, "--bootstrap", "0", "--json", self.path("r.json"), *args)
            self.assertEqual(rc, 0, err)
            figures.append(self.load_json(self.path("r.json"))["scores"][0]["map"]["interval_width"])
        self.assertEqual(figures[0]["median"], figures[1]["median"])
        self.assertEqual(figures[0]["p90"], figures[1]["p90"])
        self.assertAlmostEqual(figures[0]["mean"], figures[1]["mean"], places=14)


class VennAbersCrossFit(VennAbers):
    def test_named_kinds_are_candidates_and_auto_leaves_them_out(self):
        rc, out, err = run("cross-fit", "--map", "isotonic,venn_abers,cross_venn_abers", "--score", "risk",
                           "--label", "missed", "--json", self.path("e.json"), self.path("h.csv"))
        self.assertEqual(rc, 0, err)
        kinds = [c["kind"] for c in self.load_json(self.path("e.json"))["candidates"]]
        self.assertEqual(sorted(kinds), ["cross_venn_abers", "isotonic", "venn_abers"])
        rc, out, err = run("cross-fit", "--score", "risk", "--label", "missed", "--json", self.path("a.json"),
                           self.path("h.csv"))
        self.assertEqual(rc, 0, err)
        kinds = [c["kind"] for c in self.load_json(self.path("a.json"))["candidates"]]
        self.assertNotIn("venn_abers", kinds)
        self.assertNotIn("cross_venn_abers", kinds)
        self.assertIn("isotonic", kinds)


if __name__ == "__main__":
    unittest.main()
