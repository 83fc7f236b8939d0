"""Numeric edges of fit and apply: extreme scores and weights, ties,
separated labels, one positive among many, and determinism. Every map must
end with finite parameters and give probabilities in [0, 1]."""
import json
import math
import os
import unittest

from plumbtest import PlumbCase, read_rows, run, write

KINDS = ("isotonic", "platt", "beta", "temperature", "histogram")


class NumericEdges(PlumbCase):
    def fit(self, kind, path, *extra, score="risk", label="missed"):
        """Fits into a file; returns (artifact document, stderr)."""
        out = self.path(f"{kind}.json")
        rc, _, err = run("fit", "--map", kind, "--score", score, "--label", label, path, "-o", out, *extra)
        self.assertEqual(rc, 0, f"{kind}: {err}")
        return self.load_json(out), err

    def apply(self, artifact_path, scores, column="risk"):
        """Applies a map to a list of score texts; returns the probabilities."""
        write(self.path("scores.csv"), column + "\n" + "\n".join(scores) + "\n")
        rc, out, err = run("apply", artifact_path, self.path("scores.csv"), "-q")
        self.assertEqual(rc, 0, err)
        rows = read_rows(out, is_text=True)
        self.assertEqual(len(rows), len(scores) + 1)
        return [float(r[-1]) for r in rows[1:]]

    def assert_probabilities(self, values, what):
        for v in values:
            self.assertTrue(math.isfinite(v) and 0.0 <= v <= 1.0, f"{what}: {v}")

    def test_isotonic_interpolation_across_a_gap_wider_than_the_double_range(self):
        # Margin scores near -DBL_MAX and +DBL_MAX: the gap between the two
        # blocks is not representable, its halves are.
        write(self.path("m.csv"), "risk,missed\n-1.7e308,0\n1.7e308,1\n")
        self.fit("isotonic", self.path("m.csv"), "--scale", "margin", "-q")
        scores = ["-1e308", "0", "1e308", "1.6e308"]
        got = self.apply(self.path("isotonic.json"), scores)
        self.assert_probabilities(got, "isotonic")
        for text, p in zip(scores, got):
            s = float(text)
            expected = (s / 2 + 0.85e308) / 1.7e308
            self.assertAlmostEqual(p, expected, places=12, msg=text)

    def test_histogram_bins_across_a_gap_wider_than_the_double_range(self):
        # A score goes to the bin whose edge is nearest; the midpoint of two
        # edges near -DBL_MAX and +DBL_MAX must not overflow.
        write(self.path("m.csv"), "risk,missed\n-1.7e308,0\n-1.6e308,0\n1.6e308,1\n1.7e308,1\n")
        doc, _ = self.fit("histogram", self.path("m.csv"), "--scale", "margin", "--bins", "2", "-q")
        self.assertEqual(doc["parameters"]["bin_value"], [0.0, 1.0])
        got = self.apply(self.path("histogram.json"), ["-1.65e308", "-1e308", "-1", "1", "1e308", "1.65e308"])
        self.assertEqual(got, [0.0, 0.0, 0.0, 1.0, 1.0, 1.0])


if __name__ == "__main__":
    unittest.main()
