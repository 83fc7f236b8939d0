"""cross-fit --scores (K score columns) on a par with the binary cross-fit:
the out-of-fold multi-class Brier score beside the log loss, --oof and
--digits, the group, time and column splits, and --final folds, on the
invented outcome data (data/outcomes.csv, examples/make_outcome_data.py).

Independent checks: every --oof probability equals what `plumb fit --scores`
on the other folds' rows (the earlier folds' under a time split) and then
`plumb apply` give for the held-out row; the Brier score and its standard
error are recomputed here in Python from the --oof rows with the published
formula (Brier 1950: per row the sum over the classes of (q_k - [y = k])^2;
the standard error of a mean, sqrt(sum (b - mean)^2 / (n - 1) / n), common
practice); the --final folds map's probabilities are the mean of the fold
maps' as `plumb apply` gives them."""
import csv
import gzip
import json
import math
import os
import unittest

import jsonschema  # Debian python3-jsonschema, installed by tests/run.sh

from plumbtest import PlumbCase, SOURCE_DIR, read_rows, run

OUTCOMES = os.path.join(SOURCE_DIR, "data", "outcomes.csv")
CLASSES = ["on_time", "late", "lost", "returned"]
CALIBRATED = ["p_" + c + "_calibrated" for c in CLASSES]


def outcome_rows():
    rows = read_rows(OUTCOMES)
    return rows[0], rows[1:]


def write_csv(path, header, rows):
    with open(path, "w", newline="") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(header)
        w.writerows(rows)


