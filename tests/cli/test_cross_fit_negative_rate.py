"""plumb cross-fit --negative-rate, end to end: a rate of 1 changes no figure,
the chosen map is the one fit --negative-rate gives on the same rows, and the
evidence is that of the population the rows were drawn from: every
out-of-fold probability has its odds multiplied by the rate (Elkan 2001,
theorem 2, from memory: p' = r p / (r p + 1 - p) for negatives kept at rate
r) and every negative row weighs 1 / r (inverse-probability weights,
Horvitz and Thompson 1952), checked against those formulas computed here."""
import json
import math
import unittest

from plumbtest import Lcg, PlumbCase, read_rows, run, simulated_holdout, write

USAGE = 2  # the documented exit code of a usage error (docs/cli.md)


def sampled_rows(n, rate, seed):
    """simulated_holdout's rows with each negative kept at `rate`."""
    g = Lcg(seed + 1000)
    return [(s, y) for s, y in simulated_holdout(n, seed=seed) if y == 1 or g.uniform() < rate]


class CrossFitNegativeRate(PlumbCase):
    def setUp(self):
        super().setUp()
        self.data = self.path("sample.csv")
        write(self.data, "risk,missed\n" + "".join(f"{s},{y}\n" for s, y in sampled_rows(4000, 0.25, 12)))

    def cross_fit(self, tag, *args):
        art, oof, ev = self.path(tag + ".map.json"), self.path(tag + ".oof.csv"), self.path(tag + ".ev.json")
        rc, _, err = run("cross-fit", "--no-timestamp", "--score", "risk", "--label", "missed", "--seed", "3",
                         self.data, "-o", art, "--oof", oof, "--json", ev, *args)
        self.assertEqual(rc, 0, err)
        return art, oof, ev, err

    def test_a_rate_of_one_changes_no_figure_and_records_the_step(self):
        plain = self.cross_fit("plain", "--map", "isotonic,platt,beta")
        one = self.cross_fit("one", "--map", "isotonic,platt,beta", "--negative-rate", "1")
        with open(plain[1], "rb") as a, open(one[1], "rb") as b:
            self.assertEqual(a.read(), b.read())  # the --oof files, byte for byte
        ev_plain, ev_one = self.load_json(plain[2]), self.load_json(one[2])
        self.assertEqual(ev_one.pop("negative_rate"), 1)
        self.assertEqual(ev_plain, ev_one)
        a, b = self.load_json(plain[0]), self.load_json(one[0])
        for key in ("kind", "parameters", "fit", "input"):
            self.assertEqual(a[key], b[key], key)
        self.assertNotIn("odds_adjustment", a)
        self.assertEqual(b["odds_adjustment"]["steps"],
                         [{"reason": "negative_sampling", "negative_rate": 1, "factor": 1}])

    def test_the_chosen_map_is_fit_negative_rate_on_the_same_rows(self):
        for kind in ("platt", "isotonic", "beta"):
            art, _, _, err = self.cross_fit(kind, "--map", kind, "--negative-rate", "0.25")
            self.assertIn("odds x 0.25", err)
            fitted = self.path(kind + ".fit.json")
            run("fit", "-q", "--no-timestamp", "--map", kind, "--score", "risk", "--label", "missed",
                "--negative-rate", "0.25", self.data, "-o", fitted, check=True)
            a, b = self.load_json(art), self.load_json(fitted)
            for key in ("format_version", "kind", "parameters", "fit", "odds_adjustment", "input"):
                self.assertEqual(json.dumps(a[key]), json.dumps(b[key]), f"{kind}: {key}")
            # Applied to the rows, the two artifacts give the same bytes.
            _, out_a, _ = run("apply", "-q", art, self.data, check=True)
            _, out_b, _ = run("apply", "-q", fitted, self.data, check=True)
            self.assertEqual(out_a, out_b, kind)

    def test_the_evidence_is_the_population_s(self):
        r = 0.25
        _, plain_oof, _, _ = self.cross_fit("plain", "--map", "platt,isotonic")
        _, oof, ev, err = self.cross_fit("rate", "--map", "platt,isotonic", "--negative-rate", "0.25")
        self.assertIn("negatives kept at rate 0.25: each negative row weighs 4 and each map's probability has odds x 0.25",
                      err)
        plain, adjusted = read_rows(plain_oof), read_rows(oof)
        header = adjusted[0]
        self.assertEqual(header, plain[0])
        evidence = self.load_json(ev)
        self.assertEqual(evidence["negative_rate"], 0.25)
        labels = [int(row[1]) for row in adjusted[1:]]
        weights = [1.0 if y == 1 else 1.0 / r for y in labels]
        total = sum(weights)
        for kind in ("platt", "isotonic"):
            col = header.index("oof_" + kind)
            p_plain = [float(row[col]) for row in plain[1:]]
            p = [float(row[col]) for row in adjusted[1:]]
            for q, q_adj in zip(p_plain, p):
                # Elkan (2001): the population's odds are the sample's times r.
                self.assertAlmostEqual(q_adj, r * q / (r * q + 1.0 - q), delta=4e-16 + 4e-15 * q_adj)
            # The log loss in nats, sum w -(y ln p + (1 - y) ln(1 - p)) / W,
            # p clipped to [1e-12, 1 - 1e-12] (docs/methods_metrics.md).
            c = [min(max(q, 1e-12), 1 - 1e-12) for q in p]
            loss = sum(w * -(math.log(q) if y else math.log1p(-q)) for q, y, w in zip(c, labels, weights)) / total
            brier = sum(w * (q - y) ** 2 for q, y, w in zip(p, labels, weights)) / total
            figures = next(c for c in evidence["candidates"] if c["kind"] == kind)
            self.assertAlmostEqual(figures["log_loss"], loss, places=12)
            self.assertAlmostEqual(figures["brier"], brier, places=13)
        # The raw score is judged as given, on the same weights.
        raw = [float(row[0]) for row in adjusted[1:]]
        brier_raw = sum(w * (q - y) ** 2 for q, y, w in zip(raw, labels, weights)) / total
        self.assertAlmostEqual(evidence["raw"]["brier"], brier_raw, places=13)

    def test_a_rate_outside_the_unit_interval_is_refused_before_reading(self):
        out = self.path("never.json")
        for bad in ("0", "1.5", "-0.2"):
            self.assert_refused(["cross-fit", "--score", "risk", "--label", "missed", "--negative-rate", bad,
                                 self.path("absent.csv"), "-o", out], USAGE,
                                "--negative-rate lies outside (0, 1]", output=out)

    def test_the_averaged_fold_maps_carry_the_step_too(self):
        art, _, _, _ = self.cross_fit("folds", "--map", "platt", "--final", "folds", "--negative-rate", "0.5")
        doc = self.load_json(art)
        self.assertEqual(doc["odds_adjustment"]["factor"], 0.5)
        unadjusted, _, _, _ = self.cross_fit("folds1", "--map", "platt", "--final", "folds")
        _, a, _ = run("apply", "-q", art, self.data, check=True)
        _, b, _ = run("apply", "-q", unadjusted, self.data, check=True)
        for x, y in zip(read_rows(a, True)[1:], read_rows(b, True)[1:]):
            q = float(y[-1])
            self.assertAlmostEqual(float(x[-1]), 0.5 * q / (0.5 * q + 1.0 - q), delta=1e-15)


if __name__ == "__main__":
    unittest.main()
