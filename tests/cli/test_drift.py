"""plumb drift: the fit-time reference in the artifact (format version 5),
the figures with and without labels, gates, refusals, and the month of
nightly demo data (examples/make_nights.py) where one depot drifts from
night 18: the PSI gate (common practice: a PSI above 0.25 is a large shift)
must flag that depot on nights 18 to 30 and nothing on nights 1 to 17."""
import csv
import json
import os
import subprocess
import sys
import unittest

import jsonschema  # Debian python3-jsonschema, installed by tests/run.sh

from plumbtest import SOURCE_DIR, PlumbCase, run, simulated_holdout, write

USAGE, INPUT, GATE = 2, 3, 7
HOLDOUT = os.path.join(SOURCE_DIR, "data", "holdout.csv")
TONIGHT = os.path.join(SOURCE_DIR, "data", "tonight.csv")


def write_scores(path, rows, with_label=True):
    lines = ["id,risk" + (",missed" if with_label else "")]
    for i, (s, y) in enumerate(rows):
        lines.append(f"{i},{s}" + (f",{y}" if with_label else ""))
    write(path, "\n".join(lines) + "\n")


class DriftCommand(PlumbCase):
    def fit(self, *extra, source=HOLDOUT):
        path = self.path("late.map.json")
        run("fit", "--map", "isotonic", "--score", "risk", "--label", "missed", "-q", "--no-timestamp",
            "-o", path, *extra, source, check=True)
        return path

    def test_history_gets_drifts_json_and_report_trends_skip_it(self):
        path = self.fit()
        history = self.path("nightly.jsonl")
        rc, _, err = run("drift", "--map", path, "-q", "--json", self.path("d.json"), "--history", history,
                         "--history-date", "2026-11-18", TONIGHT)
        self.assertEqual(rc, 0, err)
        with open(history) as f:
            lines = f.read().splitlines()
        self.assertEqual(len(lines), 1)
        line = json.loads(lines[0])
        self.assertEqual((line["format"], line["command"], line["date"]), ("plumb-history", "drift", "2026-11-18"))
        self.assertEqual(line["drift"], self.load_json(self.path("d.json")))
        # A report run after it reads the history (drift lines are not part of its trend).
        rc, out, err = run("report", "--map", path, "--label", "missed", "--bootstrap", "0", "--history", history,
                           "--history-date", "2026-11-19", "--json", self.path("r.json"), "-q", HOLDOUT)
        self.assertEqual(rc, 0, err)
        with open(history) as f:
            self.assertEqual([json.loads(l)["command"] for l in f.read().splitlines()], ["drift", "report"])
        # A torn last line is refused, located, and the history is left as it was.
        with open(history, "a") as f:
            f.write('{"format": "plumb-history"')
        with open(history, "rb") as f:
            before = f.read()
        rc, _, err = run("drift", "--map", path, "-q", "--history", history, TONIGHT)
        self.assertEqual(rc, 3, err)
        self.assertIn("nightly.jsonl:3:", err)
        self.assertIn("--torn-history cut", err)
        with open(history, "rb") as f:
            self.assertEqual(f.read(), before)
        rc, _, err = run("drift", "--map", path, "-q", "--history-date", "2026-11-20", TONIGHT)
        self.assertEqual(rc, 2)
        self.assertIn("--history-date needs --history", err)

    def test_fit_writes_a_version_5_reference_that_the_schema_accepts(self):
        doc = self.load_json(self.fit())
        self.assertEqual(doc["format_version"], 5)
        ref = doc["drift_reference"]
        # The reference counts every fit row once, positives as the provenance says.
        rows = sum(ref["count"]) + ref["at_zero"][0] + ref["at_one"][0]
        positives = sum(ref["positive"]) + ref["at_zero"][1] + ref["at_one"][1]
        self.assertEqual(rows, doc["provenance"]["rows"])
        self.assertEqual(positives, doc["provenance"]["positives"])
        self.assertEqual(ref["index"], sorted(set(ref["index"])))
        with open(os.path.join(SOURCE_DIR, "docs", "artifact.schema.json")) as f:
            schema = json.load(f)
        validator = jsonschema.Draft202012Validator(schema)
        self.assertEqual(list(validator.iter_errors(doc)), [])
        doc["format_version"] = 2
        self.assertTrue(list(validator.iter_errors(doc)), "the schema accepts a reference in version 2")

    def test_an_adjusted_map_keeps_its_reference_at_version_5(self):
        path = self.fit()
        adjusted = self.path("adjusted.map.json")
        run("adjust", "-q", path, "--prior", "0.3", "-o", adjusted, check=True)
        before, after = self.load_json(path), self.load_json(adjusted)
        # The highest number among the features present: 5, not the adjustment's 2.
        self.assertEqual(after["format_version"], 5)
        self.assertIn("odds_adjustment", after)
        self.assertEqual(after["drift_reference"], before["drift_reference"])
        # drift reads the adjusted map's probabilities: its expected rate moves towards 0.3.
        rc, out, err = run("drift", "--map", adjusted, "--json", "-", HOLDOUT)
        self.assertEqual(rc, 0, err)
        mean = json.loads(out)["mean_forecast"]
        self.assertAlmostEqual(mean["reference"], mean["tonight"])
        self.assertGreater(mean["reference"], 0.25)

    def test_without_a_reference_drift_names_the_option(self):
        path = self.fit("--no-reference")
        self.assertEqual(self.load_json(path)["format_version"], 1)
        self.assertNotIn("drift_reference", self.load_json(path))
        line = self.assert_refused(["drift", "--map", path, HOLDOUT], INPUT, path, "--reference FILE",
                                   "--reference-tally FILE")
        self.assertIn("no reference", line)
        # Given rows as the reference, it runs.
        rc, out, err = run("drift", "--map", path, "--reference", HOLDOUT, HOLDOUT)
        self.assertEqual(rc, 0, err)

    def test_the_fit_rows_against_their_own_reference_show_no_drift(self):
        path = self.fit()
        js = self.path("drift.json")
        rc, out, err = run("drift", "--map", path, "--label", "missed", "--json", js, "--bootstrap", "50", HOLDOUT)
        self.assertEqual(rc, 0, err)
        d = self.load_json(js)
        self.assertEqual(d["rows"], 20000)
        self.assertEqual(d["reference"]["rows"], 20000)
        self.assertEqual(d["reference"]["kind"], "artifact")
        self.assertEqual(d["psi"], 0.0)
        self.assertEqual(d["ks"]["statistic"], 0.0)
        self.assertEqual(d["outside_rows"], 0)
        for key in ("observed_rate", "log_loss", "brier", "ece", "mcb"):
            self.assertEqual(d[key]["change"], 0.0, key)
            lo, hi = d[key]["interval"]
            self.assertLessEqual(lo, 0.0, key)
            self.assertGreaterEqual(hi, 0.0, key)
        # The observed rate is the provenance's (3,402 of 20,000 in data/holdout.csv).
        self.assertEqual(d["observed_rate"]["reference"], 3402 / 20000)
        self.assertEqual(d["refit"]["verdict"], "not_warranted")
        self.assertIn("common practice", out)
        self.assertIn("Refit: not warranted", out)

    def test_shifted_scores_fail_the_psi_gate_with_exit_7(self):
        rows = simulated_holdout(4000, seed=3)
        write_scores(self.path("fit.csv"), rows)
        path = self.fit(source=self.path("fit.csv"))
        shifted = [(round(min(0.999999, s * 0.6 + 0.4), 6), y) for s, y in rows[:1500]]
        write_scores(self.path("tonight.csv"), shifted, with_label=False)
        js = self.path("d.json")
        rc, out, err = run("drift", "--map", path, "--max", "psi=0.25", "--min", "ks_p=0.01", "--json", js,
                           self.path("tonight.csv"))
        self.assertEqual(rc, GATE, err)
        self.assertIn("plumb drift: 2 of 2 gates failed: psi = ", err)
        d = self.load_json(js)
        self.assertGreater(d["psi"], 0.25)
        self.assertFalse(d["labelled"])
        self.assertIsNone(d["log_loss"])
        self.assertEqual(d["refit"]["verdict"], "not_judged")
        self.assertEqual([g["passed"] for g in d["gates"]], [False, False])
        # A labelled figure without --label fails its gate (it cannot be computed).
        rc, _, err = run("drift", "-q", "--map", path, "--max", "log_loss_change=1", self.path("tonight.csv"))
        self.assertEqual(rc, GATE)
        self.assertIn("could not be computed", err)

    def test_gates_and_options_are_refused_with_a_hint(self):
        path = self.fit()
        self.assert_refused(["drift", "--map", path, "--max", "ks_p=0.05", HOLDOUT], USAGE, "--max cannot bound ks_p",
                            "--min ks_p=0.05")
        self.assert_refused(["drift", "--map", path, "--max", "risk:psi=0.2", HOLDOUT], USAGE, "no column")
        self.assert_refused(["drift", "--map", path, "--max", "ece=0.2", HOLDOUT], USAGE, "unknown metric",
                            "psi")
        self.assert_refused(["drift", "--map", path, "--reference", HOLDOUT, "--reference-tally", "t.json", HOLDOUT],
                            USAGE, "--reference and --reference-tally")

    def test_a_bad_score_is_located(self):
        path = self.fit()
        write(self.path("bad.csv"), "id,risk\n1,0.2\n2,0.3\n3,high\n")
        self.assert_refused(["drift", "--map", path, self.path("bad.csv")], INPUT, "bad.csv:4:2", "'risk'", "high")
        write(self.path("gap.csv"), "id,risk\n1,0.2\n2,\n")
        self.assert_refused(["drift", "--map", path, self.path("gap.csv")], INPUT, "gap.csv:3:2", "missing",
                            "--missing skip")
        rc, out, err = run("drift", "--map", path, "--missing", "skip", "--json", "-", self.path("gap.csv"))
        self.assertEqual(rc, 0, err)
        self.assertEqual(json.loads(out)["rows_skipped"], 1)
        write(self.path("ragged.csv"), "id,risk\n1,0.2\n2,0.3,9\n")
        self.assert_refused(["drift", "--map", path, self.path("ragged.csv")], INPUT, "ragged.csv:3")

    def test_a_reference_tally_gives_the_artifacts_figures(self):
        path = self.fit()
        tally = self.path("holdout.tally.json")
        run("tally", "--score", "risk", "--label", "missed", "-q", "-o", tally, HOLDOUT, check=True)
        write_scores(self.path("tonight.csv"), simulated_holdout(3000, seed=9), with_label=False)
        outs = []
        for extra in ([], ["--reference-tally", tally]):
            rc, out, err = run("drift", "--map", path, "--json", "-", *extra, self.path("tonight.csv"))
            self.assertEqual(rc, 0, err)
            outs.append(json.loads(out))
        for key in ("psi", "ks", "mean_forecast", "psi_bins"):
            self.assertEqual(outs[0][key], outs[1][key], key)


