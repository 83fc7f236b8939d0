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


def split_outcomes(case):
    """The demo rows cut in two: the first 4000 to fit maps on, the last 4000 to report."""
    with open(OUTCOMES) as f:
        lines = f.read().splitlines(keepends=True)
    fit, holdout = case.path("fit.csv"), case.path("holdout.csv")
    write(fit, "".join(lines[:4001]))
    write(holdout, lines[0] + "".join(lines[4001:]))
    return fit, holdout


# The members of a model that describe its figures (not its name, columns or origin).
FIGURES = ("rows", "weight", "brier", "log_loss", "label_probability_zero", "accuracy", "mean_confidence",
           "confidence_gap", "top_label", "classwise_ece", "classes", "bootstrap")


class ReportClassMapTest(PlumbCase):
    """report --scores COLS --map FILE: the scores as read and each map's model side by side."""

    def setUp(self):
        super().setUp()
        self.fit, self.holdout = split_outcomes(self)
        self.temp, self.vec = self.path("temp.map.json"), self.path("vector.map.json")
        run("fit", "--scores", "p_*", "--label", "outcome", "--map", "temperature", "-o", self.temp, "-q", self.fit,
            check=True)
        run("fit", "--scores", "p_*", "--label", "outcome", "--map", "vector", "-o", self.vec, "-q", self.fit,
            check=True)

    def report(self, *extra, json_name="m.json", bootstrap="20"):
        out = self.path(json_name)
        rc, stdout, err = run("report", "--scores", "p_*", "--label", "outcome", "--bootstrap", bootstrap,
                              self.holdout, "--json", out, *extra)
        self.assertIn(rc, (0, 7), err)
        return rc, stdout, err, self.load_json(out)

    def test_the_map_model_equals_apply_then_report(self):
        # plumb apply writes the calibrated columns; reporting them must give
        # the map's model of report --map bit for bit (the same doubles).
        applied = self.path("applied.csv")
        run("apply", self.temp, self.holdout, "-o", applied, "-q", check=True)
        a = self.path("a.json")
        run("report", "--scores", "p_*_calibrated", "--label", "outcome", "--bootstrap", "20", "-q", applied,
            "--json", a, check=True)
        applied_doc = self.load_json(a)
        _, _, _, doc = self.report("--map", self.temp, "-q")
        self.assertEqual(doc["format_version"], 2)
        self.assertEqual([m["name"] for m in doc["models"]], ["p_*", "p_* via temp.map.json"])
        model = doc["models"][1]
        for key in FIGURES:
            self.assertEqual(model[key], applied_doc[key], key)
        self.assertEqual(model["map"]["kind"], "temperature")
        self.assertEqual(model["map"]["file"], self.temp)
        self.assertIsNone(doc["models"][0]["map"])
        # The scores as read are the report without --map.
        r = self.path("raw.json")
        run("report", "--scores", "p_*", "--label", "outcome", "--bootstrap", "20", "-q", self.holdout, "--json", r,
            check=True)
        raw = self.load_json(r)
        self.assertEqual(raw["format_version"], 1)
        for key in FIGURES:
            self.assertEqual(doc["models"][0][key], raw[key], key)

    def test_the_map_model_against_temperature_scaling_by_hand(self):
        # Guo et al. (2017): q = softmax(log p / T); the Brier score and log
        # loss of q recomputed here from the artifact's T and the rows.
        T = self.load_json(self.temp)["parameters"]["temperature"]
        rows = read_rows(self.holdout)
        head = rows[0]
        cols = [head.index("p_" + c) for c in CLASSES]
        label = head.index("outcome")
        brier = loss = 0.0
        for r in rows[1:]:
            p = [max(float(r[c]), 1e-15) for c in cols]
            z = [math.log(v) / T for v in p]
            top = max(z)
            e = [math.exp(v - top) for v in z]
            q = [v / sum(e) for v in e]
            y = CLASSES.index(r[label])
            brier += sum((q[k] - (k == y)) ** 2 for k in range(4))
            loss += -math.log(max(q[y], 1e-12))
        n = len(rows) - 1
        _, _, _, doc = self.report("--map", self.temp, "-q")
        self.assertAlmostEqual(doc["models"][1]["brier"], brier / n, delta=1e-9)
        self.assertAlmostEqual(doc["models"][1]["log_loss"], loss / n, delta=1e-9)
        # Fitted on the other half by log loss, the map lowers the holdout's.
        self.assertLess(doc["models"][1]["log_loss"], doc["models"][0]["log_loss"])

    def test_two_maps_side_by_side_in_every_format(self):
        svg, md = self.path("m.svg"), self.path("m.md")
        rc, out, err, doc = self.report("--map", self.temp, "--map", self.vec, "--ascii", "--svg", svg,
                                        "--markdown", md)
        self.assertEqual(rc, 0, err)
        self.assertEqual(len(doc["models"]), 3)
        self.assertEqual(doc["models"][2]["map"]["kind"], "vector")
        with open(os.path.join(SOURCE_DIR, "docs", "class-report.schema.json")) as f:
            schema = json.load(f)
        jsonschema.validate(doc, schema, cls=jsonschema.Draft202012Validator)
        self.assertIn("[models side by side]", out)
        self.assertIn("[headline figures: p_* via temp.map.json]", out)
        self.assertIn("[reliability: class lost, one-vs-rest: p_* via vector.map.json]", out)
        # Each model's row in the side-by-side table (the scores by name, a
        # map by its file) carries its Brier score and log loss, 4 decimals.
        lines = out.splitlines()
        for m in doc["models"]:
            tag = os.path.basename(m["map"]["file"]) if m["map"] else m["name"]
            row = [l for l in lines if l.strip().startswith(tag + " ")]
            self.assertEqual(len(row), 1, tag)
            self.assertIn(f"{m['brier']:.4f}  ", row[0])
            self.assertIn(f"{m['log_loss']:.4f}  ", row[0])
        with open(svg) as f:
            self.assertEqual(f.read().count('<g class="diagram">'), 15)
        with open(md) as f:
            text = f.read()
        self.assertIn("## Models side by side", text)
        self.assertIn("## Model p\\_\\* via vector.map.json", text)  # Markdown escapes _ and *
        # The rows' own caution (few rows of a class) once, not once per model.
        self.assertEqual(text.count("few rows for 10 bins in class 'lost'"), 1)
        self.assertIn("### Classes, one-vs-rest", text)

    def test_gates_read_the_maps_unless_named(self):
        _, _, _, doc = self.report("--map", self.temp, "--map", self.vec, "-q", bootstrap="0")
        raw, temp, vec = doc["models"]
        # A limit between the raw model's log loss and the worse map's: only a map can hold it.
        limit = max(temp["log_loss"], vec["log_loss"]) + 1e-6
        self.assertGreater(raw["log_loss"], limit)
        rc, _, err, g = self.report("--map", self.temp, "--map", self.vec, "-q", "--max", f"log_loss={limit}",
                                    json_name="g.json")
        self.assertEqual(rc, 0, err)
        self.assertEqual([x["model"] for x in g["gates"]], [temp["name"], vec["name"]])
        rc, _, err, g = self.report("--map", self.temp, "--map", self.vec, "-q", "--max", f"p_*:log_loss={limit}",
                                    json_name="g.json")
        self.assertEqual(rc, 7)
        self.assertIn("1 of 1 gate failed: p_*: log_loss = ", err)
        rc, _, err, g = self.report("--map", self.temp, "--map", self.vec, "-q", "--max",
                                    f"{self.vec}:log_loss={vec['log_loss'] - 1e-6}", json_name="g.json")
        self.assertEqual(rc, 7)
        self.assertEqual([(x["model"], x["exceeded"]) for x in g["gates"]], [(vec["name"], True)])
        rc, _, _, g = self.report("--map", self.temp, "-q", "--min", "*:accuracy=0", json_name="g.json")
        self.assertEqual(rc, 0)
        self.assertEqual(len(g["gates"]), 2)
        out = self.path("x.json")
        self.assert_refused(["report", "--scores", "p_*", "--label", "outcome", "--map", self.temp, "--max",
                             "nothing:brier=1", self.holdout, "--json", out], 2, "names a column that is not reported",
                            "'p_* via temp.map.json'", output=out)

    def test_refusals(self):
        out = self.path("r.json")
        base = ["report", "--label", "outcome", "--map", self.temp, self.holdout, "--json", out]
        self.assert_refused(base + ["--scores", "p_*", "--scale", "logit"], 2, "temp.map.json",
                            "fitted on the probability scale, and --scores are read on the logit scale", "--scale probability", output=out)
        self.assert_refused(base + ["--scores", "p_*", "--classes", "late,on_time,lost,returned"], 2,
                            "temp.map.json", "orders its classes", "--classes on_time,late,lost,returned", output=out)
        # Columns named as a list are classes named by their headers: the
        # labels are not among them, and the refusal names the map's classes.
        self.assert_refused(base + ["--scores", "p_on_time,p_late,p_lost,p_returned"], 3, "holdout.csv:2:8",
                            "the label is not one of the classes", "the map's classes are 'on_time', 'late'",
                            "--scores 'p_*'", output=out)
        # Rows of other classes whose labels are their own: the map cannot read them.
        other = self.path("other.csv")
        write(other, "p_a,p_b,p_c,p_d,y\n0.4,0.3,0.2,0.1,a\n0.1,0.2,0.3,0.4,d\n")
        self.assert_refused(["report", "--scores", "p_*", "--label", "y", "--map", self.temp, other, "--json", out],
                            2, "temp.map.json", "fitted on classes 'on_time', 'late', 'lost', 'returned'",
                            "--scores 'p_*'", output=out)
        self.assert_refused(base + ["--scores", "p_*", "--map-score", "p_late"], 2,
                            "--map-score cannot be used with --scores", output=out)
        # A multi-class map without --scores: how to report it.
        self.assert_refused(base, 4, "temp.map.json", "multi-class map", "--scores 'p_*' with --label", output=out)
        # A binary map with --scores.
        binary = self.path("late.map.json")
        run("fit", "--score", "p_late", "--label", "outcome", "--positive", "late", "--map", "platt", "-o", binary,
            "-q", self.fit, check=True)
        self.assert_refused(["report", "--scores", "p_*", "--label", "outcome", "--map", binary, self.holdout,
                             "--json", out], 2, "late.map.json", "the map is binary", "--score", output=out)


