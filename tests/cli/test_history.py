"""plumb report --history: one JSON line per run (docs/history-format.md),
the figures in it equal to the JSON report's of the same run, the input's
hash equal to Python's hashlib.sha256 of the file (an outside computation),
refits marked where the map changes, the trend in the text report and the
SVG, the refusal of a torn last line, of a bad line in the middle and of a
line of another format version (each with file:line, nothing written, the
history left as it was), --torn-history cut, and concurrent runs appending
to one file without interleaving."""
import hashlib
import json
import os
import subprocess
import unittest
import xml.etree.ElementTree as ElementTree

from plumbtest import PLUMB, PlumbCase, run, simulated_holdout, write

INPUT = 3
USAGE = 2


class HistoryCase(PlumbCase):
    def setUp(self):
        super().setUp()
        rows = simulated_holdout(3000, seed=21)
        write(self.path("night.csv"), "risk,late\n" + "".join(f"{s},{y}\n" for s, y in rows))
        rows2 = simulated_holdout(3000, seed=22, slope=1.4)
        write(self.path("night2.csv"), "risk,late\n" + "".join(f"{s},{y}\n" for s, y in rows2))
        run("fit", "--map", "platt", "--score", "risk", "--label", "late", self.path("night.csv"),
            "-o", self.path("late.map.json"), check=True)
        self.history = self.path("h.jsonl")

    def night(self, date, *extra, data="night.csv"):
        return run("report", "--map", self.path("late.map.json"), "--label", "late", "--bootstrap", "20",
                   "--history", self.history, "--history-date", date, self.path(data), *extra)

    def lines(self):
        with open(self.history, encoding="utf-8") as f:
            text = f.read()
        self.assertTrue(text.endswith("\n"))
        return [json.loads(l) for l in text.splitlines()]


class TestHistoryLine(HistoryCase):
    def test_one_line_per_run_with_the_json_reports_figures(self):
        rc, _, err = self.night("2026-11-01", "--max", "ece=0.5", "--json", self.path("r.json"), "-q")
        self.assertEqual(rc, 0, err)
        rc, _, err = self.night("2026-11-02", "--max", "ece=0.000001", "-q")
        self.assertEqual(rc, 7, err)  # a failed gate still records its night
        lines = self.lines()
        self.assertEqual(len(lines), 2)
        first = lines[0]
        self.assertEqual(first["format"], "plumb-history")
        self.assertEqual(first["version"], 1)
        self.assertEqual(first["command"], "report")
        self.assertEqual(first["date"], "2026-11-01")
        with open(self.path("night.csv"), "rb") as f:
            self.assertEqual(first["input"]["sha256"], hashlib.sha256(f.read()).hexdigest())
        self.assertEqual(first["input"]["rows"], 3000)
        with open(self.path("r.json")) as f:
            report = json.load(f)
        score = report["scores"][0]
        column = first["columns"][0]
        self.assertEqual(column["name"], score["name"])
        self.assertEqual(column["map"]["kind"], "platt")
        self.assertRegex(column["map"]["integrity"], r"^[0-9a-f]{64}$")
        figures = column["figures"]
        self.assertEqual(figures["brier"]["value"], score["brier"])
        self.assertEqual(figures["ece"]["value"], score["calibration_error"]["equal_width"]["ece"])
        self.assertEqual(figures["ece"]["low"], score["bootstrap"]["ece"]["lo"])
        self.assertEqual(figures["ece"]["high"], score["bootstrap"]["ece"]["hi"])
        self.assertEqual(figures["mcb"]["value"], score["corp"]["brier"]["mcb"])
        self.assertEqual(figures["auc"]["low"], score["bootstrap"]["auc"]["lo"])
        self.assertEqual(figures["slope"]["value"], score["calibration_regression"]["slope"])
        self.assertIsNone(figures["log_loss"]["low"])  # no interval for it: null, not 0
        self.assertEqual(first["gates"], [{"column": score["name"], "metric": "ece", "bound": "max", "limit": 0.5,
                                           "value": score["calibration_error"]["equal_width"]["ece"],
                                           "passed": True}])
        self.assertFalse(lines[1]["gates"][0]["passed"])

    def test_the_trend_in_text_and_svg_with_the_refit_marked(self):
        for date in ("2026-11-01", "2026-11-02"):
            self.assertEqual(self.night(date, "-q")[0], 0)
        # A refit: another map at the same path.
        run("fit", "--map", "isotonic", "--score", "risk", "--label", "late", self.path("night2.csv"),
            "-o", self.path("late.map.json"), check=True)
        rc, out, err = self.night("2026-11-03", "--max", "ece=0.02", "--ascii", "--svg", self.path("r.svg"),
                                  data="night2.csv")
        self.assertIn(rc, (0, 7), err)
        self.assertIn("[trend]", out)
        self.assertIn("ece, 3 nights, 2026-11-01 to 2026-11-03", out)
        self.assertIn("v map refitted", out)
        self.assertIn("= gate --max 0.0200", out)
        with open(self.path("r.svg")) as f:
            svg = f.read()
        ElementTree.fromstring(svg.encode())  # well-formed XML with the trend panels in it
        # One panel per figure of the calibrated column: ece, mcb, brier, auc.
        self.assertEqual([m for m in ("ece", "mcb", "brier", "auc") if f'data-trend-figure="{m}"' in svg],
                         ["ece", "mcb", "brier", "auc"])
        self.assertEqual(svg.count('class="trend-refit"'), svg.count('class="trend"'))  # one refit per panel
        self.assertIn('class="trend-gate"', svg)
        self.assertEqual(svg.count('class="trend-point"') + svg.count('class="trend-breach"'),
                         3 * svg.count('class="trend"'))
        integrity = [l["columns"][0]["map"]["integrity"] for l in self.lines()]
        self.assertEqual(integrity[0], integrity[1])
        self.assertNotEqual(integrity[1], integrity[2])

    def test_a_tally_records_the_tally_files_hash(self):
        run("tally", "--score", "risk", "--label", "late", self.path("night.csv"), "-o", self.path("n.tally.json"),
            check=True)
        rc, _, err = run("report", "--score", "risk", "--tally", self.path("n.tally.json"), "--bootstrap", "0",
                         "--history", self.history, "--history-date", "2026-11-05", "-q")
        self.assertEqual(rc, 0, err)
        line = self.lines()[0]
        with open(self.path("n.tally.json"), "rb") as f:
            self.assertEqual(line["input"]["sha256"], hashlib.sha256(f.read()).hexdigest())
        self.assertEqual(line["input"]["rows"], 3000)
        self.assertIsNone(line["columns"][0]["map"])
        self.assertIsNone(line["columns"][0]["figures"]["ece"]["low"])  # --bootstrap 0: no interval

    def test_refusals_of_dates_and_options(self):
        self.assert_refused(["report", "--score", "risk", "--label", "late", "--history", self.history,
                             "--history-date", "2026-02-30", self.path("night.csv")], USAGE, "--history-date")
        self.assert_refused(["report", "--score", "risk", "--label", "late", "--torn-history", "cut",
                             self.path("night.csv")], USAGE, "--torn-history needs --history", "--history FILE")
        self.assertFalse(os.path.exists(self.history))