class NightlyDemo(PlumbCase):
    def test_the_drifting_depot_is_flagged_from_night_18_and_nothing_before(self):
        nights = self.path("nights")
        subprocess.run([sys.executable, os.path.join(SOURCE_DIR, "examples", "make_nights.py"), "--out", nights],
                       check=True, capture_output=True)
        path = self.path("late.map.json")
        run("fit", "--map", "isotonic", "--score", "risk", "--label", "missed", "-q", "-o", path, HOLDOUT, check=True)
        with open(HOLDOUT, newline="") as f:
            holdout = list(csv.reader(f))
        depots = sorted({r[1] for r in holdout[1:]})
        self.assertEqual(len(depots), 7)
        refs = {}
        for d in depots:
            refs[d] = self.path(f"ref-{d}.csv")
            with open(refs[d], "w", newline="") as f:
                csv.writer(f, lineterminator="\n").writerows([holdout[0]] + [r for r in holdout[1:] if r[1] == d])
        flagged = {}
        for night in range(1, 31):
            with open(os.path.join(nights, f"night-{night:02d}.csv"), newline="") as f:
                rows = list(csv.reader(f))
            for d in depots:
                part = self.path("part.csv")
                with open(part, "w", newline="") as f:
                    csv.writer(f, lineterminator="\n").writerows([rows[0]] + [r for r in rows[1:] if r[1] == d])
                rc, out, err = run("drift", "--map", path, "--reference", refs[d], "--max", "psi=0.25",
                                   "--json", "-", part)
                self.assertIn(rc, (0, GATE), err)
                flagged[(night, d)] = (rc == GATE, json.loads(out)["psi"])
                if d == "Dunmarrow" and night >= 18:
                    # With the outcomes: the map's calibration went stale too
                    # (+0.8 in the true log-odds), and the refit rule sees it.
                    rc, out, err = run("drift", "--map", path, "--reference", refs[d], "--label", "missed",
                                       "--json", "-", part)
                    self.assertEqual(rc, 0, err)
                    self.assertEqual(json.loads(out)["refit"]["verdict"], "warranted", f"night {night}")
        for (night, d), (flag, psi) in flagged.items():
            with self.subTest(night=night, depot=d, psi=psi):
                self.assertEqual(flag, d == "Dunmarrow" and night >= 18)


if __name__ == "__main__":
    unittest.main()
