"""plumb tally, merge, fit --tally and report --tally.

The tally is checked against a direct count of the rows in Python (per
score: rows, weight of negatives, weight of positives), and every map and
report made from merged tallies against the same command on the rows
themselves: the issue asks for identical results, so equality is exact
(floats compared as parsed, which round-trips every double)."""
import json
import math
import os
import unittest
from collections import defaultdict

import jsonschema  # Debian python3-jsonschema, installed by tests/run.sh

from plumbtest import SOURCE_DIR, Lcg, PlumbCase, run, sigmoid, write

USAGE, ARTIFACT = 2, 4
KINDS = ("isotonic", "platt", "beta", "temperature", "histogram")
# Fields of an artifact that must differ between a fit on rows and a fit on
# a tally: the named input and its hash, and the hash over the document.
PER_SOURCE = ("source", "source_sha256")


def make_rows(n, seed, digits=3, weights=False):
    """(score, logit, label, weight) rows: an over-confident score with few
    digits, so that many rows share a score; weights are multiples of 1/4 so
    that every sum of them is exact in binary floating point."""
    g = Lcg(seed)
    rows = []
    for _ in range(n):
        z = 5.0 * g.uniform() - 3.0
        s = round(sigmoid(1.7 * z), digits)
        y = 1 if g.uniform() < sigmoid(z) else 0
        w = 0.25 * (1 + int(g.uniform() * 12)) if weights else 1.0
        rows.append((s, round(1.7 * z, 2), y, w))
    return rows


def write_rows(path, rows, weights=False):
    lines = ["risk,risk_logit,missed" + (",w" if weights else "")]
    for s, z, y, w in rows:
        lines.append(f"{s!r},{z!r},{y}" + (f",{w!r}" if weights else ""))
    write(path, "\n".join(lines) + "\n")


def without_source(artifact):
    doc = dict(artifact)
    doc.pop("integrity_sha256")
    doc["provenance"] = {k: v for k, v in doc["provenance"].items() if k not in PER_SOURCE}
    return doc


class TallyCase(PlumbCase):
    def tally(self, src, out, *extra):
        rc, _, err = run("tally", "--score", "risk", "--label", "missed", src, "-o", out, "-q", *extra)
        self.assertEqual(rc, 0, err)
        return self.load_json(out)

    def merge(self, out, *inputs):
        rc, _, err = run("merge", *inputs, "-o", out, "-q")
        self.assertEqual(rc, 0, err)
        with open(out) as f:
            return f.read()

    def shards(self, rows, k, weights=False, stem="part"):
        """Rows dealt to k shard files in a scattered order; returns the paths."""
        parts = [[] for _ in range(k)]
        g = Lcg(99)
        for r in rows:
            parts[int(g.uniform() * k)].append(r)
        paths = []
        for i, p in enumerate(parts):
            paths.append(self.path(f"{stem}{i}.csv"))
            write_rows(paths[-1], p, weights)
        return paths


class TallyContent(TallyCase):
    def test_tally_holds_the_per_score_sums_of_the_rows(self):
        rows = make_rows(2000, 3, weights=True)
        write_rows(self.path("all.csv"), rows, weights=True)
        t = self.tally(self.path("all.csv"), self.path("all.tally.json"), "--weight", "w")
        # Outside check: a direct count of the rows in Python.
        count, neg, pos = defaultdict(int), defaultdict(float), defaultdict(float)
        for s, _, y, w in rows:
            count[s] += 1
            (pos if y else neg)[s] += w
        scores = sorted(count)
        self.assertEqual(t["score"], scores)
        self.assertEqual(t["count"], [count[s] for s in scores])
        self.assertEqual(t["negative"], [neg[s] for s in scores])
        self.assertEqual(t["positive"], [pos[s] for s in scores])
        self.assertEqual(t["rows"], 2000)
        self.assertEqual(t["weight_total"], sum(r[3] for r in rows))
        self.assertEqual(t["positives"], sum(r[3] for r in rows if r[2]))
        self.assertFalse(t["unit_weights"])
        self.assertEqual(t["weight_column"], "w")
        self.assertEqual((t["score_min"], t["score_max"]), (scores[0], scores[-1]))
        self.assertEqual(t["sources"][0]["rows"], 2000)
        self.assertEqual(len(t["sources"][0]["sha256"]), 64)

    def test_real_tallies_match_the_schema(self):
        with open(os.path.join(SOURCE_DIR, "docs", "tally.schema.json")) as f:
            schema = json.load(f)
        jsonschema.Draft202012Validator.check_schema(schema)
        validator = jsonschema.Draft202012Validator(schema)
        rows = make_rows(300, 5, weights=True)
        write_rows(self.path("a.csv"), rows, weights=True)
        docs = [self.tally(self.path("a.csv"), self.path("a.json")),
                self.tally(self.path("a.csv"), self.path("w.json"), "--weight", "w"),
                self.tally(self.path("a.csv"), self.path("g.json"), "--logit-grid", "0.05")]
        self.merge(self.path("m.json"), self.path("a.json"), self.path("a.json"))
        docs.append(self.load_json(self.path("m.json")))
        for doc in docs:
            self.assertEqual([e.message for e in validator.iter_errors(doc)], [])
        # The schema is not vacuous: a tally with a negative weight fails it.
        bad = dict(docs[0], negative=[-1.0] + docs[0]["negative"][1:])
        self.assertNotEqual([e.message for e in validator.iter_errors(bad)], [])


