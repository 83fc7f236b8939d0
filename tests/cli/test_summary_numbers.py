"""The summary lines of fit, tally, merge and inspect print their figures by
the formatting layer's rules (docs/cli.md, "How figures are printed"):
counts and whole weights with a comma every three digits, other weights
with 2 decimals, shares as percentages with 2 decimals. The expected texts
are made here from the input file with Python's own format specifications
("{:,}", "{:,.2f}"), not read from plumb."""
import os
import re
import tempfile
import unittest

from plumbtest import Lcg, run, write


def weighted_rows(n, seed):
    g = Lcg(seed)
    rows = []
    for _ in range(n):
        s = round(0.02 + 0.96 * g.uniform(), 4)
        y = 1 if g.uniform() < s else 0
        w = [0.5, 1.25, 2.0, 0.3333][int(4 * g.uniform())]
        rows.append((s, y, w))
    return rows


class SummaryNumbers(unittest.TestCase):
    def setUp(self):
        self.dir = tempfile.TemporaryDirectory()
        self.addCleanup(self.dir.cleanup)

    def path(self, name):
        return os.path.join(self.dir.name, name)

    def test_weighted_fit_tally_and_inspect(self):
        rows = weighted_rows(2500, 11)
        write(self.path("w.csv"), "score,label,w\n" + "".join(f"{s},{y},{w}\n" for s, y, w in rows))
        total = sum(w for _, _, w in rows)
        positives = sum(w for _, y, w in rows if y == 1)
        self.assertNotEqual(total, round(total))  # the 2-decimal rule applies
        expected = f"weight of positives {positives:,.2f} of {total:,.2f}"
        code, _, err = run("fit", "--map", "platt", "--score", "score", "--label", "label", "--weight", "w",
                           self.path("w.csv"), "-o", self.path("w.map.json"), "--no-timestamp")
        self.assertEqual(code, 0, err)
        self.assertIn(expected, err)
        self.assertIsNone(re.search(r"\d\.\d{7,}", err))
        code, _, err = run("tally", "--score", "score", "--label", "label", "--weight", "w", self.path("w.csv"),
                           "-o", self.path("w.tally.json"))
        self.assertEqual(code, 0, err)
        self.assertIn(expected, err)
        code, out, err = run("inspect", self.path("w.map.json"))
        self.assertEqual(code, 0, err)
        share = 100.0 * positives / total
        self.assertIn(f"2,500 rows, weight {total:,.2f}, positives {positives:,.2f} ({share:.2f}%)", out)
        # No round-trip digits of a sum (the lines said 1216.324000000002); the
        # map's parameters further down keep every digit on purpose.
        provenance = next(line for line in out.splitlines() if "rows, weight" in line)
        self.assertIsNone(re.search(r"\d\.\d{7,}", provenance))

    def test_unweighted_counts_are_grouped(self):
        g = Lcg(3)
        rows = [(round(g.uniform(), 3), 1 if g.uniform() < 0.3 else 0) for _ in range(12345)]
        write(self.path("u.csv"), "score,label\n" + "".join(f"{s},{y}\n" for s, y in rows))
        positives = sum(y for _, y in rows)
        self.assertGreaterEqual(positives, 1000)
        code, _, err = run("tally", "--score", "score", "--label", "label", self.path("u.csv"),
                           "-o", self.path("u.tally.json"))
        self.assertEqual(code, 0, err)
        self.assertIn("12,345 rows of", err)
        self.assertIn(f"weight of positives {positives:,} of 12,345", err)
        code, _, err = run("merge", self.path("u.tally.json"), self.path("u.tally.json"), "-o", self.path("m.json"))
        self.assertEqual(code, 0, err)
        self.assertIn(f"24,690 rows (weight of positives {2 * positives:,} of 24,690)", err)


if __name__ == "__main__":
    unittest.main()
