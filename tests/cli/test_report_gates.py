"""plumb report: which column a --map reads (--map-score, the rule of apply's
--score), which columns a gate reads (the calibrated ones by default, a raw
column when named), lower-bound gates (--min), the refusals of a gate that
names an unknown column or metric or the wrong side, and the one stderr
line of failed gates (six significant digits, no stray separator).

Outside sources: the AUC is checked against the Mann-Whitney statistic
computed here from the rows (Hanley and McNeil 1982: ties count one half);
the Spiegelhalter p-value against its formula (Spiegelhalter 1986,
z = sum (y - p)(1 - 2p) / sqrt(sum (1 - 2p)^2 p (1 - p)), two-sided normal
p-value by math.erfc); the mapped column against plumb apply followed by a
report of the applied column."""
import json
import math
import os
import re
import unittest

import jsonschema  # Debian python3-jsonschema, installed by tests/run.sh

from plumbtest import SOURCE_DIR, Lcg, PlumbCase, run, sigmoid, write

THRESHOLD = 7
USAGE = 2


def scored_rows(n, seed=11):
    """An over-confident raw score (sigmoid(1.8 z)) with labels drawn from
    sigmoid(z): a Platt map fitted on part of it lowers its ECE a lot."""
    g = Lcg(seed)
    rows = []
    for _ in range(n):
        z = 4.0 * g.uniform() - 2.5
        y = 1 if g.uniform() < sigmoid(z) else 0
        rows.append((round(sigmoid(1.8 * z), 6), y))
    return rows


def mann_whitney_auc(rows):
    """P(score of a positive > score of a negative), ties one half."""
    pos = sorted(s for s, y in rows if y == 1)
    neg = sorted(s for s, y in rows if y == 0)
    wins = 0.0
    i = j = 0
    # For each positive, count negatives below it and ties (both lists sorted).
    for s in pos:
        while i < len(neg) and neg[i] < s:
            i += 1
        j = max(j, i)
        while j < len(neg) and neg[j] <= s:
            j += 1
        wins += i + 0.5 * (j - i)
    return wins / (len(pos) * len(neg))


def spiegelhalter_p(rows):
    num = sum((y - p) * (1 - 2 * p) for p, y in rows)
    den = math.sqrt(sum((1 - 2 * p) ** 2 * p * (1 - p) for p, _ in rows))
    return math.erfc(abs(num / den) / math.sqrt(2.0))


