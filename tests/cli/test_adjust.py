"""plumb adjust and fit --negative-rate, end to end: the adjusted artifact
(format version 2) is applied by apply, report --map and inspect with no
option; the odds factor is Bayes' rule on the odds (Saerens, Latinne and
Decaestecker 2002, from memory), recomputed here from the artifact's own base
rate; downsampled negatives are undone exactly (Elkan 2001, from memory); EM
estimates a known new base rate from unlabelled rows; bad options and rows
are refused with their location. All data are simulated (invented)."""
import json
import math
import os
import unittest

import jsonschema

from plumbtest import SOURCE_DIR, Lcg, PlumbCase, read_rows, run, simulated_holdout, write

USAGE, INPUT, FIT = 2, 3, 6


def normal(g):
    """A standard normal draw by Box-Muller from the test generator."""
    u1, u2 = g.uniform(), g.uniform()
    return math.sqrt(-2.0 * math.log(u1)) * math.cos(2.0 * math.pi * u2)


def two_class_rows(n, base_rate, seed):
    """Scores x | y ~ N(y, 1) (log-odds scale), labels at the given base rate."""
    g = Lcg(seed)
    rows = []
    for _ in range(n):
        y = 1 if g.uniform() < base_rate else 0
        rows.append((round(normal(g) + y, 6), y))
    return rows


def multiply_odds(p, k):
    return k * p / (k * p + 1.0 - p)


