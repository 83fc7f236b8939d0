"""Every bad input of the backbone issue is refused with one located line on
stderr, its documented exit code (docs/cli.md), and no output file."""
import os
import unittest

from plumbtest import PlumbCase, run, simulated_holdout, write

INPUT, ARTIFACT, USAGE, FIT = 3, 4, 2, 6


class Refusals(PlumbCase):
    def setUp(self):
        super().setUp()
        good = ["risk,missed,w"] + [f"{s},{y},1" for s, y in simulated_holdout(200)]
        write(self.path("good.csv"), "\n".join(good) + "\n")
        self.map = self.path("m.json")
        run("fit", "--map", "isotonic", "--score", "risk", "--label", "missed", self.path("good.csv"), "-o",
            self.map, check=True)
        self.out = self.path("out.json")

    def fit_refused(self, text, code, *fragments, extra=()):
        write(self.path("bad.csv"), text)
        return self.assert_refused(["fit", "--map", "platt", "--score", "risk", "--label", "missed", *extra,
                                    self.path("bad.csv"), "-o", self.out], code, *fragments, output=self.out)

    def test_missing_column(self):
        self.fit_refused("score,missed\n0.2,1\n", INPUT, "bad.csv:1", "no score column", "'risk'", "'score'")

    def test_empty_file(self):
        self.fit_refused("", INPUT, "bad.csv", "empty")

    def test_header_only(self):
        self.fit_refused("risk,missed\n", INPUT, "bad.csv", "no data rows")

    def test_non_numeric_score(self):
        self.fit_refused("risk,missed\n0.2,1\n0.4,0\nhigh,1\n", INPUT, "bad.csv:4:1", "(column 'risk')", "'high'",
                         "not a decimal number")

    def test_nan_and_infinite_scores(self):
        self.fit_refused("risk,missed\n0.2,1\nNaN,0\n", INPUT, "bad.csv:3:1", "NaN")
        self.fit_refused("risk,missed\n0.2,1\n-inf,0\n", INPUT, "bad.csv:3:1", "not finite",
                         extra=("--scale", "logit"))

    def test_probability_out_of_range(self):
        self.fit_refused("risk,missed\n0.2,1\n1.0000001,0\n", INPUT, "bad.csv:3:1", "outside [0, 1]",
                         "--scale logit")

    def test_label_neither_positive_nor_negative(self):
        self.fit_refused("risk,missed\n0.2,1\n0.3,2\n", INPUT, "bad.csv:3:2", "(column 'missed')", "'2'",
                         "1/0 or true/false")
        self.fit_refused("risk,missed\n0.2,1\n0.3,\n", INPUT, "bad.csv:3:2", "label is missing", "--missing skip")

    def test_negative_weight(self):
        self.fit_refused("risk,missed,w\n0.2,1,1\n0.3,0,-0.5\n", INPUT, "bad.csv:3:3", "(column 'w')", "negative",
                         extra=("--weight", "w"))

    def test_single_class(self):
        self.fit_refused("risk,missed\n0.2,1\n0.3,1\n", FIT, "bad.csv", "only positive labels")
        self.fit_refused("risk,missed,w\n0.2,1,0\n0.3,0,1\n", FIT, "bad.csv", "only negative labels",
                         extra=("--weight", "w"))

    def test_ragged_row_and_unclosed_quote(self):
        self.fit_refused("risk,missed\n0.2,1\n0.3,0,7\n", INPUT, "bad.csv:3", "3 fields", "header has 2")
        self.fit_refused('risk,missed\n0.2,1\n"0.3,0\n', INPUT, "bad.csv:3", "quoted field is not closed")

    def test_scale_the_map_does_not_accept(self):
        write(self.path("z.csv"), "z,missed\n-1.5,1\n2.0,0\n")
        self.assert_refused(["fit", "--map", "beta", "--scale", "logit", "--score", "z", "--label", "missed",
                             self.path("z.csv"), "-o", self.out], USAGE, "beta", "logit", output=self.out)

    def test_unknown_kind_and_missing_options(self):
        rc, _, err = run("fit", "--map", "spline", "--score", "risk", "--label", "missed", self.path("good.csv"))
        self.assertEqual(rc, USAGE)
        self.assertIn("spline", err)
        rc, _, err = run("fit", "--score", "risk", self.path("good.csv"))
        self.assertEqual(rc, USAGE)
        self.assertIn("--map", err)

    def test_non_utf8_column_name(self):
        with open(self.path("latin1.csv"), "wb") as f:
            f.write(b"risk,p\xe9nalit\xe9\n0.2,1\n0.4,0\n")
        self.assert_refused(["fit", "--map", "platt", "--score", "risk", "--label", "2", self.path("latin1.csv"),
                             "-o", self.out], INPUT, "latin1.csv", "UTF-8", output=self.out)

    def test_unreadable_input(self):
        self.assert_refused(["fit", "--map", "platt", "--score", "risk", "--label", "missed",
                             self.path("absent.csv"), "-o", self.out], 5, "absent.csv", output=self.out)

    def test_apply_bad_score_leaves_no_file_and_keeps_an_old_one(self):
        write(self.path("tonight.csv"), "id,risk\n1,0.3\n2,0.5\n3,oops\n4,0.6\n")
        target = self.path("tonight.out.csv")
        self.assert_refused(["apply", self.map, self.path("tonight.csv"), "-o", target], INPUT, "tonight.csv:4:2",
                            "'oops'", output=target)
        write(target, "yesterday's output\n")
        rc, _, _ = run("apply", self.map, self.path("tonight.csv"), "-o", target)
        self.assertEqual(rc, INPUT)
        with open(target) as f:
            self.assertEqual(f.read(), "yesterday's output\n")

    def test_apply_missing_score_policy(self):
        write(self.path("tonight.csv"), "id,risk\n1,0.3\n2,\n3,0.6\n")
        target = self.path("t.out.csv")
        self.assert_refused(["apply", self.map, self.path("tonight.csv"), "-o", target], INPUT, "tonight.csv:3:2",
                            "missing", "--missing empty", output=target)
        rc, _, err = run("apply", self.map, self.path("tonight.csv"), "-o", target, "--missing", "empty")
        self.assertEqual(rc, 0, err)
        with open(target) as f:
            lines = f.read().splitlines()
        self.assertEqual(lines[2], "2,,")
        self.assertIn("1 missing", err)

    def test_apply_refuses_a_name_clash(self):
        write(self.path("tonight.csv"), "id,risk,risk_calibrated\n1,0.3,0.1\n")
        self.assert_refused(["apply", self.map, self.path("tonight.csv"), "-o", self.out], USAGE, "risk_calibrated",
                            "--as", output=self.out)


if __name__ == "__main__":
    unittest.main()