class MergeExactness(TallyCase):
    def test_unweighted_merges_in_any_order_give_the_same_bytes_and_equal_the_whole(self):
        rows = make_rows(3000, 11)
        paths = self.shards(rows, 3)
        tallies = [self.path(f"t{i}.json") for i in range(3)]
        for p, t in zip(paths, tallies):
            self.tally(p, t)
        abc = self.merge(self.path("abc.json"), *tallies)
        cab = self.merge(self.path("cab.json"), tallies[2], tallies[0], tallies[1])
        self.merge(self.path("ab.json"), tallies[0], tallies[1])
        c_ab = self.merge(self.path("c_ab.json"), tallies[2], self.path("ab.json"))
        self.assertEqual(abc, cab)
        self.assertEqual(abc, c_ab)
        write_rows(self.path("all.csv"), rows)
        whole = self.tally(self.path("all.csv"), self.path("whole.json"))
        merged = json.loads(abc)
        for key in ("score", "count", "negative", "positive", "rows", "weight_total", "positives",
                    "score_min", "score_max", "unit_weights"):
            self.assertEqual(merged[key], whole[key], key)
        self.assertEqual(len(merged["sources"]), 3)
        self.assertEqual(sum(s["rows"] for s in merged["sources"]), 3000)

    def test_weighted_merge_with_exact_sums_is_order_free(self):
        rows = make_rows(2000, 12, weights=True)
        paths = self.shards(rows, 3, weights=True)
        tallies = [self.path(f"t{i}.json") for i in range(3)]
        for p, t in zip(paths, tallies):
            self.tally(p, t, "--weight", "w")
        self.assertEqual(self.merge(self.path("x.json"), *tallies),
                         self.merge(self.path("y.json"), *reversed(tallies)))


class FitFromTally(TallyCase):
    def check_fits(self, rows_file, tally_file, *row_args):
        for kind in KINDS:
            for extra in ((), ("--between", "step"), ("--bins", "7"), ("--beta-form", "shared"),
                          ("--platt-targets", "labels")):
                if kind == "beta" and "logit" in row_args:
                    continue
                if kind == "temperature" and "margin" in row_args:
                    continue
                rc, from_rows, err = run("fit", "--map", kind, *row_args, rows_file, "--no-timestamp", "-q", *extra)
                self.assertEqual(rc, 0, err)
                rc, from_tally, err = run("fit", "--map", kind, "--tally", tally_file, "--no-timestamp", "-q",
                                          *extra)
                self.assertEqual(rc, 0, err)
                a, b = json.loads(from_rows), json.loads(from_tally)
                self.assertEqual(b["provenance"]["source"], tally_file)
                self.assertNotEqual(a["provenance"]["source_sha256"], b["provenance"]["source_sha256"])
                # Parameters, knots and diagnostics are identical, and so is
                # every other byte once the per-source fields are set equal.
                self.assertEqual(a["parameters"], b["parameters"], kind)
                self.assertEqual(a["fit"], b["fit"], kind)
                self.assertEqual(without_source(a), without_source(b), kind)
                b["provenance"]["source"] = a["provenance"]["source"]
                b["provenance"]["source_sha256"] = a["provenance"]["source_sha256"]
                self.assertEqual(json.dumps(without_source(a)), json.dumps(without_source(b)))

    def test_every_map_from_merged_tallies_equals_the_map_from_the_rows(self):
        rows = make_rows(3000, 21)
        paths = self.shards(rows, 4)
        tallies = []
        for i, p in enumerate(paths):
            tallies.append(self.path(f"t{i}.json"))
            self.tally(p, tallies[-1])
        self.merge(self.path("merged.json"), *tallies)
        write_rows(self.path("all.csv"), rows)
        self.check_fits(self.path("all.csv"), self.path("merged.json"), "--score", "risk", "--label", "missed")

    def test_weighted_and_logit_tallies_fit_identically(self):
        rows = make_rows(2000, 22, weights=True)
        paths = self.shards(rows, 3, weights=True)
        tallies = []
        for i, p in enumerate(paths):
            tallies.append(self.path(f"w{i}.json"))
            rc, _, err = run("tally", "--score", "risk_logit", "--scale", "logit", "--label", "missed",
                             "--weight", "w", p, "-o", tallies[-1], "-q")
            self.assertEqual(rc, 0, err)
        self.merge(self.path("merged.json"), *tallies)
        write_rows(self.path("all.csv"), rows, weights=True)
        self.check_fits(self.path("all.csv"), self.path("merged.json"), "--score", "risk_logit", "--scale", "logit",
                        "--label", "missed", "--weight", "w")


