"""Multi-class fit, apply and inspect through the binary, on the invented
outcome data (examples/make_outcome_data.py) and small hand-written files.

The expected probabilities are recomputed here from the artifact's parameters
with the published formulas (Guo et al. 2017, temperature and vector scaling;
Kull et al. 2019, Dirichlet calibration: softmax of a linear map of the
log-probabilities), not copied from plumb's output."""
import json
import math
import os
import unittest

import jsonschema  # Debian python3-jsonschema, installed by tests/run.sh

from plumbtest import PlumbCase, SOURCE_DIR, read_rows, run, write

OUTCOMES = os.path.join(SOURCE_DIR, "data", "outcomes.csv")
TONIGHT = os.path.join(SOURCE_DIR, "data", "outcomes_tonight.csv")
CLASSES = ["on_time", "late", "lost", "returned"]


def log_probabilities(p):
    p = [max(v, 1e-15) for v in p]
    s = math.log(sum(p))
    return [math.log(v) - s for v in p]


def softmax(eta):
    m = max(eta)
    e = [math.exp(v - m) for v in eta]
    return [v / sum(e) for v in e]


class MultiClassTest(PlumbCase):
    def fit(self, kind, *extra):
        out = self.path(kind + ".map.json")
        run("fit", "--map", kind, "--scores", "p_*", "--label", "outcome", "--no-timestamp", *extra, OUTCOMES,
            "-o", out, check=True)
        return out, self.load_json(out)

    def test_fit_writes_version_4_with_classes(self):
        _, doc = self.fit("vector")
        self.assertEqual(doc["format_version"], 4)
        self.assertEqual(doc["classes"], CLASSES)
        self.assertEqual(doc["input"]["score_columns"], ["p_" + c for c in CLASSES])
        self.assertEqual(sum(doc["provenance"]["class_weights"]), 8000)
        self.assertTrue(doc["fit"]["converged"])

    def test_every_kind_matches_the_published_schema(self):
        with open(os.path.join(SOURCE_DIR, "docs", "class-artifact.schema.json")) as f:
            schema = json.load(f)
        jsonschema.Draft202012Validator.check_schema(schema)
        for kind in ("temperature", "vector", "dirichlet", "one_vs_rest"):
            with self.subTest(kind=kind):
                _, doc = self.fit(kind)
                jsonschema.validate(doc, schema, cls=jsonschema.Draft202012Validator)

    def test_apply_matches_the_formulas_for_each_kind(self):
        rows = read_rows(TONIGHT)[:200]
        small = self.path("small.csv")
        write(small, "\n".join(",".join(r) for r in rows) + "\n")
        for kind, extra in (("temperature", ()), ("vector", ()), ("dirichlet", ("--l2", "0.001"))):
            with self.subTest(kind=kind):
                path, doc = self.fit(kind, *extra)
                out = self.path(kind + ".out.csv")
                run("apply", path, small, "-o", out, "--argmax", "likely", check=True)
                got = read_rows(out)
                self.assertEqual(got[0], rows[0] + ["p_" + c + "_calibrated" for c in CLASSES] + ["likely"])
                prm = doc["parameters"]
                for r_in, r_out in zip(rows[1:], got[1:]):
                    self.assertEqual(r_out[:len(r_in)], r_in)  # passed through
                    l = log_probabilities([float(v) for v in r_in[3:7]])
                    if kind == "temperature":
                        eta = [v / prm["temperature"] for v in l]
                    elif kind == "vector":
                        eta = [a * v + b for a, v, b in zip(prm["scale"], l, prm["bias"])]
                    else:
                        eta = [sum(w * v for w, v in zip(row, l)) + b for row, b in zip(prm["matrix"], prm["bias"])]
                    q = softmax(eta)
                    got_q = [float(v) for v in r_out[len(r_in):len(r_in) + 4]]
                    for a, b in zip(got_q, q):
                        self.assertAlmostEqual(a, b, delta=1e-12)
                    self.assertEqual(r_out[-1], CLASSES[max(range(4), key=lambda k: (got_q[k], -k))])

    def test_apply_passes_quoted_fields_and_crlf_through(self):
        path, _ = self.fit("vector")
        src = self.path("q.csv")
        with open(src, "wb") as f:
            f.write(b'id,note,p_on_time,p_late,p_lost,p_returned\r\n1,"a, ""quoted""\nnote",0.7,0.1,0.1,0.1\r\n'
                    b'2,plain,0.25,0.25,0.25,0.25\r\n')
        out = self.path("q.out.csv")
        run("apply", path, src, "--argmax", "likely, class", "-o", out, check=True)
        with open(out, "rb") as f:
            lines = f.read().split(b"\r\n")
        self.assertTrue(lines[0].endswith(b',p_returned_calibrated,"likely, class"'))
        self.assertTrue(lines[1].startswith(b'1,"a, ""quoted""\nnote",0.7,0.1,0.1,0.1,'))
        self.assertTrue(lines[2].startswith(b"2,plain,0.25,0.25,0.25,0.25,"))
        self.assertEqual(lines[3], b"")
        self.assertEqual(len(lines[2].split(b",")), 6 + 4 + 1)

    def test_apply_is_the_same_for_any_thread_count(self):
        path, _ = self.fit("dirichlet")
        outputs = []
        for threads in ("1", "2", "3"):
            out = self.path("t" + threads + ".csv")
            run("apply", path, TONIGHT, "--threads", threads, "-o", out, check=True)
            with open(out, "rb") as f:
                outputs.append(f.read())
        self.assertEqual(outputs[0], outputs[1])
        self.assertEqual(outputs[0], outputs[2])

    def test_one_vs_rest_and_inspect(self):
        path, doc = self.fit("one_vs_rest", "--per-class", "platt")
        self.assertEqual(doc["parameters"]["per_class"], "platt")
        self.assertEqual(len(doc["parameters"]["maps"]), 4)
        rc, out, err = run("inspect", path)
        self.assertEqual(rc, 0, err)
        self.assertIn("one_vs_rest map on 4 classes (format plumb-map version 4", out)
        for c in CLASSES:
            self.assertIn("class '" + c + "'", out)
        path, _ = self.fit("dirichlet", "--l2", "0.01")
        rc, out, err = run("inspect", path)
        self.assertIn("l_returned", out)

    def test_cross_fit_chooses_by_out_of_fold_log_loss(self):
        out, ev = self.path("cf.json"), self.path("ev.json")
        rc, _, err = run("cross-fit", "--scores", "p_*", "--label", "outcome", "--folds", "3", "--no-timestamp",
                         "--json", ev, "-o", out, OUTCOMES)
        self.assertEqual(rc, 0, err)
        doc, evidence = self.load_json(out), self.load_json(ev)
        self.assertEqual(doc["cross_fit"], evidence)
        names = [c["name"] for c in evidence["candidates"]]
        self.assertEqual(names, ["temperature", "vector", "dirichlet l2=1", "dirichlet l2=0.1", "dirichlet l2=0.01",
                                 "dirichlet l2=0.001", "one_vs_rest isotonic"])
        best = min(evidence["candidates"], key=lambda c: c["log_loss"])
        chosen = [c for c in evidence["candidates"] if c["name"] == evidence["chosen"]][0]
        self.assertLessEqual(chosen["log_loss_minus_best"], chosen["log_loss_minus_best_se"])
        self.assertLessEqual(best["log_loss"], chosen["log_loss"])
        self.assertEqual(doc["kind"], chosen["kind"])
        # The over-confident scores lose to every scaling map out of fold.
        self.assertLess(chosen["log_loss"], [c for c in evidence["candidates"]
                                             if c["name"] == "temperature"][0]["log_loss"] + 1e-12)
        with open(os.path.join(SOURCE_DIR, "docs", "class-artifact.schema.json")) as f:
            jsonschema.validate(doc, json.load(f), cls=jsonschema.Draft202012Validator)
        self.assert_refused(["cross-fit", "--scores", "p_*", "--label", "outcome", "--negative-rate", "0.5",
                             OUTCOMES, "-o", out + ".2"], 2, "--negative-rate does not apply with --scores",
                            output=out + ".2")

    def test_refusals_are_located_and_leave_nothing(self):
        bad = self.path("bad.csv")
        out = self.path("m.json")
        write(bad, "p_a,p_b,y\n0.5,0.5,a\n0.5,0.5, b\n")
        self.assert_refused(["fit", "--map", "vector", "--scores", "p_*", "--label", "y", bad, "-o", out], 3,
                            "bad.csv:3:3", "(column 'y')", "the label has spaces or tabs around it", output=out)
        write(bad, "p_a,p_b,y\n0.5,0.5,a\n0.5,0.4,b\n")
        self.assert_refused(["fit", "--map", "vector", "--scores", "p_*", "--label", "y", bad, "-o", out], 3,
                            "bad.csv:3:1", "sum to 0.9", "--sum-tolerance", output=out)
        write(bad, "p_a,p_b,y\n0.5,0.5,a\n0.5,0.5,c\n")
        self.assert_refused(["fit", "--map", "vector", "--scores", "p_*", "--label", "y", bad, "-o", out], 3,
                            "bad.csv:3:3", "not one of the classes", output=out)
        write(bad, "p_a,q,y\n1,0,a\n")
        self.assert_refused(["fit", "--map", "vector", "--scores", "p_*", "--label", "y", bad, "-o", out], 3,
                            "bad.csv:1:1", "K = 1", output=out)
        write(bad, "a,b,y\n1,inf,a\n")
        self.assert_refused(["fit", "--map", "vector", "--scores", "a,b", "--scale", "logit", "--label", "y", bad,
                             "-o", out], 3, "bad.csv:2:2", "the logit is not finite", output=out)
        write(bad, "p_a,p_b,y\n0.5,0.5,a\n0.5,0.5,a\n")
        self.assert_refused(["fit", "--map", "vector", "--scores", "p_*", "--label", "y", bad, "-o", out], 6,
                            "the class 'b' has no row of positive weight", output=out)
        self.assert_refused(["fit", "--map", "vector", "--scores", "p_*", "--classes", "a,a", "--label", "y", bad,
                             "-o", out], 2, "--classes names a class twice", output=out)
        self.assert_refused(["fit", "--map", "isotonic", "--scores", "p_*", "--label", "y", bad, "-o", out], 2,
                            "does not take --scores", output=out)
        self.assert_refused(["fit", "--map", "dirichlet", "--score", "p_a", "--label", "y", bad, "-o", out], 2,
                            "the dirichlet map is a multi-class kind and needs --scores", output=out)
        # apply: a missing score is refused at its cell, and no output is left.
        path, _ = self.fit("temperature")
        # A binary reader refuses the multi-class map rather than misread it.
        self.assert_refused(["report", "--score", "p_late", "--label", "outcome", "--map", path, OUTCOMES], 4,
                            "the map artifact holds a multi-class map")
        write(bad, "p_on_time,p_late,p_lost,p_returned\n0.7,0.1,0.1,0.1\n0.7,NA,0.1,0.1\n")
        self.assert_refused(["apply", path, bad, "-o", out], 3, "bad.csv:3:2", "the score is missing",
                            "--missing skip", output=out)
        write(bad, "p_on_time,p_late,p_lost,p_returned\n0.7,0.1,0.1,0.1\n0.7,0.2,0.1,0.1\n")
        self.assert_refused(["apply", path, bad, "-o", out], 3, "bad.csv:3:1", "sum to 1.1",
                            "or --sum-tolerance to widen it", output=out)
        rc, text, err = run("apply", path, bad, "--sum-tolerance", "0.2")
        self.assertEqual(rc, 0, err)
        write(bad, "p_on_time,p_late,p_lost,p_returned\n0.7,0.1,0.1,0.1\n0.7,NA,0.1,0.1\n")
        rc, text, err = run("apply", path, bad, "--missing", "empty")
        self.assertEqual(rc, 0, err)
        self.assertEqual(text.splitlines()[2], "0.7,NA,0.1,0.1,,,,")


if __name__ == "__main__":
    unittest.main()
