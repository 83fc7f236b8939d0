"""Label rules on every command that reads labels (fit, cross-fit, report,
tally): --positive, --negative, the missing-value spellings and 1.0/0.0.
Expected counts are counted by hand from the small files below."""
import json
import os
import unittest

from plumbtest import SOURCE_DIR, PlumbCase, run, write

INPUT, USAGE = 3, 2

# 12 rows: 5 'yes', 6 'no', one 'NA' on line 5 (the header is line 1).
ROWS = [(0.1, "no"), (0.2, "no"), (0.3, "yes"), (0.35, "NA"), (0.4, "no"), (0.5, "yes"), (0.55, "no"),
        (0.6, "yes"), (0.7, "no"), (0.8, "yes"), (0.9, "no"), (0.95, "yes")]


def text(rows, header="risk,outcome"):
    return header + "\n" + "".join(f"{s},{l}\n" for s, l in rows)


class Labels(PlumbCase):
    def commands(self, path, *extra):
        """The same label options on each command that reads labels."""
        common = ["--score", "risk", "--label", "outcome", *extra, path, "-q"]
        return {
            "fit": ["fit", "--map", "platt", *common, "-o", self.path("m.json")],
            "cross-fit": ["cross-fit", "--map", "platt", "--folds", "2", *common, "-o", self.path("c.json")],
            "report": ["report", "--bootstrap", "0", *common],
            "tally": ["tally", *common, "-o", self.path("t.json")],
        }

    def test_positive_alone_refuses_a_missing_label_instead_of_counting_it_negative(self):
        path = self.path("in.csv")
        write(path, text(ROWS))
        for command, args in self.commands(path, "--positive", "yes").items():
            with self.subTest(command=command):
                line = self.assert_refused(args, INPUT, "in.csv:5:2", "(column 'outcome')", "label is missing",
                                           "got 'NA'", "--missing skip")
                # --positive was given: the message must not advise giving it.
                self.assertNotIn("with --positive", line)

    def test_an_empty_label_under_positive_does_not_advise_positive(self):
        path = self.path("in.csv")
        write(path, "risk,outcome\n0.2,yes\n0.3,\n0.4,no\n")
        line = self.assert_refused(self.commands(path, "--positive", "yes")["fit"], INPUT, "in.csv:3:2",
                                   "label is missing")
        self.assertNotIn("--positive", line)

    def test_positive_and_negative_refuse_any_third_value_located(self):
        rows = [(s, "no" if l == "NA" else l) for s, l in ROWS]
        rows[6] = (0.55, "Yes")  # line 8
        path = self.path("in.csv")
        write(path, text(rows))
        for command, args in self.commands(path, "--positive", "yes", "--negative", "no").items():
            with self.subTest(command=command):
                self.assert_refused(args, INPUT, "in.csv:8:2", "(column 'outcome')", "neither positive nor negative",
                                    "got 'Yes'", "'yes' is positive, 'no' negative, any other value refused")

    def test_positive_and_negative_count_what_they_name(self):
        rows = [(s, "no" if l == "NA" else l) for s, l in ROWS]
        path = self.path("in.csv")
        write(path, text(rows))
        for command, args in self.commands(path, "--positive", "yes", "--negative", "no").items():
            with self.subTest(command=command):
                rc, _, err = run(*args)
                self.assertEqual(rc, 0, err)
        doc = self.load_json(self.path("m.json"))
        self.assertEqual(doc["provenance"]["rows"], 12)
        self.assertEqual(doc["provenance"]["positives"], 5.0)
        self.assertEqual(doc["provenance"]["positive_rule"],
                         "'yes' is positive, 'no' negative, any other value refused")
        rc, out, err = run("inspect", self.path("m.json"))
        self.assertEqual(rc, 0, err)
        self.assertIn("label column 'outcome': 'yes' is positive, 'no' negative, any other value refused", out)
        tally = self.load_json(self.path("t.json"))
        self.assertEqual(tally["positive_rule"], "'yes' is positive, 'no' negative, any other value refused")

    def test_negative_alone_makes_every_other_value_positive(self):
        rows = [(s, "no" if l == "NA" else ("late" if l == "yes" else l)) for s, l in ROWS]
        rows[0] = (0.1, "very late")
        path = self.path("in.csv")
        write(path, text(rows))
        rc, _, err = run(*self.commands(path, "--negative", "no")["fit"])
        self.assertEqual(rc, 0, err)
        doc = self.load_json(self.path("m.json"))
        self.assertEqual(doc["provenance"]["positives"], 6.0)  # 5 'late' and 1 'very late'
        self.assertEqual(doc["provenance"]["positive_rule"], "'no' is negative, any other value positive")

    def test_a_named_missing_spelling_is_a_label(self):
        path = self.path("in.csv")
        write(path, text(ROWS))
        rc, _, err = run(*self.commands(path, "--positive", "yes", "--negative", "NA")["fit"])
        self.assertEqual(rc, INPUT, err)  # 'no' is now a third value: refused
        rows = [(s, "NA" if l == "no" else l) for s, l in ROWS]
        write(path, text(rows))
        rc, _, err = run(*self.commands(path, "--positive", "yes", "--negative", "NA")["fit"])
        self.assertEqual(rc, 0, err)
        self.assertEqual(self.load_json(self.path("m.json"))["provenance"]["rows"], 12)

    def test_the_same_value_for_both_is_a_usage_error(self):
        path = self.path("in.csv")
        write(path, text(ROWS))
        for command, args in self.commands(path, "--positive", "yes", "--negative", "yes").items():
            with self.subTest(command=command):
                self.assert_refused(args, USAGE, "--positive and --negative name the same value")

    def test_float_labels_read_as_one_and_zero(self):
        ints = [(s, 1 if l == "yes" else 0) for s, l in ROWS]
        floats = [(s, f"{l}.0") for s, l in ints]
        a, b = self.path("ints.csv"), self.path("floats.csv")
        write(a, text(ints))
        write(b, text(floats))
        for path, out in ((a, "a.json"), (b, "b.json")):
            rc, _, err = run("fit", "--map", "platt", "--score", "risk", "--label", "outcome", path, "-q",
                             "--no-timestamp", "-o", self.path(out))
            self.assertEqual(rc, 0, err)
        da, db = self.load_json(self.path("a.json")), self.load_json(self.path("b.json"))
        self.assertEqual(db["provenance"]["positives"], 5.0)
        self.assertEqual(da["parameters"], db["parameters"])
        for command, args in self.commands(b).items():
            with self.subTest(command=command):
                rc, _, err = run(*args)
                self.assertEqual(rc, 0, err)

    def test_every_label_command_documents_negative_and_missing(self):
        for command in ("fit", "cross-fit", "report", "tally"):
            rc, out, _ = run(command, "--help")
            self.assertEqual(rc, 0)
            self.assertIn("--negative", out, command)
            self.assertIn("--missing", out, command)

    def test_an_artifact_written_before_negative_still_loads(self):
        # Written by an earlier plumb (tests/fuzz/corpus), with no rows_skipped.
        path = os.path.join(SOURCE_DIR, "tests", "fuzz", "corpus", "fuzz_artifact",
                            "platt.json")
        with open(path) as f:
            self.assertNotIn("rows_skipped", json.load(f)["provenance"])
        rc, out, err = run("inspect", path)
        self.assertEqual(rc, 0, err)
        self.assertIn("label column", out)
        self.assertNotIn("left out", out)


if __name__ == "__main__":
    unittest.main()