class ReportFromTally(TallyCase):
    def report(self, *args):
        rc, out, err = run("report", "--bootstrap", "0", "--json", self.path("r.json"), *args)
        self.assertEqual(rc, 0, err)
        doc = self.load_json(self.path("r.json"))
        doc.pop("source", None)
        return out, doc

    def test_report_on_a_tally_equals_the_report_on_the_rows(self):
        rows = make_rows(3000, 31)
        paths = self.shards(rows, 3)
        tallies = []
        for i, p in enumerate(paths):
            tallies.append(self.path(f"t{i}.json"))
            self.tally(p, tallies[-1])
        self.merge(self.path("m.json"), *tallies)
        rc, _, err = run("fit", "--map", "platt", "--tally", self.path("m.json"), "-o", self.path("p.map.json"), "-q")
        self.assertEqual(rc, 0, err)
        # Rows in score order, negatives first: the order the tally stands for,
        # so every sum is added in the same order and the bytes agree.
        ordered = sorted(rows, key=lambda r: (r[0], r[2]))
        write_rows(self.path("ordered.csv"), ordered)
        write_rows(self.path("scattered.csv"), rows)
        text_t, json_t = self.report("--score", "risk", "--map", self.path("p.map.json"), "--tally", self.path("m.json"))
        text_o, json_o = self.report("--score", "risk", "--map", self.path("p.map.json"), "--label", "missed",
                                     self.path("ordered.csv"))
        self.assertEqual(json_t, json_o)
        self.assertEqual(text_t.replace(self.path("m.json"), "X"), text_o.replace(self.path("ordered.csv"), "X"))
        # The bootstrap resamples the same rows in the same order: identical too.
        rc, a, err = run("report", "--score", "risk", "--tally", self.path("m.json"), "--bootstrap", "50")
        self.assertEqual(rc, 0, err)
        rc, b, err = run("report", "--score", "risk", "--label", "missed", self.path("ordered.csv"), "--bootstrap", "50")
        self.assertEqual(rc, 0, err)
        self.assertEqual(a.replace(self.path("m.json"), "X"), b.replace(self.path("ordered.csv"), "X"))
        # On rows in another order the sums are added in another order: equal
        # to rounding (1e-12 relative), and the printed report is the same.
        text_s, json_s = self.report("--score", "risk", "--label", "missed", self.path("scattered.csv"))
        text_t1, json_t1 = self.report("--score", "risk", "--tally", self.path("m.json"))
        self.assertEqual(text_t1.replace(self.path("m.json"), "X"), text_s.replace(self.path("scattered.csv"), "X"))
        self.assert_close(json_t1, json_s)

    def test_report_on_a_weighted_tally_equals_the_report_on_the_weighted_rows(self):
        # Weights are multiples of 1/4 (make_rows), so every sum of weights and
        # of squared weights is exact in any order; the figures then agree to
        # rounding (1e-12 relative), the Kish effective sizes of the table and
        # the debiased l2 included, since the tally keeps the squared weights.
        rows = make_rows(3000, 37, weights=True)
        paths = self.shards(rows, 2, weights=True)
        tallies = []
        for i, p in enumerate(paths):
            tallies.append(self.path(f"wt{i}.json"))
            self.assertIn("weight_sq", self.tally(p, tallies[-1], "--weight", "w"))
        self.merge(self.path("wm.json"), *tallies)
        self.assertEqual(self.load_json(self.path("wm.json"))["format_version"], 2)
        write_rows(self.path("w.csv"), rows, weights=True)
        text_t, json_t = self.report("--score", "risk", "--tally", self.path("wm.json"), "--binning", "mass")
        text_r, json_r = self.report("--score", "risk", "--label", "missed", "--weight", "w", self.path("w.csv"),
                                     "--binning", "mass")
        self.assertEqual(json_t["weight_column"], "w")
        self.assert_close(json_t, json_r)
        self.assertEqual(text_t.replace(self.path("wm.json"), "X"), text_r.replace(self.path("w.csv"), "X"))

    def assert_close(self, a, b, where="report"):
        if isinstance(a, dict):
            self.assertEqual(sorted(a), sorted(b), where)
            for k in a:
                self.assert_close(a[k], b[k], f"{where}.{k}")
        elif isinstance(a, list):
            self.assertEqual(len(a), len(b), where)
            for i, (x, y) in enumerate(zip(a, b)):
                self.assert_close(x, y, f"{where}[{i}]")
        elif isinstance(a, float) and isinstance(b, float) and math.isfinite(a):
            self.assertLessEqual(abs(a - b), 1e-12 * max(1.0, abs(a)), where)
        else:
            self.assertEqual(a, b, where)