class Adjust(PlumbCase):
    def fit_holdout(self, kind="platt", extra=()):
        rows = simulated_holdout(3000, seed=21)
        write(self.path("h.csv"), "id,risk,missed\n" + "".join(f"r{i},{s},{y}\n" for i, (s, y) in enumerate(rows)))
        run("fit", "-q", "--map", kind, "--score", "risk", "--label", "missed", "--no-timestamp", *extra,
            self.path("h.csv"), "-o", self.path("m.json"), check=True)
        return rows

    def test_a_known_prior_is_applied_by_apply_report_and_inspect(self):
        # Without the drift reference (version 5), so that the versions are
        # those of the odds adjustment alone: 1 as fitted, 2 adjusted.
        rows = self.fit_holdout(extra=("--no-reference",))
        rc, _, err = run("adjust", self.path("m.json"), "--prior", "0.3", "-o", self.path("m30.json"))
        self.assertEqual(rc, 0, err)
        self.assertIn("base rate", err)
        self.assertIn("-> 0.3, odds x", err)
        self.assertIn("caution: a prior shift assumes only the base rate changed", err)
        plain, adjusted = self.load_json(self.path("m.json")), self.load_json(self.path("m30.json"))
        self.assertEqual(plain["format_version"], 1)
        self.assertNotIn("odds_adjustment", plain)
        self.assertEqual(adjusted["format_version"], 2)
        self.assertEqual(adjusted["parameters"], plain["parameters"])  # the fitted map is kept as fitted
        # Bayes' rule on the odds, from the base rate the artifact records.
        a = plain["provenance"]["positives"] / plain["provenance"]["weight_total"]
        self.assertEqual(a, sum(y for _, y in rows) / len(rows))
        k = (0.3 / 0.7) / (a / (1.0 - a))
        step = adjusted["odds_adjustment"]["steps"][0]
        self.assertEqual(step["reason"], "prior_shift")
        self.assertAlmostEqual(step["base_rate_from"], a, places=15)
        self.assertEqual(step["base_rate_to"], 0.3)
        self.assertAlmostEqual(step["factor"] / k, 1.0, places=13)
        self.assertAlmostEqual(adjusted["odds_adjustment"]["factor"] / k, 1.0, places=13)

        # apply: every row's probability has its odds multiplied by k.
        _, before, _ = run("apply", "-q", self.path("m.json"), self.path("h.csv"), check=True)
        _, after, err = run("apply", self.path("m30.json"), self.path("h.csv"), check=True)
        self.assertIn(f"the map's odds are adjusted as its artifact records, x {k:.6g} (prior shift, base rate "
                      f"{a:.4g} -> 0.3)", err)
        before, after = read_rows(before, True)[1:], read_rows(after, True)[1:]
        self.assertEqual(len(after), len(rows))
        for b, c in zip(before, after):
            self.assertAlmostEqual(float(c[-1]), multiply_odds(float(b[-1]), k), places=14)
        self.assertTrue(any(abs(float(c[-1]) - float(b[-1])) > 0.05 for b, c in zip(before, after)))

        # report --map: the adjusted probabilities, with a caution saying so.
        rc, out, err = run("report", "--map", self.path("m30.json"), "--label", "missed", "--bootstrap", "0",
                           "--json", self.path("r.json"), self.path("h.csv"))
        self.assertEqual(rc, 0, err)
        report = self.load_json(self.path("r.json"))
        mean_after = sum(float(c[-1]) for c in after) / len(after)
        self.assertAlmostEqual(report["scores"][0]["mean_forecast"], mean_after, places=12)
        self.assertTrue(any("the map's odds are adjusted" in c and "prior shift" in c for c in report["cautions"]))
        self.assertIn("the map's odds are adjusted", " ".join(out.split()))

        # inspect: the version, the factor and the step.
        rc, out, err = run("inspect", self.path("m30.json"))
        self.assertEqual(rc, 0, err)
        self.assertIn("version 2", out)
        self.assertIn(f"base rate {a:.4g} -> 0.3 (given)", out)
        self.assertIn("plumb apply and plumb report --map use the adjusted map", out)
        rc, out, _ = run("inspect", "--json", self.path("m30.json"))
        self.assertEqual(json.loads(out), adjusted)
        # An unadjusted artifact still reads as version 1, unchanged.
        rc, out, _ = run("inspect", self.path("m.json"))
        self.assertIn("version 1", out)
        self.assertNotIn("odds", out)

    def test_a_second_shift_starts_where_the_first_ended(self):
        self.fit_holdout()
        run("adjust", "-q", self.path("m.json"), "--prior", "0.3", "-o", self.path("m30.json"), check=True)
        run("adjust", "-q", self.path("m30.json"), "--prior", "0.1", "-o", self.path("m10.json"), check=True)
        run("adjust", "-q", self.path("m.json"), "--prior", "0.1", "-o", self.path("direct.json"), check=True)
        twice, once = self.load_json(self.path("m10.json")), self.load_json(self.path("direct.json"))
        self.assertAlmostEqual(twice["odds_adjustment"]["steps"][1]["base_rate_from"], 0.3, places=15)
        self.assertAlmostEqual(twice["odds_adjustment"]["factor"] / once["odds_adjustment"]["factor"], 1.0, places=13)

    def test_negatives_downsampled_in_the_fit_rows_are_undone_exactly(self):
        # Every score's negatives are a multiple of 4 and the sample keeps one
        # in four: isotonic pools the same scores with odds x 4, so the map of
        # the sample with odds x 0.25 is the map of the full rows.
        g = Lcg(5)
        full, sample = [], []
        for j in range(40):
            s = round((j + 0.5) / 40, 6)
            positives = int(12 * s * g.uniform()) + (1 if j % 5 == 0 else 0)
            negatives = 4 * (1 + int(8 * (1 - s) * g.uniform()))
            full += [(s, 1)] * positives + [(s, 0)] * negatives
            sample += [(s, 1)] * positives + [(s, 0)] * (negatives // 4)
        for name, rows in (("full.csv", full), ("sample.csv", sample)):
            write(self.path(name), "risk,missed\n" + "".join(f"{s},{y}\n" for s, y in rows))
        common = ["fit", "-q", "--map", "isotonic", "--score", "risk", "--label", "missed", "--no-timestamp"]
        run(*common, self.path("full.csv"), "-o", self.path("full.json"), check=True)
        rc, _, err = run(*common[:1], *common[2:], "--negative-rate", "0.25", self.path("sample.csv"),
                         "-o", self.path("corrected.json"))
        self.assertEqual(rc, 0, err)
        self.assertIn("odds x 0.25 for negatives kept at rate 0.25", err)
        run(*common, self.path("sample.csv"), "-o", self.path("sample.json"), check=True)
        run("adjust", "-q", self.path("sample.json"), "--negative-rate", "0.25", "-o", self.path("later.json"),
            check=True)
        outputs = {}
        for name in ("full", "corrected", "sample", "later"):
            _, out, _ = run("apply", "-q", self.path(name + ".json"), self.path("full.csv"), check=True)
            outputs[name] = [float(r[-1]) for r in read_rows(out, True)[1:]]
        for f, c, l in zip(outputs["full"], outputs["corrected"], outputs["later"]):
            self.assertAlmostEqual(c, f, places=13)
            self.assertEqual(c, l)  # at fit time or afterwards: the same map
        self.assertTrue(max(abs(s - f) for s, f in zip(outputs["sample"], outputs["full"])) > 0.1)
        corrected = self.load_json(self.path("corrected.json"))
        self.assertEqual(corrected["odds_adjustment"]["steps"],
                         [{"reason": "negative_sampling", "negative_rate": 0.25, "factor": 0.25}])
        self.assertEqual(corrected["fit"], self.load_json(self.path("sample.json"))["fit"])
        rc, out, _ = run("inspect", self.path("corrected.json"))
        self.assertIn("negatives were kept at rate 0.25 in the fit rows", out)

    def test_em_estimates_a_known_base_rate_from_unlabelled_rows(self):
        train = two_class_rows(20000, 0.17, seed=3)
        new = two_class_rows(20000, 0.35, seed=4)
        write(self.path("train.csv"), "z,late\n" + "".join(f"{x},{y}\n" for x, y in train))
        # The new rows carry no label; one row has a missing score.
        write(self.path("new.csv"), "z\n" + "".join(f"{x}\n" for x, _ in new) + "NA\n")
        run("fit", "-q", "--map", "platt", "--platt-targets", "labels", "--scale", "logit", "--score", "z",
            "--label", "late", "--no-timestamp", self.path("train.csv"), "-o", self.path("m.json"), check=True)
        self.assert_refused(["adjust", self.path("m.json"), "--estimate-prior", self.path("new.csv"),
                             "-o", self.path("bad.json")], INPUT, "new.csv:20002:1 (column 'z')", "the score is missing",
                            "--missing skip", output=self.path("bad.json"))
        args = ["adjust", self.path("m.json"), "--estimate-prior", self.path("new.csv"), "--missing", "skip"]
        rc, _, err = run(*args, "-o", self.path("em.json"))
        self.assertEqual(rc, 0, err)
        self.assertIn("base rate estimated by EM from 20,000 rows", err)
        self.assertNotIn("no clear shift", err)
        estimate = self.load_json(self.path("em.json"))["odds_adjustment"]["steps"][0]
        b = estimate["base_rate_to"]
        lo, hi = estimate["estimate"]["interval"]
        self.assertLess(abs(b - 0.35), 0.03)
        self.assertLess(lo, b)
        self.assertLess(b, hi)
        self.assertLess(hi - lo, 0.05)
        self.assertEqual(estimate["estimate"]["rows"], 20000)
        self.assertEqual(estimate["estimate"]["rows_skipped"], 1)
        self.assertEqual(estimate["estimate"]["method"], "em")
        self.assertEqual(estimate["estimate"]["bootstrap"], 300)
        # The same seed gives the same bytes, whatever the threads.
        run(*args, "--threads", "1", "-o", self.path("em1.json"), check=True)
        run(*args, "--threads", "3", "-o", self.path("em3.json"), check=True)
        with open(self.path("em1.json")) as f1, open(self.path("em3.json")) as f3, open(self.path("em.json")) as f:
            self.assertEqual(f1.read(), f3.read())
            f3.seek(0)
            self.assertEqual(f.read(), f3.read())
        # Rows of the fit's own population: the interval holds its base rate.
        write(self.path("same.csv"), "z\n" + "".join(f"{x}\n" for x, _ in two_class_rows(5000, 0.17, seed=6)))
        rc, _, err = run("adjust", self.path("m.json"), "--estimate-prior", self.path("same.csv"),
                         "-o", self.path("same.json"))
        self.assertEqual(rc, 0, err)
        self.assertIn("the interval holds the map's base rate 0.17", err)
        self.assertIn("these rows show no clear shift", err)
        rc, out, _ = run("inspect", self.path("em.json"))
        self.assertIn("estimated by EM from 20,000 rows of", out)
        # Intervals are written "[lo, hi]" in every output (the formatting rule, docs/cli.md).
        self.assertRegex(out, r"95% bootstrap interval \[0\.\d+, 0\.\d+\]")

    def test_adjusted_artifacts_match_the_published_schema(self):
        with open(os.path.join(SOURCE_DIR, "docs", "artifact.schema.json")) as f:
            schema = json.load(f)
        jsonschema.Draft202012Validator.check_schema(schema)
        validator = jsonschema.Draft202012Validator(schema)
        self.fit_holdout("isotonic")
        write(self.path("new.csv"), "risk\n" + "".join(f"{s}\n" for s, _ in simulated_holdout(500, seed=8)))
        run("adjust", "-q", self.path("m.json"), "--negative-rate", "0.5", "--estimate-prior", self.path("new.csv"),
            "--bootstrap", "50", "-o", self.path("em.json"), check=True)
        run("adjust", "-q", self.path("em.json"), "--prior", "0.2", "-o", self.path("p.json"), check=True)
        for name in ("m.json", "em.json", "p.json"):
            doc = self.load_json(self.path(name))
            self.assertEqual([e.message for e in validator.iter_errors(doc)], [], name)
        doc = self.load_json(self.path("p.json"))
        self.assertEqual([s["reason"] for s in doc["odds_adjustment"]["steps"]],
                         ["negative_sampling", "prior_shift", "prior_shift"])
        doc["format_version"] = 1
        self.assertTrue(list(validator.iter_errors(doc)), "the schema accepts an adjustment in version 1")

    def test_em_with_nothing_to_estimate_is_refused(self):
        write(self.path("t.csv"), "s,y\n" + "0.1,0\n" * 20 + "0.9,1\n" * 20)
        run("fit", "-q", "--map", "isotonic", "--score", "s", "--label", "y", self.path("t.csv"),
            "-o", self.path("m.json"), check=True)
        # Every row below the first block: one probability (0) for all, which
        # says nothing about the base rate.
        write(self.path("same.csv"), "s\n" + "0.05\n" * 30)
        self.assert_refused(["adjust", self.path("m.json"), "--estimate-prior", self.path("same.csv"),
                             "-o", self.path("out.json")], FIT, "same.csv",
                            "the map gives every row the same probability", output=self.path("out.json"))
        # Probabilities 0 and 0.125 only, for a map of base rate 0.5: the
        # likelihood is greatest at a base rate of 0, which has no odds.
        write(self.path("zeros.csv"), "s\n" + "0.1\n" * 30 + "0.2\n")
        self.assert_refused(["adjust", self.path("m.json"), "--estimate-prior", self.path("zeros.csv"),
                             "-o", self.path("out.json")], FIT, "zeros.csv", "the estimated base rate is 0",
                            output=self.path("out.json"))

    def test_refusals_name_the_option(self):
        self.fit_holdout()
        m = self.path("m.json")
        out = self.path("out.json")
        self.assert_refused(["adjust", m, "-o", out], USAGE, "nothing to adjust", "--prior RATE", output=out)
        for bad in ("0", "1", "1.5", "-0.2", "nan"):
            self.assert_refused(["adjust", m, "--prior", bad, "-o", out], USAGE, "--prior lies outside (0, 1)",
                                output=out)
        for bad in ("0", "1.5", "-1"):
            self.assert_refused(["adjust", m, "--negative-rate", bad, "-o", out], USAGE,
                                "--negative-rate lies outside (0, 1]", output=out)
            # fit refuses before reading: the file need not exist.
            self.assert_refused(["fit", "--map", "platt", "--score", "risk", "--label", "missed", "--negative-rate",
                                 bad, self.path("absent.csv"), "-o", out], USAGE,
                                "--negative-rate lies outside (0, 1]", output=out)
        self.assert_refused(["adjust", m, "--prior", "0.3", "--estimate-prior", self.path("h.csv"), "-o", out],
                            USAGE, "--prior and --estimate-prior", output=out)
        self.assert_refused(["adjust", m, "--prior", "0.3", "--bootstrap", "100", "-o", out], USAGE,
                            "--bootstrap only applies to the rows of --estimate-prior", output=out)
        self.assert_refused(["adjust", "-", "--estimate-prior", "-", "-o", out], USAGE,
                            "cannot both read standard input", output=out)
        rc, _, err = run("adjust", m, "--negative-rate", "1", "-o", out)
        self.assertEqual(rc, 0)  # every negative kept: factor 1, recorded
        self.assertNotIn("already recorded downsampled negatives", err)
        rc, _, err = run("adjust", out, "--negative-rate", "0.5", "-o", self.path("twice.json"))
        self.assertEqual(rc, 0)
        self.assertIn("caution: the map already recorded downsampled negatives", err)

    def test_a_version_1_document_with_an_adjustment_is_refused(self):
        self.fit_holdout()
        run("adjust", "-q", self.path("m.json"), "--prior", "0.3", "-o", self.path("m30.json"), check=True)
        doc = self.load_json(self.path("m30.json"))
        doc["format_version"] = 1
        # Re-hash so that only the version rule can refuse it.
        import hashlib
        doc.pop("integrity_sha256")
        text = json.dumps(doc, sort_keys=True, separators=(",", ":"), ensure_ascii=False)
        doc["integrity_sha256"] = hashlib.sha256(text.encode("utf-8")).hexdigest()
        write(self.path("v1.json"), json.dumps(doc))
        self.assert_refused(["inspect", self.path("v1.json")], 4, "odds_adjustment",
                            "format version 2 for a map with an odds adjustment")


if __name__ == "__main__":
    unittest.main()
