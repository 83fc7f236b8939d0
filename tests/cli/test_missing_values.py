"""--missing refuse|skip on every command that reads scores (fit, cross-fit,
report, tally, apply; apply also empty): the missing-value spellings, the
counts in summaries, provenance and report, and one-column files whose
empty lines are empty scores. Expected counts are counted by hand."""
import json
import os
import subprocess
import unittest

import jsonschema  # Debian python3-jsonschema, installed by tests/run.sh

from plumbtest import PLUMB, SOURCE_DIR, PlumbCase, read_rows, run, simulated_holdout, write

INPUT, USAGE = 3, 2

# 10 clean rows; then three missing scores (lines 12-14) and one missing label (line 15).
CLEAN = [(0.05, 0), (0.1, 0), (0.2, 1), (0.3, 0), (0.4, 1), (0.5, 0), (0.6, 1), (0.7, 0), (0.8, 1), (0.9, 1)]
MISSING = [("NaN", "1"), ("", "0"), ("null", "1"), ("0.45", "N/A")]


def text(rows):
    return "risk,missed\n" + "".join(f"{s},{l}\n" for s, l in rows)


class MissingValues(PlumbCase):
    def setUp(self):
        super().setUp()
        self.dirty = self.path("dirty.csv")
        write(self.dirty, text(CLEAN + MISSING))
        self.clean = self.path("clean.csv")
        write(self.clean, text(CLEAN))

    def commands(self, path, *extra):
        common = ["--score", "risk", "--label", "missed", *extra, path]
        return {
            "fit": ["fit", "--map", "platt", "--no-timestamp", *common, "-o", self.path("m.json")],
            "cross-fit": ["cross-fit", "--map", "platt", "--folds", "2", "--no-timestamp", *common,
                          "-o", self.path("c.json")],
            "report": ["report", "--bootstrap", "0", "--json", self.path("r.json"), *common],
            "tally": ["tally", *common, "-o", self.path("t.json")],
        }

    def test_refused_by_default_with_location_and_a_way_forward(self):
        for command, args in self.commands(self.dirty).items():
            with self.subTest(command=command):
                self.assert_refused([*args, "-q"], INPUT, "dirty.csv:12:1", "(column 'risk')", "score is missing",
                                    "got 'NaN'", "--missing skip")

    def test_skip_leaves_rows_out_and_says_how_many(self):
        for command, args in self.commands(self.dirty, "--missing", "skip").items():
            with self.subTest(command=command):
                rc, out, err = run(*args)
                self.assertEqual(rc, 0, err)
                self.assertIn("4 rows with a missing score or label left out" if command != "report"
                              else "4 left out for a missing score or label", err if command != "report" else out)
        fit = self.load_json(self.path("m.json"))
        self.assertEqual(fit["provenance"]["rows"], 10)
        self.assertEqual(fit["provenance"]["positives"], 5.0)
        self.assertEqual(fit["provenance"]["rows_skipped"], 4)
        self.assertEqual(self.load_json(self.path("c.json"))["provenance"]["rows_skipped"], 4)
        self.assertEqual(self.load_json(self.path("t.json"))["rows"], 10)
        report = self.load_json(self.path("r.json"))
        self.assertEqual(report["rows_skipped"], 4)
        self.assertEqual(report["scores"][0]["rows"], 10)
        # The rows left out are exactly the rows with a missing value: the
        # same map as a fit on the file without them.
        rc, _, err = run(*self.commands(self.clean)["fit"][:-2], "-o", self.path("clean.json"))
        self.assertEqual(rc, 0, err)
        self.assertEqual(self.load_json(self.path("clean.json"))["parameters"], fit["parameters"])
        rc, out, err = run("inspect", self.path("m.json"))
        self.assertIn("4 rows with a missing score or label left out", out)
        # The new fields are part of the published schemas.
        for doc, schema in ((fit, "artifact.schema.json"), (report, "report.schema.json")):
            with open(os.path.join(SOURCE_DIR, "docs", schema)) as f:
                jsonschema.Draft202012Validator(json.load(f)).validate(doc)

    def test_summary_lines_report_the_count(self):
        args = self.commands(self.dirty, "--missing", "skip")
        for command in ("fit", "cross-fit", "tally"):
            rc, _, err = run(*args[command])
            self.assertEqual(rc, 0, err)
            self.assertRegex(err, r"plumb " + command + r": [^\n]*4 rows with a missing score or label left out")
        rc, out, err = run(*args["report"], "--ascii")
        self.assertEqual(rc, 0, err)
        self.assertIn("4 left out for a missing score or label", out)
        rc, _, err = run(*args["report"], "-q", "--markdown", self.path("r.md"))
        with open(self.path("r.md")) as f:
            self.assertIn("Rows left out for a missing score or label: 4", f.read())

    def test_refuse_records_no_count(self):
        rc, _, err = run(*self.commands(self.clean)["fit"])
        self.assertEqual(rc, 0, err)
        self.assertNotIn("rows_skipped", self.load_json(self.path("m.json"))["provenance"])
        rc, _, err = run(*self.commands(self.clean)["report"], "-q")
        self.assertIsNone(self.load_json(self.path("r.json"))["rows_skipped"])

    def test_cross_fit_oof_leaves_out_the_same_rows(self):
        rc, _, err = run(*self.commands(self.dirty, "--missing", "skip", "--oof", self.path("oof.csv"))["cross-fit"])
        self.assertEqual(rc, 0, err)
        rows = read_rows(self.path("oof.csv"))
        self.assertEqual(len(rows), 1 + 10)
        self.assertEqual([r[0] for r in rows[1:]], [str(s) for s, _ in CLEAN])

    def test_every_spelling_counts_and_only_those(self):
        for spelling in ("", "NA", "na", "NaN", "nan", "-nan", "null", "NULL", "n/a", "N/A", "None", " NA "):
            with self.subTest(spelling=spelling):
                write(self.dirty, text(CLEAN + [(spelling, "1")]))
                rc, _, err = run(*self.commands(self.dirty, "--missing", "skip")["fit"])
                self.assertEqual(rc, 0, err)
                self.assertEqual(self.load_json(self.path("m.json"))["provenance"]["rows_skipped"], 1)
        for spelling in ("-", "?", "missing", "inf"):  # not missing: refused as scores even under skip
            with self.subTest(spelling=spelling):
                write(self.dirty, text(CLEAN + [(spelling, "1")]))
                self.assert_refused([*self.commands(self.dirty, "--missing", "skip")["fit"], "-q"], INPUT,
                                    "dirty.csv:12:1")

    def test_a_tally_records_the_rows_left_out_and_merge_fit_and_report_carry_them(self):
        rc, _, err = run(*self.commands(self.dirty, "--missing", "skip")["tally"], "-q")
        self.assertEqual(rc, 0, err)
        skipped = self.load_json(self.path("t.json"))
        self.assertEqual((skipped["rows"], skipped["rows_skipped"]), (10, 4))
        with open(os.path.join(SOURCE_DIR, "docs", "tally.schema.json")) as f:
            jsonschema.Draft202012Validator(json.load(f)).validate(skipped)
        # Without --missing skip no row can be left out, and the tally says nothing (as older tallies).
        clean = self.path("clean.tally.json")
        run("tally", "--score", "risk", "--label", "missed", self.clean, "-o", clean, "-q", check=True)
        self.assertNotIn("rows_skipped", self.load_json(clean))
        # merge sums the counts of the tallies that record one.
        run("merge", self.path("t.json"), self.path("t.json"), clean, "-o", self.path("merged.json"), "-q", check=True)
        self.assertEqual(self.load_json(self.path("merged.json"))["rows_skipped"], 8)
        run("merge", clean, clean, "-o", self.path("m2.json"), "-q", check=True)
        self.assertNotIn("rows_skipped", self.load_json(self.path("m2.json")))
        # fit --tally and report --tally say what fit and report on the rows say.
        rc, _, err = run(*self.commands(self.dirty, "--missing", "skip")["fit"], "-q")
        self.assertEqual(rc, 0, err)
        self.assertEqual(self.load_json(self.path("m.json"))["provenance"]["rows_skipped"], 4)
        run("fit", "--map", "platt", "--no-timestamp", "--tally", self.path("t.json"), "-o", self.path("ft.json"), "-q",
            check=True)
        self.assertEqual(self.load_json(self.path("ft.json"))["provenance"]["rows_skipped"], 4)
        rc, out, err = run("report", "--bootstrap", "0", "--score", "risk", "--tally", self.path("t.json"), "--ascii",
                           "--json", self.path("rt.json"))
        self.assertEqual(rc, 0, err)
        self.assertIn("4 left out for a missing score or label", out)
        self.assertEqual(self.load_json(self.path("rt.json"))["rows_skipped"], 4)
        run("report", "--bootstrap", "0", "--score", "risk", "--tally", clean, "--json", self.path("rc.json"), "-q",
            check=True)
        self.assertIsNone(self.load_json(self.path("rc.json"))["rows_skipped"])

    def test_missing_with_tally_input_is_a_usage_error(self):
        rc, _, err = run(*self.commands(self.clean)["tally"], "-q")
        self.assertEqual(rc, 0, err)
        self.assert_refused(["fit", "--map", "platt", "--tally", self.path("t.json"), "--missing", "skip"], USAGE,
                            "--missing")
        self.assert_refused(["report", "--score", "risk", "--tally", self.path("t.json"), "--missing", "skip"],
                            USAGE, "--missing")