class LogitGrid(TallyCase):
    """The bound of docs/tally-format.md: rounding log-odds to a multiple of
    H moves a probability by at most H/8 (the logistic slope p(1-p) is at
    most 1/4), the mean forecast by H/8, the Brier score by H/4 and the log
    loss by H/2 nats (d ln(p)/dz = 1 - p lies in [0, 1])."""

    STEP = 0.25

    def rows_with_extremes(self):
        rows = make_rows(1500, 51, digits=9)
        extremes = [5e-324, 1e-300, 1e-17, 1e-9, 0.0, 1.0, 0.5, 1 - 2**-53, 1 - 1e-16 * 3, 0.999999999]
        for k, p in enumerate(extremes):
            rows.append((p, 0.0, k % 2, 1.0))
            rows.append((p, 0.0, 1 - k % 2, 1.0))
        return rows

    @staticmethod
    def grid_point(p, step):
        # The rounding as the doc states it, computed here independently.
        if p <= 0.0 or p >= 1.0:
            return p
        z = math.log(p) - math.log1p(-p)
        return sigmoid(step * round(z / step))

    def test_every_tallied_score_lies_within_step_over_8_of_its_rows(self):
        rows = self.rows_with_extremes()
        write_rows(self.path("g.csv"), rows)
        t = self.tally(self.path("g.csv"), self.path("g.json"), "--logit-grid", str(self.STEP))
        self.assertEqual(t["grid"], {"space": "logit", "step": self.STEP})
        self.assertEqual(t["rows"], len(rows))
        tallied = t["score"]
        for s, _, _, _ in rows:
            q = self.grid_point(s, self.STEP)
            # The row's grid point is in the tally (to the last bit or two of
            # the conversions) ...
            i = min(range(len(tallied)), key=lambda k: abs(tallied[k] - q))
            self.assertLessEqual(abs(tallied[i] - q), 4e-16 * max(q, 1e-300) + 1e-300, s)
            # ... and within H/8 of the row's score.
            self.assertLessEqual(abs(tallied[i] - s), self.STEP / 8 + 1e-15, s)
        self.assertIn(0.0, tallied)
        self.assertIn(1.0, tallied)
        self.assertLess(len(tallied), len({r[0] for r in rows}) / 5)

    def test_report_figures_move_within_the_derived_bounds(self):
        rows = self.rows_with_extremes()
        write_rows(self.path("g.csv"), rows)
        self.tally(self.path("g.csv"), self.path("g.json"), "--logit-grid", str(self.STEP))

        def overall(*args):
            rc, _, err = run("report", "--score", "risk", "--bootstrap", "0", "-q", "--json", self.path("r.json"), *args)
            self.assertEqual(rc, 0, err)
            return self.load_json(self.path("r.json"))["scores"][0]

        exact = overall("--label", "missed", self.path("g.csv"))
        grid = overall("--tally", self.path("g.json"))
        h = self.STEP
        self.assertLessEqual(abs(grid["mean_forecast"] - exact["mean_forecast"]), h / 8)
        self.assertLessEqual(abs(grid["brier"] - exact["brier"]), h / 4)
        self.assertLessEqual(abs(grid["log_loss"] - exact["log_loss"]), h / 2)
        # The bound is not vacuous here: the grid does move the figures.
        self.assertNotEqual(grid["brier"], exact["brier"])

    def test_margin_scores_have_no_grid(self):
        write_rows(self.path("g.csv"), make_rows(50, 52))
        self.assert_refused(["tally", "--score", "risk_logit", "--scale", "margin", "--label", "missed",
                             "--logit-grid", "0.1", self.path("g.csv")], USAGE, "--logit-grid needs scores")