class ReportGates(PlumbCase):
    def setUp(self):
        super().setUp()
        self.rows = scored_rows(6000)
        write(self.path("fit.csv"), "risk,missed\n" + "".join(f"{s},{y}\n" for s, y in self.rows[:3000]))
        self.holdout = self.rows[3000:]
        # The holdout as the map's own column, and under another name (the
        # model's next version writes risk_v2) in the third position.
        write(self.path("holdout.csv"), "id,risk,missed\n" +
              "".join(f"{i},{s},{y}\n" for i, (s, y) in enumerate(self.holdout)))
        write(self.path("v2.csv"), "id,missed,risk_v2\n" +
              "".join(f"{i},{y},{s}\n" for i, (s, y) in enumerate(self.holdout)))
        self.map = self.path("late.map.json")
        run("fit", "--map", "platt", "--score", "risk", "--label", "missed", self.path("fit.csv"), "-o", self.map,
            "-q", check=True)
        with open(os.path.join(SOURCE_DIR, "docs", "report.schema.json")) as f:
            self.validator = jsonschema.Draft202012Validator(json.load(f))

    def report(self, data, *args, code=0):
        rc, out, err = run("report", "--label", "missed", "--bootstrap", "0", self.path(data), *args)
        self.assertEqual(rc, code, err)
        return out, err

    def json_report(self, data, *args, code=0):
        path = self.path("r.json")
        _, err = self.report(data, "--json", path, "-q", *args, code=code)
        with open(path) as f:
            doc = json.load(f)
        self.assertEqual([e.message for e in self.validator.iter_errors(doc)], [])
        return doc, err

    def columns(self, doc):
        return {s["name"]: s for s in doc["scores"]}

    def test_a_tally_report_gates_the_mapped_column_as_the_rows_report_does(self):
        # The tally path (cells) and the rows path choose the gated columns by
        # one rule: unnamed gates read the --map column, COL: names another.
        tally = self.path("h.tally.json")
        run("tally", "--score", "risk", "--label", "missed", self.path("holdout.csv"), "-o", tally, "-q", check=True)
        for source in (("holdout.csv",), ("--tally", tally)):
            path = self.path("t.json")
            args = ["report", "--score", "risk", "--map", self.map, "--bootstrap", "0", "--json", path, "-q",
                    "--max", "ece=1e-9", "--max", "risk:mcb=1"]
            args += ["--label", "missed", self.path(source[0])] if len(source) == 1 else list(source)
            rc, _, err = run(*args)
            self.assertEqual(rc, 7, err)
            with open(path) as f:
                doc = json.load(f)
            self.assertEqual([e.message for e in self.validator.iter_errors(doc)], [])
            self.assertEqual([(g["column"], g["metric"], g["exceeded"]) for g in doc["gates"]],
                             [("risk via late.map.json", "ece", True), ("risk", "mcb", False)], source)
            self.assertEqual(doc["scores"][1]["map"], {"file": self.map, "kind": "platt"})
            self.assertEqual(doc["scores"][1]["column"], "risk")

    # -- item: --map reads another column with --map-score ------------------

    def test_map_score_points_the_map_at_another_column(self):
        # The reference: apply the map to risk_v2 (apply --score), then report the applied column.
        applied = self.path("applied.csv")
        run("apply", self.map, self.path("v2.csv"), "--score", "risk_v2", "--as", "p", "-o", applied, "-q",
            check=True)
        rc, _, err = run("report", "--label", "missed", "--score", "p", "--bootstrap", "0", "--json",
                         self.path("ref.json"), "-q", applied)
        self.assertEqual(rc, 0, err)
        with open(self.path("ref.json")) as f:
            ref = json.load(f)["scores"][0]
        for spec in ("risk_v2", "3"):  # a name or a 1-based index, as apply's --score
            doc, _ = self.json_report("v2.csv", "--map", self.map, "--map-score", spec)
            self.assertEqual([s["name"] for s in doc["scores"]], ["risk_v2 via late.map.json"])
            got = doc["scores"][0]
            # Report format 2: the column the map read, and the map in its own member.
            self.assertEqual(got["column"], "risk_v2")
            self.assertEqual(got["map"]["file"], self.map)
            for key in ("brier", "log_loss", "auc", "mean_forecast"):
                self.assertAlmostEqual(got[key], ref[key], delta=1e-15, msg=key)
        # The raw column beside it is asked for with --score, as before.
        doc, _ = self.json_report("v2.csv", "--score", "risk_v2", "--map", self.map, "--map-score", "risk_v2")
        self.assertEqual([s["name"] for s in doc["scores"]], ["risk_v2", "risk_v2 via late.map.json"])

    def test_existing_map_command_lines_keep_their_meaning(self):
        doc, _ = self.json_report("holdout.csv", "--score", "risk", "--map", self.map)
        self.assertEqual([s["name"] for s in doc["scores"]], ["risk", "risk via late.map.json"])

    def test_map_score_refusals(self):
        # One per --map, or none.
        rc, _, err = run("report", "--label", "missed", "--map", self.map, "--map", self.map, "--map-score",
                         "risk_v2", self.path("v2.csv"))
        self.assertEqual(rc, USAGE, err)
        self.assertIn("one --map-score per --map", err)
        # The map's own column is not there: the hint names --map-score, an option report has.
        rc, _, err = run("report", "--label", "missed", "--map", self.map, self.path("v2.csv"))
        self.assertEqual(rc, 3, err)
        self.assertIn("'risk'", err)
        self.assertIn("--map-score", err)
        rc, help_text, _ = run("report", "--help")
        self.assertIn("--map-score", help_text)

    # -- item: which columns a gate reads -----------------------------------

    def test_unnamed_gate_reads_the_mapped_column_only(self):
        doc, _ = self.json_report("holdout.csv", "--score", "risk", "--map", self.map)
        cols = self.columns(doc)
        raw = cols["risk"]["calibration_error"]["equal_width"]["ece"]
        mapped = cols["risk via late.map.json"]["calibration_error"]["equal_width"]["ece"]
        self.assertLess(mapped * 1.5, raw)  # the map helped: there is room for a limit between them
        limit = (mapped + raw) / 2
        # The raw column is over the limit, yet the gate passes: it reads what was calibrated.
        doc, _ = self.json_report("holdout.csv", "--score", "risk", "--map", self.map, "--max", f"ece={limit}")
        self.assertEqual([(g["column"], g["exceeded"]) for g in doc["gates"]], [("risk via late.map.json", False)])
        self.assertFalse(doc["any_gate_exceeded"])
        # Named, the raw column fails it.
        doc, err = self.json_report("holdout.csv", "--score", "risk", "--map", self.map, "--max", f"risk:ece={limit}",
                                    code=THRESHOLD)
        self.assertEqual([(g["column"], g["exceeded"]) for g in doc["gates"]], [("risk", True)])
        self.assertIn("risk: ece", err)
        # The mapped column by the --map FILE as given, and every column with '*'.
        doc, _ = self.json_report("holdout.csv", "--score", "risk", "--map", self.map, "--max",
                                  f"{self.map}:ece={limit}")
        self.assertEqual([g["column"] for g in doc["gates"]], ["risk via late.map.json"])
        doc, _ = self.json_report("holdout.csv", "--score", "risk", "--map", self.map, "--max", f"*:ece={limit}",
                                  code=THRESHOLD)
        self.assertEqual([(g["column"], g["exceeded"]) for g in doc["gates"]],
                         [("risk", True), ("risk via late.map.json", False)])
        # Without maps an unnamed gate reads every --score column, as before.
        doc, _ = self.json_report("holdout.csv", "--score", "risk", "--score", "risk", "--max", f"ece={limit}",
                                  code=THRESHOLD)
        self.assertEqual([g["column"] for g in doc["gates"]], ["risk", "risk"])

    def test_gate_naming_an_unknown_column_lists_the_columns(self):
        rc, _, err = run("report", "--label", "missed", "--score", "risk", "--map", self.map, "--max",
                         "risk_cal:ece=0.02", self.path("holdout.csv"))
        self.assertEqual(rc, USAGE, err)
        self.assertEqual(len(err.strip().splitlines()), 1, err)
        for name in ("'risk_cal'", "'risk'", "'risk via late.map.json'", "*"):
            self.assertIn(name, err)

    # -- item: lower-bound gates ---------------------------------------------

    def test_min_gates_read_auc_and_p_values(self):
        doc, _ = self.json_report("holdout.csv", "--score", "risk")
        s = doc["scores"][0]
        # Outside checks of the two figures the new gates read.
        self.assertAlmostEqual(s["auc"], mann_whitney_auc(self.holdout), delta=1e-12)
        self.assertAlmostEqual(s["spiegelhalter"]["p_value"], spiegelhalter_p(self.holdout), delta=1e-9)
        figures = {
            "auc": s["auc"],
            "hosmer_lemeshow_p": s["hosmer_lemeshow"]["p_value"],
            "spiegelhalter_p": s["spiegelhalter"]["p_value"],
            "slope": s["calibration_regression"]["slope"],
            "calibration_in_the_large": s["calibration_in_the_large"],
        }
        for metric, value in figures.items():
            below, above = value - abs(value) * 1e-3 - 1e-300, value + abs(value) * 1e-3 + 1e-300
            doc, _ = self.json_report("holdout.csv", "--score", "risk", "--min", f"{metric}={below}")
            self.assertEqual(len(doc["gates"]), 1)
            g = doc["gates"][0]
            self.assertEqual((g["metric"], g["bound"], g["exceeded"]), (metric, "min", False))
            self.assertEqual(g["value"], value)
            doc, err = self.json_report("holdout.csv", "--score", "risk", "--min", f"{metric}={above}",
                                        code=THRESHOLD)
            self.assertTrue(doc["gates"][0]["exceeded"], metric)
            self.assertIn(f"{metric} = ", err)
            self.assertIn("(--min)", err)
        # Two-sided figures take --max too; the raw score is over-confident, so its slope is below 1.
        self.assertLess(figures["slope"], 1.0)
        self.report("holdout.csv", "--score", "risk", "--max", "slope=1.0", "-q")
        self.report("holdout.csv", "--score", "risk", "--min", "slope=1.0", "-q", code=THRESHOLD)

    def test_min_gate_on_the_mapped_column_by_default(self):
        doc, _ = self.json_report("holdout.csv", "--score", "risk", "--map", self.map, "--min", "auc=0.5")
        self.assertEqual([(g["column"], g["bound"]) for g in doc["gates"]], [("risk via late.map.json", "min")])

    def test_gate_on_the_wrong_side_is_refused(self):
        for option, text, other in (("--max", "auc=0.7", "--min"), ("--min", "ece=0.02", "--max"),
                                    ("--max", "hosmer_lemeshow_p=0.05", "--min")):
            rc, _, err = run("report", "--label", "missed", "--score", "risk", option, text,
                             self.path("holdout.csv"))
            self.assertEqual(rc, USAGE, err)
            self.assertIn(f"{other} {text}", err)

    def test_unknown_metric_lists_the_names_of_its_side(self):
        rc, _, err = run("report", "--label", "missed", "--score", "risk", "--min", "sharpness=1",
                         self.path("holdout.csv"))
        self.assertEqual(rc, USAGE, err)
        for name in ("auc", "hosmer_lemeshow_p", "spiegelhalter_p", "slope", "calibration_in_the_large"):
            self.assertIn(name, err)
        self.assertNotIn("ece", err)
        rc, _, err = run("report", "--label", "missed", "--score", "risk", "--max", "sharpness=1",
                         self.path("holdout.csv"))
        self.assertEqual(rc, USAGE, err)
        for name in ("ece", "ece_mass", "mce", "l2_debiased", "brier", "log_loss", "mcb", "mcb_log", "slope"):
            self.assertIn(name, err)
        self.assertNotIn("auc", err)

    def test_older_gate_spellings_still_read(self):
        doc, _ = self.json_report("holdout.csv", "--score", "risk")
        s = doc["scores"][0]
        doc, _ = self.json_report("holdout.csv", "--score", "risk", "--max", "citl=1", "--max", "slope_gap=1",
                                  "--min", "hl_p=0")
        got = {g["metric"]: g["value"] for g in doc["gates"]}
        self.assertEqual(got["citl"], abs(s["calibration_in_the_large"]))
        self.assertEqual(got["slope_gap"], abs(1 - s["calibration_regression"]["slope"]))
        self.assertEqual(got["hosmer_lemeshow_p"], s["hosmer_lemeshow"]["p_value"])

    # -- item: the failed-gates line ------------------------------------------

    def test_failed_gates_line_has_six_digits_and_no_stray_separator(self):
        doc, err = self.json_report("holdout.csv", "--score", "risk", "--max", "ece=1e-9", "--max", "brier=1",
                                    "--min", "auc=0.999", code=THRESHOLD)
        s = doc["scores"][0]
        line = err.strip()
        self.assertEqual(len(line.splitlines()), 1, err)
        self.assertFalse(line.endswith(";"), line)
        self.assertIn("2 of 3 gates failed", line)
        ece = s["calibration_error"]["equal_width"]["ece"]
        parts = line.split(": ", 1)[1].split("; ")
        self.assertEqual(len(parts), 2, line)
        self.assertIn(f"risk: ece = {ece:.6g} > 1e-09 (--max)", line)
        self.assertIn(f"risk: auc = {s['auc']:.6g} < 0.999 (--min)", line)
        # Six significant digits, not the seventeen of a shortest round trip.
        self.assertNotEqual(f"{ece:.6g}", repr(ece))

    def test_text_and_markdown_gate_rows_show_the_side(self):
        md = self.path("r.md")
        out, _ = self.report("holdout.csv", "--score", "risk", "--min", "auc=0.5", "--max", "ece=0.5",
                             "--markdown", md)
        doc, _ = self.json_report("holdout.csv", "--score", "risk")
        auc = doc["scores"][0]["auc"]
        self.assertIn(f"{auc:.6g}", out)
        self.assertRegex(out, r"auc\s+" + re.escape(f"{auc:.6g}") + r"\s+>=\s+0\.5")
        # One failed of two: the count agrees with the total ("of 2 limits"), not with the failures.
        out, _ = self.report("holdout.csv", "--score", "risk", "--min", "auc=0.999", "--max", "ece=0.5",
                             code=THRESHOLD)
        self.assertNotRegex(out, r"\b1 of 2 limit\b")
        with open(md) as f:
            text = f.read()
        self.assertIn("at least 0.5", text)
        self.assertIn("at most 0.5", text)


if __name__ == "__main__":
    unittest.main()