class ClassCrossFitTest(PlumbCase):
    def cross_fit(self, *extra, data=OUTCOMES, digits=None):
        oof, ev, out = self.path("oof.csv"), self.path("ev.json"), self.path("cf.map.json")
        args = ["cross-fit", "--scores", "p_*", "--label", "outcome", "--no-timestamp", *extra, "--oof", oof,
                "--json", ev, "-o", out, data]
        if digits is not None:
            args[1:1] = ["--digits", str(digits)]
        rc, _, err = run(*args)
        self.assertEqual(rc, 0, err)
        return read_rows(oof), self.load_json(ev), self.load_json(out), err

    def refit_and_apply(self, header, train_rows, held_rows, kind_args):
        """plumb fit --scores on `train_rows`, then plumb apply on `held_rows`:
        the K calibrated probabilities of each held row."""
        train, held = self.path("train.csv"), self.path("held.csv")
        m, applied = self.path("fold.map.json"), self.path("held.out.csv")
        write_csv(train, header, train_rows)
        write_csv(held, header, held_rows)
        run("fit", *kind_args, "--scores", "p_*", "--label", "outcome", "--no-timestamp", train, "-o", m, check=True)
        run("apply", "-q", m, held, "-o", applied, check=True)
        out = read_rows(applied)
        cols = [out[0].index(c) for c in CALIBRATED]
        return [[float(r[c]) for c in cols] for r in out[1:]]

    def check_oof_against_refits(self, header, rows, oof, kind_args, forward=False):
        """Each held-out row's --oof probabilities equal a refit on the other
        folds' rows (forward: the earlier folds' rows) applied to it."""
        fold = [r[len(header)] for r in oof[1:]]
        cols = [oof[0].index(c) for c in CALIBRATED]
        folds = sorted(set(fold), key=lambda v: int(v) if v.isdigit() else v)
        checked = 0
        for j in folds:
            if forward and j == folds[0]:
                continue
            held = [i for i, f in enumerate(fold) if f == j]
            if forward:
                train = [i for i, f in enumerate(fold) if int(f) < int(j)]
            else:
                train = [i for i, f in enumerate(fold) if f != j]
            want = self.refit_and_apply(header, [rows[i] for i in train], [rows[i] for i in held], kind_args)
            for i, q in zip(held, want):
                got = [float(oof[1 + i][c]) for c in cols]
                self.assertEqual(got, q, f"row {i + 2}, fold {j}")
                checked += 1
        return checked

    def test_brier_and_log_loss_of_the_oof_rows(self):
        header, rows = outcome_rows()
        oof, ev, doc, err = self.cross_fit("--folds", "3", "--map", "temperature,vector")
        self.assertEqual(doc["cross_fit"], ev)
        self.assertEqual(ev["final"], "refit")
        self.assertEqual(ev["split"], {"kind": "stratified", "by": "class"})
        chosen = [c for c in ev["candidates"] if c["name"] == ev["chosen"]][0]
        # Direct computation from the --oof rows (Brier 1950, summed over the
        # classes; log loss as the mean of -log q_y).
        cols = [oof[0].index(c) for c in CALIBRATED]
        label = header.index("outcome")
        b, ll = [], []
        for r in oof[1:]:
            q = [float(r[c]) for c in cols]
            y = CLASSES.index(r[label])
            b.append(sum((q[k] - (1.0 if k == y else 0.0)) ** 2 for k in range(4)))
            ll.append(-math.log(max(q[y], 1e-15)))
        n = len(b)
        mean = sum(b) / n
        se = math.sqrt(sum((v - mean) ** 2 for v in b) / (n - 1) / n)
        self.assertAlmostEqual(chosen["brier"], mean, delta=1e-12)
        self.assertAlmostEqual(chosen["brier_se"], se, delta=1e-12)
        self.assertAlmostEqual(chosen["log_loss"], sum(ll) / n, delta=1e-12)
        for c in ev["candidates"]:
            self.assertTrue(0.0 <= c["brier"] <= 2.0)
            self.assertGreater(c["brier_se"], 0.0)
        # The table on stderr shows each candidate's Brier and its se, as the
        # evidence holds them (six decimals).
        line = [l for l in err.splitlines() if l.strip().startswith(chosen["name"] + " ")][0]
        self.assertIn("%.6f (%.6f)" % (chosen["brier"], chosen["brier_se"]), line)
        self.assertIn("oof Brier (se)", err)
        # inspect shows the Brier beside the log loss.
        rc, out, _ = run("inspect", self.path("cf.map.json"))
        self.assertEqual(rc, 0)
        self.assertIn("oof Brier", out)
        self.assertIn("%.6f" % chosen["brier_se"], out)

    def test_oof_columns_equal_refits_on_the_other_folds(self):
        header, rows = outcome_rows()
        oof, ev, _, _ = self.cross_fit("--folds", "3", "--map", "vector,dirichlet", "--l2-grid", "0.1")
        self.assertEqual(oof[0], header + ["oof_fold"] + CALIBRATED)
        self.assertEqual(len(oof), len(rows) + 1)
        # Rows in input order, passed through as read.
        self.assertEqual([r[:len(header)] for r in oof[1:]], rows)
        self.assertEqual({r[len(header)] for r in oof[1:]}, {"1", "2", "3"})
        for r in oof[1:]:
            self.assertAlmostEqual(sum(float(v) for v in r[len(header) + 1:]), 1.0, delta=1e-9)
        chosen = [c for c in ev["candidates"] if c["name"] == ev["chosen"]][0]
        kind_args = ["--map", chosen["kind"]] + (["--l2", "0.1"] if chosen["kind"] == "dirichlet" else [])
        self.assertEqual(self.check_oof_against_refits(header, rows, oof, kind_args), len(rows))

    def test_digits_and_gzip(self):
        full, _, _, _ = self.cross_fit("--folds", "3", "--map", "temperature")
        short, _, _, _ = self.cross_fit("--folds", "3", "--map", "temperature", digits=3)
        n = len(full[0]) - 4
        for a, b in zip(full[1:], short[1:]):
            self.assertEqual(a[:n], b[:n])
            for x, y in zip(a[n:], b[n:]):
                self.assertEqual(float(y), float("%.3g" % float(x)))
                self.assertLessEqual(len(y.replace("0.", "", 1).lstrip("0").replace(".", "")), 3)
        gz = self.path("oof.csv.gz")
        run("cross-fit", "--scores", "p_*", "--label", "outcome", "--folds", "3", "--map", "temperature", "-q",
            "--oof", gz, "-o", self.path("gz.map.json"), OUTCOMES, check=True)
        with gzip.open(gz, "rt", newline="") as f:
            self.assertEqual(list(csv.reader(f)), full)

    def test_group_split_keeps_each_group_in_one_fold(self):
        header, rows = outcome_rows()
        oof, ev, _, err = self.cross_fit("--folds", "3", "--map", "vector", "--split", "group=route_km", "--seed", "4")
        self.assertEqual(ev["split"], {"kind": "group", "column": "route_km"})
        self.assertIn("3 folds grouped by route_km, seed 4", err)
        route = header.index("route_km")
        fold_of = {}
        for r in oof[1:]:
            fold_of.setdefault(r[route], set()).add(r[len(header)])
        self.assertGreater(len(fold_of), 100)
        self.assertTrue(all(len(f) == 1 for f in fold_of.values()), "a group lands in two folds")
        self.assertEqual(self.check_oof_against_refits(header, rows, oof, ["--map", "vector"]), len(rows))

    def test_time_split_fits_on_earlier_rows_only(self):
        header, rows = outcome_rows()
        # An invented night number, 1 to 8, a thousand rows each.
        timed = self.path("timed.csv")
        write_csv(timed, header + ["night"], [r + [str(1 + i // 1000)] for i, r in enumerate(rows)])
        oof, ev, _, err = self.cross_fit("--folds", "4", "--map", "temperature", "--split", "time=night",
                                         data=timed)
        self.assertEqual(ev["split"], {"kind": "time", "column": "night"})
        self.assertIn("the earliest time block (fold 1) is never scored", err)
        n = len(header) + 1
        fold = [int(r[n]) for r in oof[1:]]
        night = [int(r[n - 1]) for r in oof[1:]]
        for j in range(2, 5):
            self.assertLess(max(t for t, f in zip(night, fold) if f == j - 1),
                            min(t for t, f in zip(night, fold) if f == j))
        unscored = [r for r in oof[1:] if r[n] == "1"]
        self.assertTrue(unscored)
        self.assertTrue(all(v == "" for r in unscored for v in r[n + 1:]))
        self.assertEqual(ev["scored_rows"], len(rows) - len(unscored))
        timed_rows = read_rows(timed)[1:]
        self.assertEqual(self.check_oof_against_refits(header + ["night"], timed_rows, oof, ["--map", "temperature"],
                                                       forward=True), len(rows) - len(unscored))
        # --final folds averages the three maps fitted (the first block has none).
        _, ev, doc, err = self.cross_fit("--folds", "4", "--map", "temperature", "--split", "time=night",
                                         "--final", "folds", data=timed)
        self.assertEqual(len(doc["parameters"]["maps"]), 3)
        self.assertIn("the mean of 3 fold maps of kind temperature", doc["fit"]["notes"])

    def test_column_split_keeps_the_column_folds(self):
        header, rows = outcome_rows()
        given = self.path("given.csv")
        write_csv(given, header + ["cv"], [r + ["abc"[i % 3]] for i, r in enumerate(rows)])
        oof, ev, _, _ = self.cross_fit("--map", "temperature", "--split", "column=cv", data=given)
        self.assertEqual(ev["folds"], 3)
        self.assertEqual(ev["split"], {"kind": "column", "column": "cv"})
        self.assertEqual([r[len(header) + 1] for r in oof[1:]], ["abc"[i % 3] for i in range(len(rows))])

    def test_final_folds_ships_the_mean_of_the_fold_maps(self):
        header, rows = outcome_rows()
        oof, ev, doc, err = self.cross_fit("--folds", "3", "--map", "vector", "--final", "folds")
        self.assertEqual(ev["final"], "folds")
        self.assertEqual(doc["kind"], "fold_average")
        self.assertEqual(doc["format_version"], 4)
        self.assertEqual([m["kind"] for m in doc["parameters"]["maps"]], ["vector"] * 3)
        self.assertIn("vector map (the fold maps, averaged) written to", err)
        with open(os.path.join(SOURCE_DIR, "docs", "class-artifact.schema.json")) as f:
            jsonschema.validate(doc, json.load(f), cls=jsonschema.Draft202012Validator)
        # Apply the average to the first 300 rows; each fold's map, refitted
        # here on its training rows, applied to the same rows, averaged.
        sample = rows[:300]
        applied = self.path("avg.out.csv")
        sample_file = self.path("sample.csv")
        write_csv(sample_file, header, sample)
        run("apply", "-q", self.path("cf.map.json"), sample_file, "-o", applied, check=True)
        out = read_rows(applied)
        got = [[float(r[out[0].index(c)]) for c in CALIBRATED] for r in out[1:]]
        fold = [r[len(header)] for r in oof[1:]]
        per_fold = []
        for j in ("1", "2", "3"):
            train = [rows[i] for i, f in enumerate(fold) if f != j]
            per_fold.append(self.refit_and_apply(header, train, sample, ["--map", "vector"]))
        for i, q in enumerate(got):
            self.assertAlmostEqual(sum(q), 1.0, delta=1e-9)
            for k in range(4):
                self.assertAlmostEqual(q[k], sum(m[i][k] for m in per_fold) / 3, delta=1e-12)
        rc, text, _ = run("inspect", self.path("cf.map.json"))
        self.assertEqual(rc, 0)
        self.assertIn("fold_average map on 4 classes", text)
        self.assertIn("fold map 3: vector", text)

    def test_refusals_are_located_and_leave_nothing(self):
        header, rows = outcome_rows()
        out, oof = self.path("r.map.json"), self.path("r.oof.csv")
        base = ["cross-fit", "--scores", "p_*", "--label", "outcome", "--map", "temperature", "-o", out]
        self.assert_refused(base + ["--split", "group=depot", OUTCOMES], 3, "depot", output=out)
        self.assert_refused(base + ["--split", "group=p_late", OUTCOMES], 3, "outcomes.csv:1:5",
                            "the split column is also a score column", output=out)
        self.assert_refused(base + ["--split", "time=shift", OUTCOMES], 3, "outcomes.csv:2:3", "shift", "night",
                            output=out)
        self.assert_refused(base + ["--split", "bogus=1", OUTCOMES], 2, "unknown --split", output=out)
        self.assert_refused(base + ["--digits", "3", OUTCOMES], 2, "--digits", "--oof", output=out)
        with open(OUTCOMES) as f:
            text = f.read()
        self.assert_refused(base + ["--oof", oof, "-"], 2, "--oof needs the input as a file", stdin=text, output=out)
        clash = self.path("clash.csv")
        write_csv(clash, header + ["oof_fold"], [r + ["x"] for r in rows[:200]])
        self.assert_refused(base + ["--oof", oof, clash], 2, "clash.csv:1:9", "oof_fold", output=out)
        self.assertFalse(os.path.exists(oof))
        # Score columns named by the classes, and the column apply would name
        # late_calibrated already there.
        write_csv(clash, [h.replace("p_", "") for h in header] + ["late_calibrated"], [r + ["x"] for r in rows[:200]])
        listed = ["cross-fit", "--scores", ",".join(CLASSES), "--label", "outcome", "-o", out]
        self.assert_refused(listed + ["--oof", oof, clash], 2, "clash.csv:1:9", "late_calibrated", output=out)
        self.assertFalse(os.path.exists(oof))
        # A class that only the last nights hold: fold 2 of the time split
        # is fitted on night 1's rows, which hold no 'returned'.
        timed = self.path("timed.csv")
        kept = [r for r in rows if r[-1] != "returned"][:900] + [r for r in rows if r[-1] == "returned"][:20]
        write_csv(timed, header + ["night"], [r + [str(1 + i // 300)] for i, r in enumerate(kept)])
        self.assert_refused(base + ["--oof", oof, "--split", "time=night", "--folds", "3", timed], 6, "timed.csv",
                            "fold 2's training rows hold no row of class 'returned'", "--split", output=out)
        self.assertFalse(os.path.exists(oof))


if __name__ == "__main__":
    unittest.main()
