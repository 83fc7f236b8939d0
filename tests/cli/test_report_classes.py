"""plumb report with --scores: the multi-class report through the binary,
on the invented outcome data (data/outcomes.csv, 4 classes) and small
hand-written files.

The figures are recomputed here from the rows with the published
definitions (multi-class Brier score, Brier 1950; log loss; top-label ECE,
Guo et al. 2017; class-wise ECE, Kull et al. 2019; equal-width bins
min(9, floor(10 p))), not copied from plumb's output."""
import json
import math
import os
import unittest

import jsonschema  # Debian python3-jsonschema, installed by tests/run.sh

from plumbtest import PlumbCase, SOURCE_DIR, read_rows, run, write

OUTCOMES = os.path.join(SOURCE_DIR, "data", "outcomes.csv")
CLASSES = ["on_time", "late", "lost", "returned"]


def ece(pairs, bins=10):
    """Naeini et al. (2015) ECE of (forecast, label) pairs over equal-width bins."""
    total = {}
    for p, y in pairs:
        b = min(bins - 1, math.floor(bins * p))
        w, f, o = total.get(b, (0, 0.0, 0.0))
        total[b] = (w + 1, f + p, o + y)
    return sum(abs(f - o) for _, f, o in total.values()) / len(pairs)


def figures(path):
    rows = read_rows(path)
    head = rows[0]
    cols = [head.index("p_" + c) for c in CLASSES]
    label = head.index("outcome")
    P, Y = [], []
    for r in rows[1:]:
        P.append([float(r[c]) for c in cols])
        Y.append(CLASSES.index(r[label]))
    n = len(P)
    out = {}
    out["brier"] = sum(sum((p[k] - (k == y)) ** 2 for k in range(4)) for p, y in zip(P, Y)) / n
    out["log_loss"] = sum(-math.log(max(p[y], 1e-12)) for p, y in zip(P, Y)) / n
    top = [max(range(4), key=lambda k: (p[k], -k)) for p in P]  # the first of equal largest
    out["accuracy"] = sum(t == y for t, y in zip(top, Y)) / n
    out["top_label"] = ece([(p[t], 1.0 if t == y else 0.0) for p, t, y in zip(P, top, Y)])
    out["classwise"] = sum(ece([(p[k], 1.0 if y == k else 0.0) for p, y in zip(P, Y)]) for k in range(4)) / 4
    return out


