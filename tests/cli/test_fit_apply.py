"""End to end: plumb fit writes an artifact, plumb apply reproduces the map's
own values on every row, passes every column through, and reads stdin."""
import bisect
import math
import os
import unittest

from plumbtest import PlumbCase, read_rows, run, simulated_holdout, sigmoid, write


def isotonic_value(params, s):
    """The isotonic map as docs/methods.md states it, recomputed from the
    artifact's knots: the block's value inside a block, linear (or step)
    between blocks, the end value outside the fitted range."""
    lo, hi, val = params["block_score_lo"], params["block_score_hi"], params["block_value"]
    if s <= lo[0]:
        return val[0]
    if s >= hi[-1]:
        return val[-1]
    i = bisect.bisect_right(lo, s) - 1
    if s <= hi[i] or params["between_blocks"] == "step":
        return val[i]
    t = (s - hi[i]) / (lo[i + 1] - hi[i])
    return val[i] + t * (val[i + 1] - val[i])


def weighted_pav(points):
    """Pool-adjacent-violators on (score, label) rows, ties pooled first
    (Ayer et al. 1955); a plain second implementation for the CLI check."""
    groups = {}
    for s, y in points:
        total, count = groups.get(s, (0.0, 0.0))
        groups[s] = (total + y, count + 1.0)
    blocks = []  # [sum, weight, first score, last score]
    for s in sorted(groups):
        total, count = groups[s]
        blocks.append([total, count, s, s])
        while len(blocks) > 1 and blocks[-2][0] / blocks[-2][1] > blocks[-1][0] / blocks[-1][1]:
            t, w, _, last = blocks.pop()
            blocks[-1][0] += t
            blocks[-1][1] += w
            blocks[-1][3] = last
    return {s: b[0] / b[1] for b in blocks for s in groups if b[2] <= s <= b[3]}