class TestTornHistory(HistoryCase):
    def test_a_torn_last_line_is_refused_with_its_line_and_nothing_is_written(self):
        self.assertEqual(self.night("2026-11-01", "-q")[0], 0)
        self.assertEqual(self.night("2026-11-02", "-q")[0], 0)
        with open(self.history, "rb") as f:
            whole = f.read()
        torn = whole.splitlines(keepends=True)[1][:57]  # the run killed mid-write
        write_bytes = whole + torn
        with open(self.history, "wb") as f:
            f.write(write_bytes)
        self.assert_refused(["report", "--map", self.path("late.map.json"), "--label", "late", "--history",
                             self.history, "--history-date", "2026-11-03", "--json", self.path("r.json"),
                             self.path("night.csv")],
                            INPUT, f"{self.history}:3:", "no final newline", "--torn-history cut",
                            output=self.path("r.json"))
        with open(self.history, "rb") as f:
            self.assertEqual(f.read(), write_bytes)
        # The user's policy: cut the torn line off, say so, go on.
        rc, _, err = self.night("2026-11-03", "--torn-history", "cut", "-q")
        self.assertEqual(rc, 0, err)
        self.assertIn(f"cut off the torn last line 3 of {self.history}", err)
        self.assertEqual([l["date"] for l in self.lines()], ["2026-11-01", "2026-11-02", "2026-11-03"])

    def test_a_bad_line_in_the_middle_is_refused_whatever_the_policy(self):
        self.assertEqual(self.night("2026-11-01", "-q")[0], 0)
        with open(self.history, encoding="utf-8") as f:
            good = f.read()
        write(self.history, good + '{"format":"plumb-history","version":1,"command":"rep\n' + good)
        for policy in ("refuse", "cut"):
            rc, _, err = self.night("2026-11-02", "--torn-history", policy, "-q")
            self.assertEqual(rc, INPUT)
            self.assertIn(f"{self.history}:2:", err)
            self.assertNotIn("--torn-history", err)  # cutting could not help

    def test_a_line_of_another_format_version_is_refused(self):
        write(self.history, '{"format":"plumb-history","version":2,"command":"report","date":"2026-11-01"}\n')
        rc, _, err = self.night("2026-11-02", "-q")
        self.assertEqual(rc, INPUT)
        self.assertIn(f"{self.history}:1:1", err)
        self.assertIn("version 2", err)
        self.assertIn("history format version 1", err)


class TestConcurrentRuns(HistoryCase):
    def test_runs_started_together_append_whole_lines(self):
        processes = [subprocess.Popen([PLUMB, "report", "--map", self.path("late.map.json"), "--label", "late",
                                       "--bootstrap", "20", "--history", self.history, "--history-date",
                                       f"2026-11-{d:02d}", "-q", self.path("night.csv")],
                                      stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
                     for d in range(1, 7)]
        for p in processes:
            _, err = p.communicate(timeout=120)
            self.assertEqual(p.returncode, 0, err)
        lines = self.lines()  # every line parses as JSON
        self.assertEqual(sorted(l["date"] for l in lines), [f"2026-11-{d:02d}" for d in range(1, 7)])


if __name__ == "__main__":
    unittest.main()