class ReportClassesTest(PlumbCase):
    def test_figures_match_a_direct_computation(self):
        out = self.path("r.json")
        run("report", "--scores", "p_*", "--label", "outcome", "--bootstrap", "0", "-q", OUTCOMES, "--json", out,
            check=True)
        doc = self.load_json(out)
        want = figures(OUTCOMES)
        self.assertEqual(doc["format"], "plumb-class-report")
        self.assertEqual([c["name"] for c in doc["classes"]], CLASSES)
        self.assertEqual(doc["rows"], 8000)
        # Reference: the definitions above, computed in Python from the CSV.
        self.assertAlmostEqual(doc["brier"], want["brier"], delta=1e-9)
        self.assertAlmostEqual(doc["log_loss"], want["log_loss"], delta=1e-9)
        self.assertAlmostEqual(doc["accuracy"], want["accuracy"], delta=1e-12)
        self.assertAlmostEqual(doc["top_label"]["calibration_error"]["equal_width"]["ece"], want["top_label"],
                               delta=1e-9)
        self.assertAlmostEqual(doc["classwise_ece"]["equal_width"], want["classwise"], delta=1e-9)
        self.assertIsNone(doc["bootstrap"])

    def test_terminal_report_and_files(self):
        svg, md = self.path("r.svg"), self.path("r.md")
        rc, out, err = run("report", "--scores", "p_*", "--label", "outcome",
                           "--bootstrap", "20", "--ascii", OUTCOMES, "--svg", svg, "--markdown", md)
        self.assertEqual(rc, 0, err)
        self.assertIn("4 classes", out)
        self.assertIn("[top-label reliability]", out)
        self.assertIn("[reliability: class lost, one-vs-rest]", out)
        self.assertIn("20 replicates", out)
        self.assertTrue(all(ord(c) < 128 for c in out))
        with open(svg) as f:
            self.assertEqual(f.read().count('<g class="diagram">'), 5)
        with open(md) as f:
            self.assertIn("## Classes, one-vs-rest", f.read())

    def test_json_matches_the_published_schema(self):
        with open(os.path.join(SOURCE_DIR, "docs", "class-report.schema.json")) as f:
            schema = json.load(f)
        jsonschema.Draft202012Validator.check_schema(schema)
        for extra in (["--bootstrap", "0"], ["--bootstrap", "10", "--binning", "equal_mass"]):
            with self.subTest(extra=extra):
                out = self.path("s.json")
                run("report", "--scores", "p_*", "--label", "outcome", "-q", *extra, OUTCOMES, "--json", out,
                    check=True)
                jsonschema.validate(self.load_json(out), schema, cls=jsonschema.Draft202012Validator)

    def test_gates(self):
        want = figures(OUTCOMES)
        out = self.path("g.json")
        # Limits on either side of the figures computed above.
        rc, _, err = run("report", "--scores", "p_*", "--label", "outcome", "--bootstrap", "0", "-q", OUTCOMES,
                         "--max", f"brier={want['brier'] + 0.01}", "--min", f"accuracy={want['accuracy'] - 0.01}",
                         "--json", out)
        self.assertEqual(rc, 0, err)
        doc = self.load_json(out)
        self.assertEqual([g["exceeded"] for g in doc["gates"]], [False, False])
        self.assertFalse(doc["any_gate_exceeded"])
        rc, stdout, err = run("report", "--scores", "p_*", "--label", "outcome", "--bootstrap", "0", OUTCOMES,
                              "--max", f"classwise_ece={want['classwise'] - 0.01}", "--json", out)
        self.assertEqual(rc, 7, err)
        self.assertIn("1 of 1 gate failed: classwise_ece = ", err)
        self.assertIn("BREACHED", stdout)
        doc = self.load_json(out)
        self.assertTrue(doc["any_gate_exceeded"])
        self.assertAlmostEqual(doc["gates"][0]["value"], want["classwise"], delta=1e-9)

    def test_class_order_and_thread_count(self):
        a, b = self.path("a.json"), self.path("b.json")
        args = ["report", "--scores", "p_*", "--classes", "late,on_time,lost,returned", "--label", "outcome",
                "--bootstrap", "30", "-q", OUTCOMES]
        run(*args, "--threads", "1", "--json", a, check=True)
        run(*args, "--threads", "2", "--json", b, check=True)
        da, db = self.load_json(a), self.load_json(b)
        self.assertEqual([c["name"] for c in da["classes"]], ["late", "on_time", "lost", "returned"])
        self.assertEqual(da["bootstrap"], db["bootstrap"])
        # The order of the classes changes no figure of the rows as a whole.
        self.assertAlmostEqual(da["brier"], figures(OUTCOMES)["brier"], delta=1e-9)

    def test_logits_read_through_softmax(self):
        rows = read_rows(OUTCOMES)[:401]
        head = rows[0]
        cols = [head.index("p_" + c) for c in CLASSES]
        lab = head.index("outcome")
        prob = "p_a,p_b,p_c,p_d,outcome\n" + "".join(
            ",".join(r[c] for c in cols) + "," + r[lab] + "\n" for r in rows[1:])
        # log p plus a per-row constant: the same probabilities after softmax.
        logit = "p_a,p_b,p_c,p_d,outcome\n" + "".join(
            ",".join(repr(math.log(max(float(r[c]), 1e-300)) + i % 3) for c in cols) + "," + r[lab] + "\n"
            for i, r in enumerate(rows[1:]))
        fp, fl = self.path("p.csv"), self.path("l.csv")
        write(fp, prob.replace("p_a", "p_on_time").replace("p_b", "p_late").replace("p_c", "p_lost")
              .replace("p_d", "p_returned"))
        write(fl, logit.replace("p_a", "p_on_time").replace("p_b", "p_late").replace("p_c", "p_lost")
              .replace("p_d", "p_returned"))
        jp, jl = self.path("p.json"), self.path("l.json")
        run("report", "--scores", "p_*", "--label", "outcome", "--bootstrap", "0", "-q", fp, "--json", jp, check=True)
        run("report", "--scores", "p_*", "--scale", "logit", "--label", "outcome", "--bootstrap", "0", "-q", fl,
            "--json", jl, check=True)
        dp, dl = self.load_json(jp), self.load_json(jl)
        self.assertEqual(dl["scale"], "logit")
        # The rows' sums miss 1 by up to 1e-5 as printed, which softmax removes.
        self.assertAlmostEqual(dp["brier"], dl["brier"], delta=1e-4)
        self.assertAlmostEqual(dp["accuracy"], dl["accuracy"], delta=1e-12)

    def test_a_class_with_no_rows_is_cautioned_not_refused(self):
        path = self.path("three.csv")
        write(path, "p_a,p_b,p_c,y\n" + "".join(
            f"{0.6 if i % 2 else 0.3},{0.3 if i % 2 else 0.6},0.1,{'a' if i % 3 else 'b'}\n" for i in range(60)))
        rc, out, err = run("report", "--scores", "p_*", "--label", "y", "--bootstrap", "0", path)
        self.assertEqual(rc, 0, err)
        self.assertIn("no row is labelled with class 'c'", " ".join(out.split()))

    def test_refusals(self):
        out = self.path("r.json")
        self.assert_refused(["report", "--scores", "p_*", "--score", "p_late", "--label", "outcome", OUTCOMES,
                             "--json", out], 2, "--score cannot be used with --scores", output=out)
        self.assert_refused(["report", "--scores", "p_*", "--label", "outcome", "--max", "ece=0.1", OUTCOMES,
                             "--json", out], 2, "unknown metric", "top_label_ece", output=out)
        self.assert_refused(["report", "--scores", "p_*", "--label", "outcome", "--max", "p_late:brier=0.1",
                             OUTCOMES, "--json", out], 2, "takes no column", output=out)
        self.assert_refused(["report", "--scores", "p_*", "--label", "outcome", "--max", "accuracy=0.9",
                             OUTCOMES, "--json", out], 2, "only --min can", output=out)
        self.assert_refused(["report", "--scores", "p_*", OUTCOMES, "--json", out], 2, "needs --label", output=out)
        self.assert_refused(["report", "--score", "p_late", "--scale", "logit", "--label", "outcome", OUTCOMES], 2,
                            "--scale applies to --scores only")
        self.assert_refused(["report", "--score", "p_late", "--classes", "a,b", "--label", "outcome", OUTCOMES], 2,
                            "apply to --scores only")
        # A label that is not a class: refused, located, and no file left.
        bad = self.path("bad.csv")
        write(bad, "p_a,p_b,y\n0.4,0.6,a\n0.5,0.5,z\n")
        self.assert_refused(["report", "--scores", "p_*", "--label", "y", bad, "--json", out], 3, "bad.csv:3",
                            output=out)


if __name__ == "__main__":
    unittest.main()