class FitApply(PlumbCase):
    def setUp(self):
        super().setUp()
        self.rows = simulated_holdout(3000)
        lines = ["parcel,risk,missed,note"]
        for i, (s, y) in enumerate(self.rows):
            lines.append(f'{i},{s},{y},"depot {i % 7}, bay ""{i % 3}"""')
        write(self.path("holdout.csv"), "\n".join(lines) + "\n")

    def fit(self, kind, *extra):
        out = self.path(f"{kind}.map.json")
        run("fit", "--map", kind, "--score", "risk", "--label", "missed", self.path("holdout.csv"), "-o", out,
            *extra, check=True)
        return out, self.load_json(out)

    def apply_rows(self, artifact):
        out = self.path("applied.csv")
        run("apply", artifact, self.path("holdout.csv"), "-o", out, check=True)
        return read_rows(out)

    def test_isotonic_fit_matches_an_independent_pav(self):
        _, art = self.fit("isotonic")
        expected = weighted_pav(self.rows)
        p = art["parameters"]
        for lo, hi, v in zip(p["block_score_lo"], p["block_score_hi"], p["block_value"]):
            for s in (lo, hi):
                self.assertAlmostEqual(v, expected[s], delta=1e-12)
        self.assertEqual(sum(p["block_weight"]), len(self.rows))

    def test_apply_reproduces_isotonic_values_on_every_row(self):
        for between in ("linear", "step"):
            path, art = self.fit("isotonic", "--between", between)
            rows = self.apply_rows(path)
            self.assertEqual(rows[0], ["parcel", "risk", "missed", "note", "risk_calibrated"])
            pav = weighted_pav(self.rows)
            for row in rows[1:]:
                s = float(row[1])
                got = float(row[4])
                self.assertEqual(got, isotonic_value(art["parameters"], s))
                self.assertAlmostEqual(got, pav[s], delta=1e-12)  # every score here was seen in fitting

    def test_apply_reproduces_platt_formula(self):
        path, art = self.fit("platt")
        a, b = art["parameters"]["a"], art["parameters"]["b"]
        for row in self.apply_rows(path)[1:]:
            s = float(row[1])
            f = math.log(s / (1 - s))
            # Platt (1999): p = 1 / (1 + exp(A f + B)).
            self.assertAlmostEqual(float(row[4]), sigmoid(-(a * f + b)), delta=1e-12)

    def test_zero_and_one_are_clipped_and_counted(self):
        path, art = self.fit("platt")
        a, b = art["parameters"]["a"], art["parameters"]["b"]
        write(self.path("edge.csv"), "risk\n0\n1\n0.5\n")
        rc, out, err = run("apply", path, self.path("edge.csv"))
        self.assertEqual(rc, 0, err)
        values = [float(r[1]) for r in read_rows(out, is_text=True)[1:]]
        clip = 1e-12  # the documented clip (docs/methods.md)
        for s, got in zip((clip, 1 - clip), values):
            f = math.log(s / (1 - s))
            self.assertAlmostEqual(got, sigmoid(-(a * f + b)), delta=1e-12)
        self.assertTrue(0 < values[0] < values[2] < values[1] < 1)
        self.assertIn("2 clipped near 0 or 1", err)

    def test_summary_counts_held_rows_only_for_maps_that_hold_at_their_ends(self):
        # Scores below and above every fitted score: isotonic and histogram
        # maps hold them at their end values (docs/methods.md) and the summary
        # counts them; a platt curve goes on beyond the fitted scores, so its
        # summary has no count of held rows (it would always read 0).
        write(self.path("beyond.csv"), "risk\n0.0000001\n0.9999999\n0.5\n")
        for kind, held in (("isotonic", True), ("histogram", True), ("platt", False)):
            path, _ = self.fit(kind)
            rc, _, err = run("apply", path, self.path("beyond.csv"))
            self.assertEqual(rc, 0, err)
            self.assertIn("3 rows, 2 outside the fitted scores", err)
            self.assertEqual("(2 held at the map's end values)" in err, held, (kind, err))
            self.assertEqual("held at the map's end values" in err, held, (kind, err))

    def test_apply_passes_columns_through_and_keeps_order(self):
        path, _ = self.fit("temperature")
        with open(self.path("holdout.csv"), newline="") as f:
            original = f.read().splitlines()
        out = self.path("applied.csv")
        run("apply", path, self.path("holdout.csv"), "-o", out, check=True)
        with open(out, newline="") as f:
            applied = f.read().splitlines()
        self.assertEqual(len(applied), len(original))
        for before, after in zip(original, applied):
            self.assertTrue(after.startswith(before + ","), (before, after))

    def test_probabilities_round_trip_exactly(self):
        path, art = self.fit("beta")
        rows = self.apply_rows(path)
        for row in rows[1:50]:
            text = row[4]
            self.assertEqual(repr(float(text)), text if "e" in text or "." in text else repr(float(text)))
            self.assertTrue(0.0 <= float(text) <= 1.0)

    def test_stdin_and_stdout(self):
        path, _ = self.fit("histogram", "--bins", "8")
        with open(self.path("holdout.csv")) as f:
            text = f.read()
        rc, out, err = run("apply", path, "-", "--as", "p_late", stdin=text)
        self.assertEqual(rc, 0, err)
        rows = read_rows(out, is_text=True)
        self.assertEqual(rows[0][-1], "p_late")
        self.assertEqual(len(rows), len(self.rows) + 1)
        self.assertEqual(len({r[-1] for r in rows[1:]}), 8)  # one value per bin
        self.assertIn("3,000 rows", err)
        # fit reads standard input too, and names it in the provenance
        rc, out, err = run("fit", "--map", "platt", "--score", "risk", "--label", "missed", stdin=text)
        self.assertEqual(rc, 0, err)
        self.assertIn('"source": "<stdin>"', out)

    def test_crlf_tsv_quoted_newlines_and_named_labels(self):
        lines = ["id\trisk\toutcome\tcomment"]
        for i, (s, y) in enumerate(self.rows[:400]):
            lines.append(f'{i}\t{s}\t{"late" if y else "on time"}\t"line one\nline two"')
        write(self.path("h.tsv"), "\n".join(lines) + "\n", newline="\r\n")
        out = self.path("p.json")
        run("fit", "--map", "platt", "--score", "risk", "--label", "outcome", "--positive", "late",
            self.path("h.tsv"), "-o", out, check=True)
        art = self.load_json(out)
        self.assertEqual(art["provenance"]["rows"], 400)
        self.assertEqual(art["provenance"]["positives"], sum(y for _, y in self.rows[:400]))
        applied = self.path("applied.tsv")
        rc, _, err = run("apply", out, self.path("h.tsv"), "-o", applied)
        self.assertEqual(rc, 0, err)
        with open(applied, newline="") as f:
            text = f.read()
        self.assertTrue(text.startswith("id\trisk\toutcome\tcomment\trisk_calibrated\r\n"))
        self.assertIn('"line one\r\nline two"\t', text)  # quoted field passed through byte for byte

    def test_true_false_labels_and_column_indexes(self):
        lines = ["risk,missed"] + [f"{s},{'TRUE' if y else 'false'}" for s, y in self.rows[:500]]
        write(self.path("tf.csv"), "\n".join(lines) + "\n")
        rc, by_name, err = run("fit", "--map", "platt", "--score", "risk", "--label", "missed", "--no-timestamp",
                               self.path("tf.csv"))
        self.assertEqual(rc, 0, err)
        rc, by_index, err = run("fit", "--map", "platt", "--score", "1", "--label", "2", "--no-timestamp",
                                self.path("tf.csv"))
        self.assertEqual(rc, 0, err)
        self.assertEqual(by_name, by_index)

    def test_weights_equal_repeated_rows(self):
        # A row of weight 2 counts as two rows (frequency weights).
        lines_w = ["risk,missed,w"] + [f"{s},{y},2" for s, y in self.rows[:300]]
        lines_r = ["risk,missed"] + [f"{s},{y}" for s, y in self.rows[:300] for _ in range(2)]
        write(self.path("w.csv"), "\n".join(lines_w) + "\n")
        write(self.path("r.csv"), "\n".join(lines_r) + "\n")
        for kind in ("isotonic", "platt"):
            _, a = run("fit", "--map", kind, "--score", "risk", "--label", "missed", "--weight", "w",
                       self.path("w.csv"), "-q", check=True)[0:2]
            _, b = run("fit", "--map", kind, "--score", "risk", "--label", "missed", self.path("r.csv"), "-q",
                       check=True)[0:2]
            import json
            pa, pb = json.loads(a)["parameters"], json.loads(b)["parameters"]
            for key in pa:
                if isinstance(pa[key], float):
                    self.assertAlmostEqual(pa[key], pb[key], delta=1e-9)
                elif isinstance(pa[key], list) and key != "block_weight":
                    self.assertEqual(len(pa[key]), len(pb[key]))
                    for x, y in zip(pa[key], pb[key]):
                        self.assertAlmostEqual(x, y, delta=1e-12)

    def test_scores_outside_the_fitted_range_are_clamped_and_counted(self):
        path, art = self.fit("isotonic")
        lo, hi = art["provenance"]["score_min"], art["provenance"]["score_max"]
        write(self.path("new.csv"), f"risk\n0\n{lo}\n1\n")
        rc, out, err = run("apply", path, self.path("new.csv"))
        self.assertEqual(rc, 0, err)
        values = [float(r[1]) for r in read_rows(out, is_text=True)[1:]]
        p = art["parameters"]["block_value"]
        self.assertEqual(values, [p[0], p[0], p[-1]])
        self.assertGreater(hi, lo)
        self.assertIn("2 outside the fitted scores", err)


if __name__ == "__main__":
    unittest.main()
