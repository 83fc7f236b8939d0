"""Numeric edges of fit and apply: extreme scores and weights, ties,
separated labels, one positive among many, and determinism. Every map must
end with finite parameters and give probabilities in [0, 1]."""
import math
import os
import time
import unittest

from plumbtest import Lcg, PlumbCase, read_rows, run, write

KINDS = ("isotonic", "platt", "beta", "temperature", "histogram")


def weighted_pav(rows):
    """Values of the pool-adjacent-violators blocks of (score, label, weight)
    rows, ties pooled first; a block merges into its left neighbour only
    when the neighbour's mean is strictly larger (docs/artifact-format.md)."""
    by_score = {}
    for s, y, w in rows:
        sw, swy = by_score.get(s, (0.0, 0.0))
        by_score[s] = (sw + w, swy + w * y)
    blocks = []  # [weight, weighted sum]
    for s in sorted(by_score):
        blocks.append(list(by_score[s]))
        while len(blocks) > 1 and blocks[-2][1] / blocks[-2][0] > blocks[-1][1] / blocks[-1][0]:
            w, wy = blocks.pop()
            blocks[-1][0] += w
            blocks[-1][1] += wy
    return [wy / w for w, wy in blocks]


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

    # --- all scores equal ----------------------------------------------------

    def test_all_scores_equal(self):
        # 16 positives of 50 at one score: every kind fits, and each maps the
        # tied score to the observed rate (Platt to the mean of his smoothed
        # targets (N+ + 1)/(N+ + 2) and 1/(N- + 2), Platt 1999, section 2.2).
        rows = ["risk,missed"] + [f"0.4,{1 if i < 16 else 0}" for i in range(50)]
        write(self.path("tied.csv"), "\n".join(rows) + "\n")
        smoothed = (16 * 17 / 18 + 34 * 1 / 36) / 50
        expected = {"isotonic": 0.32, "histogram": 0.32, "beta": 0.32, "temperature": 0.32, "platt": smoothed}
        for kind in KINDS:
            doc, err = self.fit(kind, self.path("tied.csv"))
            got = self.apply(self.path(f"{kind}.json"), ["0.4", "0.0001", "0.1", "0.9", "0.9999"])
            self.assert_probabilities(got, kind)
            self.assertAlmostEqual(got[0], expected[kind], places=6, msg=kind)
            for value in doc["parameters"].values():
                for v in value if isinstance(value, list) else [value]:
                    if isinstance(v, float):
                        self.assertTrue(math.isfinite(v), kind)
        self.assertEqual(doc["parameters"]["bin_value"], [0.32])

    def test_all_scores_equal_below_a_half_with_most_labels_positive_has_no_temperature(self):
        # sigmoid(logit(0.4) / T) < 1/2 for every T > 0: no temperature can
        # reach a rate of 0.6, and fit says so (exit 6, docs/methods.md).
        rows = ["risk,missed"] + [f"0.4,{1 if i < 30 else 0}" for i in range(50)]
        write(self.path("tied.csv"), "\n".join(rows) + "\n")
        out = self.path("t.json")
        self.assert_refused(["fit", "--map", "temperature", "--score", "risk", "--label", "missed",
                             self.path("tied.csv"), "-o", out], 6, "tied.csv", "not positively associated",
                            output=out)

    # --- one positive among many negatives ----------------------------------

    def test_a_single_positive_among_many_negatives(self):
        rows = ["risk,missed"] + [f"{0.01 + 0.19 * i / 998:.6f},0" for i in range(999)] + ["0.6,1"]
        write(self.path("rare.csv"), "\n".join(rows) + "\n")
        for kind in KINDS:
            doc, err = self.fit(kind, self.path("rare.csv"))
            self.assertEqual(doc["provenance"]["positives"], 1.0)
            if not doc["fit"]["converged"]:
                self.assertIn("did not converge", err, kind)
            got = self.apply(self.path(f"{kind}.json"), ["0.01", "0.1", "0.2", "0.6", "0.9"])
            self.assert_probabilities(got, kind)
            self.assertLess(got[0], got[3], kind)
            if kind in ("isotonic", "histogram"):
                # Piecewise maps reproduce the overall rate: 1 positive in 1000.
                prefix = "block" if kind == "isotonic" else "bin"
                values, weights = doc["parameters"][f"{prefix}_value"], doc["parameters"][f"{prefix}_weight"]
                self.assertAlmostEqual(sum(v * w for v, w in zip(values, weights)), 1.0, places=9)
                self.assertEqual(sum(weights), 1000.0)
        # A logistic fit with an intercept matches its targets in total:
        # Platt's smoothed targets sum to 2/3 + 999/1001 on these rows.
        doc, _ = self.fit("platt", self.path("rare.csv"))
        self.assertTrue(doc["fit"]["converged"])
        scores = [r.split(",")[0] for r in rows[1:]]
        total = sum(self.apply(self.path("platt.json"), scores))
        self.assertAlmostEqual(total, 2 / 3 + 999 / 1001, places=6)

    # --- labels separated by the score --------------------------------------

    def test_separated_labels(self):
        rows = ["risk,missed"] + [f"{i / 100:.2f},{1 if i >= 50 else 0}" for i in range(1, 100)]
        write(self.path("sep.csv"), "\n".join(rows) + "\n")
        probe = ["0.001", "0.01", "0.49", "0.5", "0.51", "0.99", "0.999"]
        cases = (("platt", ("--platt-targets", "labels")), ("beta", ()), ("beta", ("--beta-form", "shared")),
                 ("beta", ("--beta-form", "midpoint")), ("temperature", ()))
        for kind, extra in cases:
            what = f"{kind} {extra}"
            doc, err = self.fit(kind, self.path("sep.csv"), *extra)
            self.assertFalse(doc["fit"]["converged"], what)
            warnings = [l for l in err.splitlines() if "warning" in l]
            self.assertEqual(len(warnings), 1, f"{what}: {err}")
            self.assertIn("did not converge", warnings[0])
            for key, value in doc["parameters"].items():
                if isinstance(value, float):
                    self.assertTrue(math.isfinite(value), f"{what}: {key} = {value}")
            got = self.apply(self.path(f"{kind}.json"), probe)
            self.assert_probabilities(got, what)
            self.assertEqual(got, sorted(got), what)
            # A steep map: the last negative (0.49) lies below 1/2, a positive (0.51) above.
            self.assertLess(got[2], 0.5, what)
            self.assertGreater(got[4], 0.5, what)
            self.assertLess(doc["fit"]["log_loss"], 0.05, what)

    def test_separated_labels_with_smoothed_platt_targets_converge(self):
        # Platt's targets are never 0 or 1, so separated rows still have a
        # finite optimum and no warning is due.
        rows = ["risk,missed"] + [f"{i / 100:.2f},{1 if i >= 50 else 0}" for i in range(1, 100)]
        write(self.path("sep.csv"), "\n".join(rows) + "\n")
        doc, err = self.fit("platt", self.path("sep.csv"))
        self.assertTrue(doc["fit"]["converged"])
        self.assertNotIn("warning", err)

    # --- scores at the ends of the probability scale ------------------------

    def test_scores_within_1e_300_of_0_and_1e_16_of_1(self):
        scores = ["0", "1e-300", "1e-300", "1e-16", "0.3", "0.3", "0.7", "0.7", "0.9999999999999999",
                  "0.9999999999999999", "1"]
        labels = [0, 0, 1, 0, 0, 1, 1, 0, 1, 1, 1]
        rows = ["risk,missed"] + [f"{s},{y}" for s, y in zip(scores, labels)]
        write(self.path("ends.csv"), "\n".join(rows) + "\n")
        clipped = sum(1 for s in scores if float(s) < 1e-12 or float(s) > 1 - 1e-12)
        self.assertEqual(clipped, 7)
        for kind in KINDS:
            doc, err = self.fit(kind, self.path("ends.csv"))
            if kind in ("platt", "beta", "temperature"):
                self.assertEqual(doc["fit"]["clipped_rows"], clipped, kind)
                self.assertIn(f"{clipped} rows had probability scores within 1e-12", err)
            self.assertTrue(math.isfinite(doc["fit"]["log_loss"]), kind)
            self.assertEqual(doc["provenance"]["score_min"], 0.0)
            self.assertEqual(doc["provenance"]["score_max"], 1.0)
            got = self.apply(self.path(f"{kind}.json"), ["0", "5e-324", "1e-300", "1e-16", "0.5",
                                                         "0.9999999999999999", "1"])
            self.assert_probabilities(got, kind)
            if kind != "histogram":
                self.assertEqual(got, sorted(got), kind)
        # Isotonic keeps 0 and 1e-300 apart: different blocks, different values.
        doc, _ = self.fit("isotonic", self.path("ends.csv"))
        self.assertEqual(doc["parameters"]["block_score_lo"][:2], [0.0, 1e-300])

    def test_log_odds_near_1e300_and_1e_minus_300_fit_like_ordinary_ones(self):
        # platt and temperature depend on the score only through A f and z / T,
        # so scores multiplied by 2^k fit the same curve with A / 2^k and
        # T 2^k (exactly, for a power of two). Before the fit rescaled such
        # scores, x^2 overflowed its Hessian and platt stopped at a = b = 0,
        # calling that converged. (beta takes probability scores only, whose
        # features ln(s) and -ln(1 - s) are at most about 28 after clipping.)
        g = Lcg(29)
        base = []
        for _ in range(400):
            z = 8.0 * g.uniform() - 4.0
            base.append((round(z, 3), 1 if g.uniform() < 1.0 / (1.0 + math.exp(-0.7 * z + 0.3)) else 0))
        write(self.path("plain.csv"), "risk,missed\n" + "".join(f"{z!r},{y}\n" for z, y in base))
        plain = {k: self.fit(k, self.path("plain.csv"), "--scale", "logit", "-q")[0] for k in ("platt", "temperature")}
        probe = [-3.0, -0.5, 0.0, 1.0, 3.5]
        for k in (1000, -1000):
            rows = "".join(f"{math.ldexp(z, k)!r},{y}\n" for z, y in base)
            write(self.path("extreme.csv"), "risk,missed\n" + rows)
            for kind in ("platt", "temperature"):
                what = f"{kind}, scores times 2^{k}"
                doc, err = self.fit(kind, self.path("extreme.csv"), "--scale", "logit")
                self.assertNotIn("warning", err, what)
                self.assertTrue(doc["fit"]["converged"], what)
                p, q = doc["parameters"], plain[kind]["parameters"]
                if kind == "platt":
                    self.assertNotEqual(p["a"], 0.0, what)
                    self.assertAlmostEqual(math.ldexp(p["a"], k) / q["a"], 1.0, delta=1e-9, msg=what)
                    self.assertAlmostEqual(p["b"], q["b"], delta=1e-9, msg=what)
                else:
                    self.assertAlmostEqual(math.ldexp(p["temperature"], -k) / q["temperature"], 1.0, delta=1e-9,
                                           msg=what)
                self.assertAlmostEqual(doc["fit"]["log_loss"], plain[kind]["fit"]["log_loss"], delta=1e-12,
                                       msg=what)
                got = self.apply(self.path(f"{kind}.json"), [repr(math.ldexp(z, k)) for z in probe])
                self.fit(kind, self.path("plain.csv"), "--scale", "logit", "-q")
                expected = self.apply(self.path(f"{kind}.json"), [repr(z) for z in probe])
                for x, y in zip(got, expected):
                    self.assertAlmostEqual(x, y, delta=1e-9, msg=what)

    def test_log_odds_too_close_to_0_for_a_platt_slope_are_refused(self):
        # Scores within 4e-323 of 0: the slope that fits them exceeds the
        # largest double. Refused as a fit error (docs/methods_parametric.md).
        write(self.path("tiny.csv"), "risk,missed\n-3e-322,0\n-2e-322,0\n-1e-322,1\n1e-322,0\n2e-322,1\n3e-322,1\n")
        out = self.path("p.json")
        self.assert_refused(["fit", "--map", "platt", "--scale", "logit", "--score", "risk", "--label", "missed",
                             self.path("tiny.csv"), "-o", out], 6,
                            "tiny.csv: the fitted slope is too large for a double: every score lies extremely "
                            "close to 0; expected scores rescaled to ordinary magnitudes", output=out)

    # --- weights over 24 orders of magnitude --------------------------------

    def weighted_rows(self):
        g = Lcg(21)
        rows = []
        for i in range(300):
            s = round(g.uniform(), 5)
            y = 1 if g.uniform() < s else 0
            rows.append((s, y, 10.0 ** (-12 + 24 * i / 299)))
        # Shuffle the weights against the scores, deterministically.
        weights = [w for _, _, w in rows]
        weights = weights[::7] + [w for k, w in enumerate(weights) if k % 7]
        return [(s, y, w) for (s, y, _), w in zip(rows, weights)]

    def test_weights_from_1e_minus_12_to_1e12(self):
        rows = self.weighted_rows()
        self.assertEqual(min(w for *_, w in rows), 1e-12)
        self.assertEqual(max(w for *_, w in rows), 1e12)
        for factor, name in ((1.0, "w.csv"), (1e-3, "w_small.csv")):
            write(self.path(name), "risk,missed,w\n" + "".join(f"{s},{y},{w * factor!r}\n" for s, y, w in rows))
        probe = ["0.00001", "0.2", "0.5", "0.8", "0.99999"]
        for kind in KINDS:
            a, _ = self.fit(kind, self.path("w.csv"), "--weight", "w", "-q")
            pa = self.apply(self.path(f"{kind}.json"), probe)
            b, _ = self.fit(kind, self.path("w_small.csv"), "--weight", "w", "-q")
            pb = self.apply(self.path(f"{kind}.json"), probe)
            self.assert_probabilities(pa, kind)
            # Frequency weights: scaling every weight by one factor changes nothing.
            for x, y in zip(pa, pb):
                self.assertAlmostEqual(x, y, delta=1e-9, msg=kind)
            self.assertAlmostEqual(a["provenance"]["weight_total"] / b["provenance"]["weight_total"], 1e3,
                                   delta=1e-9)
        # Isotonic against a pool-adjacent-violators fit written here
        # (Ayer et al. 1955; Barlow et al. 1972, ch. 1) on the same rows.
        doc, _ = self.fit("isotonic", self.path("w.csv"), "--weight", "w", "-q")
        expected = weighted_pav(rows)
        self.assertGreater(len(expected), 5)
        got = doc["parameters"]["block_value"]
        self.assertEqual(len(got), len(expected))
        for x, y in zip(got, expected):
            self.assertAlmostEqual(x, y, delta=1e-9)

    # --- ties --------------------------------------------------------------

    def test_ten_million_tied_scores_fitted_by_isotonic(self):
        # 10^7 rows in the ordinary build (the fit took about 3 s on the
        # project's machine); 10^6 in the sanitizer build, whose instrumented
        # code is several times slower (an unoptimised build took 25 s for
        # 10^7). tests/CMakeLists.txt sets PLUMB_SANITIZE from the option.
        rows = 10**6 if os.environ.get("PLUMB_SANITIZE", "0") == "1" else 10**7
        block = "".join(f"{0.3 if i < 5 else 0.7},{1 if i in (1, 6, 7, 8) else 0}\n" for i in range(10))
        with open(self.path("ties.csv"), "w") as f:
            f.write("risk,missed\n" + block * (rows // 10))
        started = time.monotonic()
        doc, _ = self.fit("isotonic", self.path("ties.csv"), "-q")
        # Not a speed check: a bound that only a tie handling quadratic in
        # the row count would exceed.
        self.assertLess(time.monotonic() - started, 120.0)
        p = doc["parameters"]
        self.assertEqual(p["block_score_lo"], [0.3, 0.7])
        self.assertEqual(p["block_weight"], [rows / 2, rows / 2])
        self.assertAlmostEqual(p["block_value"][0], 0.2, places=12)
        self.assertAlmostEqual(p["block_value"][1], 0.6, places=12)
        got = self.apply(self.path("isotonic.json"), ["0.3", "0.5", "0.7"])
        self.assertAlmostEqual(got[1], 0.4, places=12)

    # --- determinism -------------------------------------------------------

    def test_the_same_input_gives_the_same_bytes(self):
        g = Lcg(5)
        rows = ["risk,missed"] + [f"{g.uniform():.6f},{1 if g.uniform() < 0.3 else 0}" for _ in range(3000)]
        write(self.path("d.csv"), "\n".join(rows) + "\n")
        for kind in KINDS:
            texts, applied = [], []
            for attempt in range(2):
                rc, out, err = run("fit", "--map", kind, "--score", "risk", "--label", "missed", "--no-timestamp",
                                   self.path("d.csv"), "-q")
                self.assertEqual(rc, 0, err)
                texts.append(out)
                write(self.path("m.json"), out)
                rc, out, err = run("apply", self.path("m.json"), self.path("d.csv"), "-q")
                self.assertEqual(rc, 0, err)
                applied.append(out)
            self.assertEqual(texts[0], texts[1], kind)
            self.assertEqual(applied[0], applied[1], kind)
            self.assertEqual(len(applied[0].splitlines()), 3001)


if __name__ == "__main__":
    unittest.main()