class ApplyMissing(PlumbCase):
    def setUp(self):
        super().setUp()
        train = self.path("train.csv")
        write(train, text(CLEAN))
        self.map = self.path("m.json")
        run("fit", "--map", "platt", "--score", "risk", "--label", "missed", train, "-o", self.map, "-q", check=True)

    def apply(self, path, *extra):
        return run("apply", self.map, path, *extra)

    def test_every_missing_spelling_is_left_empty(self):
        spellings = ["", "NA", "NaN", "nan", "null", "n/a", "N/A", "None", "-nan"]
        path = self.path("s.csv")
        write(path, "risk,id\n0.3,a\n" + "".join(f"{s},m{i}\n" for i, s in enumerate(spellings)))
        rc, out, err = self.apply(path, "--missing", "empty")
        self.assertEqual(rc, 0, err)
        rows = read_rows(out, is_text=True)
        self.assertEqual(len(rows), 2 + len(spellings))
        self.assertNotEqual(rows[1][2], "")
        self.assertEqual([r[2] for r in rows[2:]], [""] * len(spellings))
        self.assertIn(f"{len(spellings)} missing scores left empty", err)

    def test_skip_leaves_the_rows_out_of_the_output(self):
        path = self.path("s.csv")
        write(path, "risk,id\n0.3,a\nNA,b\n0.6,c\n,d\n")
        rc, out, err = self.apply(path, "--missing", "skip")
        self.assertEqual(rc, 0, err)
        self.assertEqual([r[1] for r in read_rows(out, is_text=True)[1:]], ["a", "c"])
        self.assertIn("2 rows, ", err)
        self.assertIn("2 rows with a missing score left out", err)

    def test_refused_by_default_and_stop_still_means_refuse(self):
        path = self.path("s.csv")
        write(path, "risk,id\n0.3,a\nNaN,b\n")
        for extra in ((), ("--missing", "stop"), ("--missing", "refuse")):
            with self.subTest(extra=extra):
                self.assert_refused(["apply", self.map, path, "-q", *extra], INPUT, "s.csv:3:1", "(column 'risk')",
                                    "score is missing", "--missing empty", "--missing skip")

    def test_a_one_column_file_keeps_its_empty_rows(self):
        path = self.path("one.csv")
        write(path, "risk\n0.3\n\n0.6\n")
        rc, out, err = self.apply(path, "--missing", "empty")
        self.assertEqual(rc, 0, err)
        self.assertEqual(out.splitlines()[1:], [out.splitlines()[1], ",", out.splitlines()[3]])
        self.assertEqual(len(out.splitlines()), 4)
        self.assertTrue(out.splitlines()[1].startswith("0.3,") and out.splitlines()[3].startswith("0.6,"))
        self.assertIn("1 missing scores left empty", err)
        self.assert_refused(["apply", self.map, path, "-q"], INPUT, "one.csv:3:1", "(column 'risk')",
                            "score is missing")
        rc, out, err = self.apply(path, "--missing", "skip")
        self.assertEqual(rc, 0, err)
        self.assertEqual(len(out.splitlines()), 3)

    def test_skip_and_empty_give_the_same_bytes_on_one_and_two_threads(self):
        # Enough rows for several 1 MiB blocks, with missing scores scattered
        # through them and quoted records sending some blocks to the record reader.
        lines = ["risk,id"]
        for i, (s, _) in enumerate(simulated_holdout(120000, seed=11)):
            cell = ("NA", "", "NaN", "null")[i % 4] if i % 37 == 0 else str(s)
            ident = f'"q,{i}"' if i % 5000 == 0 else f"row{i}"
            lines.append(f"{cell},{ident}")
        path = self.path("big.csv")
        write(path, "\n".join(lines) + "\n")
        for policy in ("skip", "empty"):
            outs = []
            for threads in ("1", "2"):
                proc = subprocess.run([PLUMB, "apply", self.map, path, "--missing", policy, "--threads", threads,
                                       "-q"], capture_output=True)
                self.assertEqual(proc.returncode, 0, proc.stderr)
                outs.append(proc.stdout)
            self.assertEqual(outs[0], outs[1], policy)
            missing = sum(1 for i in range(120000) if i % 37 == 0)
            expected_lines = 1 + 120000 - (missing if policy == "skip" else 0)
            self.assertEqual(outs[0].count(b"\n"), expected_lines)


if __name__ == "__main__":
    unittest.main()