class Refusals(TallyCase):
    def setUp(self):
        super().setUp()
        write_rows(self.path("a.csv"), make_rows(200, 41, weights=True), weights=True)
        self.tally(self.path("a.csv"), self.path("a.json"))

    def test_merge_refuses_tallies_of_different_columns_rules_or_grids(self):
        rc, _, err = run("tally", "--score", "risk_logit", "--scale", "logit", "--label", "missed",
                         self.path("a.csv"), "-o", self.path("z.json"), "-q")
        self.assertEqual(rc, 0, err)
        self.assert_refused(["merge", self.path("a.json"), self.path("z.json"), "-o", self.path("m.json")], USAGE,
                            "differ in score column 'risk' against 'risk_logit'", output=self.path("m.json"))
        self.tally(self.path("a.csv"), self.path("g.json"), "--logit-grid", "0.01")
        self.assert_refused(["merge", self.path("a.json"), self.path("g.json")], USAGE, "exact scores against a logit grid")
        self.tally(self.path("a.csv"), self.path("p.json"), "--positive", "1")
        self.assert_refused(["merge", self.path("a.json"), self.path("p.json")], USAGE, "differ in label rule")
        self.tally(self.path("a.csv"), self.path("w.json"), "--weight", "w")
        self.assert_refused(["merge", self.path("a.json"), self.path("w.json")], USAGE, "differ in weight column")

    def test_cross_fit_fit_and_report_say_what_a_tally_cannot_do(self):
        self.assert_refused(["cross-fit", "--tally", self.path("a.json")], USAGE, "cross-fit cannot read a tally",
                            "plumb fit --map KIND --tally")
        self.assert_refused(["fit", "--map", "platt", "--tally", self.path("a.json"), "--score", "risk"], USAGE,
                            "--score cannot be used with --tally")
        self.assert_refused(["report", "--score", "risk", "--tally", self.path("a.json"), "--by", "x"], USAGE,
                            "--by cannot be used with --tally")
        self.tally(self.path("a.csv"), self.path("w.json"), "--weight", "w")
        self.assert_refused(["report", "--score", "risk", "--tally", self.path("w.json")], USAGE,
                            "a tally of weighted rows has summed their weights", "--bootstrap 0")
        # Format 1 kept no squared weights: the effective sample sizes cannot be had.
        old = dict(self.load_json(self.path("w.json")), format_version=1)
        del old["weight_sq"]
        write(self.path("w1.json"), json.dumps(old))
        self.assert_refused(["report", "--score", "risk", "--tally", self.path("w1.json"), "--bootstrap", "0"],
                            ARTIFACT, "lacks the sums of squared weights", "format version 2")
        self.assert_refused(["report", "--score", "risk_cal", "--tally", self.path("a.json")], USAGE,
                            "holds column 'risk'")
        self.assert_refused(["fit", "--map", "platt", "a.csv"], USAGE, "--score and --label (or --tally FILE)")

    def test_a_damaged_tally_is_refused_naming_the_field(self):
        doc = self.load_json(self.path("a.json"))
        cases = [
            (dict(doc, format_version=3), "format version 3"),
            (dict(doc, weight_sq=[1.0] * len(doc["score"])), "field 'weight_sq' is given for a tally without a weight column"),
            (dict(doc, score=[doc["score"][1]] + doc["score"][1:]), "field 'score[1]' does not lie above"),
            (dict(doc, positive=[-1.0] + doc["positive"][1:]), "field 'positive[0]' is negative"),
            (dict(doc, count=doc["count"][1:]), "differ in length"),
            (dict(doc, score=[1.5] + doc["score"][1:]), "field 'score[0]' is not a valid score"),
            (dict(doc, rows=doc["rows"] + 1), "field 'weight_total' differs from rows"),
            (dict(doc, grid={"space": "logit", "step": 0}), "field 'grid.step' is not positive"),
            ({k: v for k, v in doc.items() if k != "label_column"}, "field 'label_column' is missing"),
            (dict(doc, format="plumb-map"), "not a plumb tally"),
            (dict(doc, negative=[doc["negative"][0] - 0.5] + doc["negative"][1:],
                  positive=[doc["positive"][0] + 0.5] + doc["positive"][1:]), "is not a whole number"),
        ]
        for bad, fragment in cases:
            write(self.path("bad.json"), json.dumps(bad))
            self.assert_refused(["fit", "--map", "platt", "--tally", self.path("bad.json")], ARTIFACT, fragment,
                                "bad.json")
        write(self.path("cut.json"), json.dumps(doc)[:200])
        self.assert_refused(["merge", self.path("a.json"), self.path("cut.json")], ARTIFACT, "ends early")


if __name__ == "__main__":
    unittest.main()