class ReportClassSegmentsTest(PlumbCase):
    """report --scores COLS --by COL: each model's headline figures per segment."""

    def test_segment_figures_match_a_direct_computation(self):
        out = self.path("s.json")
        run("report", "--scores", "p_*", "--label", "outcome", "--by", "shift", "--bootstrap", "0", "-q", OUTCOMES,
            "--json", out, check=True)
        doc = self.load_json(out)
        self.assertEqual(doc["format_version"], 1)
        self.assertEqual(doc["segment_column"], "shift")
        with open(os.path.join(SOURCE_DIR, "docs", "class-report.schema.json")) as f:
            jsonschema.validate(doc, json.load(f), cls=jsonschema.Draft202012Validator)
        # Reference: the published definitions (figures() above) on each shift's rows.
        rows = read_rows(OUTCOMES)
        shift = rows[0].index("shift")
        values = sorted({r[shift] for r in rows[1:]})
        self.assertEqual(sorted(g["value"] for g in doc["segments"]), values)
        for g in doc["segments"]:
            part = self.path(g["value"] + ".csv")
            write(part, ",".join(rows[0]) + "\n" + "".join(",".join(r) + "\n" for r in rows[1:]
                                                            if r[shift] == g["value"]))
            want = figures(part)
            self.assertEqual(g["rows"], sum(1 for r in rows[1:] if r[shift] == g["value"]))
            self.assertAlmostEqual(g["brier"], want["brier"], delta=1e-9)
            self.assertAlmostEqual(g["log_loss"], want["log_loss"], delta=1e-9)
            self.assertAlmostEqual(g["accuracy"], want["accuracy"], delta=1e-12)
            self.assertAlmostEqual(g["top_label_ece"], want["top_label"], delta=1e-9)
            self.assertAlmostEqual(g["classwise_ece"], want["classwise"], delta=1e-9)
        # Sorted by |confidence gap|, largest first.
        gaps = [abs(g["confidence_gap"]) for g in doc["segments"]]
        self.assertEqual(gaps, sorted(gaps, reverse=True))

    def test_min_segment_cap_and_maps(self):
        # 30 segments of 40 rows each, of which --min-segment 50 makes all too few
        # and --min-segment 10 gives figures; the text shows 20 and says so.
        rows = read_rows(OUTCOMES)[:1201]
        head = rows[0] + ["depot"]
        path = self.path("depots.csv")
        write(path, ",".join(head) + "\n" + "".join(",".join(r + [f"d{i % 30:02d}"]) + "\n"
                                                    for i, r in enumerate(rows[1:])))
        out = self.path("d.json")
        rc, text, err = run("report", "--scores", "p_*", "--label", "outcome", "--by", "depot", "--min-segment", "50",
                            "--bootstrap", "0", "--bins", "5", path, "--json", out)
        self.assertEqual(rc, 0, err)
        doc = self.load_json(out)
        self.assertEqual(len(doc["segments"]), 30)
        self.assertTrue(all(g["too_few"] for g in doc["segments"]))
        self.assertEqual(doc["options"]["min_segment"], 50)
        self.assertIn("too few rows (weight 40 < 50)", text)
        rc, text, err = run("report", "--scores", "p_*", "--label", "outcome", "--by", "depot", "--min-segment", "10",
                            "--bootstrap", "0", "--bins", "5", path, "--json", out)
        self.assertEqual(rc, 0, err)
        doc = self.load_json(out)
        self.assertFalse(any(g["too_few"] for g in doc["segments"]))
        flagged = sum(g["flagged"] for g in doc["segments"])
        if flagged <= 20:
            self.assertIn(f"{30 - max(20, flagged)} smaller segments not shown", " ".join(text.split()))
        # With a map: each model has its segments.
        fit = self.path("fit.map.json")
        run("fit", "--scores", "p_*", "--label", "outcome", "--map", "temperature", "-o", fit, "-q", OUTCOMES,
            check=True)
        rc, text, err = run("report", "--scores", "p_*", "--label", "outcome", "--by", "depot", "--min-segment", "10",
                            "--bootstrap", "0", "--bins", "5", "--map", fit, path, "--json", out)
        self.assertEqual(rc, 0, err)
        doc = self.load_json(out)
        self.assertEqual([len(m["segments"]) for m in doc["models"]], [30, 30])
        with open(os.path.join(SOURCE_DIR, "docs", "class-report.schema.json")) as f:
            jsonschema.validate(doc, json.load(f), cls=jsonschema.Draft202012Validator)
        self.assertIn("segments by depot: p_* via fit.map.json", text)

    def test_segment_refusals(self):
        out = self.path("r.json")
        self.assert_refused(["report", "--scores", "p_*", "--label", "outcome", "--by", "p_late", OUTCOMES,
                             "--json", out], 3, "outcomes.csv:1", "the segment column is also a score column",
                            output=out)
        self.assert_refused(["report", "--scores", "p_*", "--label", "outcome", "--by", "nowhere", OUTCOMES,
                             "--json", out], 3, "nowhere", output=out)


if __name__ == "__main__":
    unittest.main()
