"""plumb cross-fit end to end: folds as promised, out-of-fold values equal
to fitting each fold with plumb fit and applying it, the choice on seeded
simulations with a known truth, the shipped artifact, and Platt out of fold
against R's glm on MASS::biopsy with folds from a column."""
import csv
import json
import math
import os
import subprocess
import unittest

from plumbtest import Lcg, PlumbCase, read_rows, run, sigmoid, write


def simulate(n, seed, curve):
    """Rows (score, label, group, time): a raw score s uniform on (0.01, 0.99)
    and a label drawn from curve(s), the true recalibration."""
    g = Lcg(seed)
    rows = []
    for i in range(n):
        s = round(0.01 + 0.98 * g.uniform(), 6)
        y = 1 if g.uniform() < curve(s) else 0
        rows.append((s, y, f"g{int(g.uniform() * 150)}", i // 50))
    return rows


def logit(p):
    return math.log(p / (1 - p))


def sigmoid_distortion(s):
    return sigmoid(0.5 * logit(s) - 0.3)  # exactly a Platt map of the score


def staircase(s):
    # Monotone, far from any sigmoid, with steps that do not fall on deciles.
    return 0.1 if s < 0.33 else (0.45 if s < 0.62 else (0.7 if s < 0.81 else 0.95))


class CrossFit(PlumbCase):
    def write_rows(self, name, rows):
        lines = ["id,risk,missed,route,night"] + [f"{i},{s},{y},{g},{t}" for i, (s, y, g, t) in enumerate(rows)]
        write(self.path(name), "\n".join(lines) + "\n")
        return self.path(name)

    def cross_fit(self, data, *args):
        art, oof, ev = self.path("cf.map.json"), self.path("oof.csv"), self.path("ev.json")
        rc, _, err = run("cross-fit", "--score", "risk", "--label", "missed", data, "-o", art, "--oof", oof,
                         "--json", ev, *args)
        self.assertEqual(rc, 0, err)
        with open(ev) as f:
            evidence = json.load(f)
        return self.load_json(art), read_rows(oof), evidence, err

    def test_oof_digits_round_each_probability_as_apply_digits_does(self):
        # --digits N writes each out-of-fold probability to N significant
        # digits: the nearest N-digit decimal to the shortest exact value
        # (C's %.Ng, which Python's format follows), as apply --digits does.
        data = self.write_rows("h.csv", simulate(800, 11, sigmoid_distortion))
        _, full, _, _ = self.cross_fit(data, "--map", "platt,isotonic", "--seed", "2")
        _, short, _, _ = self.cross_fit(data, "--map", "platt,isotonic", "--seed", "2", "--digits", "4")
        self.assertEqual(full[0], short[0])
        for a, b in zip(full[1:], short[1:]):
            for col in ("oof_platt", "oof_isotonic"):
                k = full[0].index(col)
                self.assertEqual(b[k], format(float(a[k]), ".4g"), (col, a[k], b[k]))
        rc, _, err = run("cross-fit", "--score", "risk", "--label", "missed", data, "-o", self.path("x.json"),
                         "--digits", "4")
        self.assertEqual(rc, 2, err)
        self.assertIn("--oof", err)

    def test_oof_equals_fitting_each_fold_through_the_cli(self):
        rows = simulate(1500, 3, sigmoid_distortion)
        data = self.write_rows("h.csv", rows)
        art, oof, _, _ = self.cross_fit(data, "--map", "isotonic,platt", "--folds", "4", "--seed", "5",
                                        "--final", "folds")
        header = oof[0]
        fold_of = [int(r[header.index("oof_fold")]) for r in oof[1:]]
        self.assertEqual(sorted(set(fold_of)), [1, 2, 3, 4])
        averaged = [0.0] * len(rows)
        for kind in ("isotonic", "platt"):
            got = [float(r[header.index("oof_" + kind)]) for r in oof[1:]]
            for fold in range(1, 5):
                train = [r for r, f in zip(rows, fold_of) if f != fold]
                held = [i for i, f in enumerate(fold_of) if f == fold]
                tr = self.write_rows("train.csv", train)
                m = self.path(f"fold{fold}.{kind}.json")
                run("fit", "-q", "--map", kind, "--score", "risk", "--label", "missed", tr, "-o", m, check=True)
                rc, out, err = run("apply", "-q", m, data)
                self.assertEqual(rc, 0, err)
                applied = [float(r[-1]) for r in read_rows(out, is_text=True)[1:]]
                for i in held:
                    self.assertEqual(got[i], applied[i])  # bit for bit: same fit, same map
                if kind == art["cross_fit"]["chosen"]:
                    for i in range(len(rows)):
                        averaged[i] += applied[i] / 4
        # --final folds ships the chosen kind's fold maps, averaged.
        self.assertEqual(art["kind"], "fold_average")
        self.assertEqual(len(art["parameters"]["maps"]), 4)
        rc, out, err = run("apply", "-q", self.path("cf.map.json"), data)
        self.assertEqual(rc, 0, err)
        for i, r in enumerate(read_rows(out, is_text=True)[1:]):
            self.assertAlmostEqual(float(r[-1]), averaged[i], delta=1e-15)
        rc, out, err = run("inspect", self.path("cf.map.json"))
        self.assertEqual(rc, 0, err)
        self.assertIn("fold_average", out)
        self.assertIn("cross-fit\n  evidence       4 folds, stratified split, seed 5", out)
        # report --map takes the cross-fit artifact like any other.
        rc, _, err = run("report", "-q", "--label", "missed", "--score", "risk", "--map", self.path("cf.map.json"),
                         "--bootstrap", "0", "--json", self.path("r.json"), data)
        self.assertEqual(rc, 0, err)
        with open(self.path("r.json")) as f:
            rep = json.load(f)
        self.assertEqual(rep["scores"][1]["name"], "risk via cf.map.json")
        self.assertEqual(rep["scores"][1]["column"], "risk")
        self.assertEqual(rep["scores"][1]["map"]["kind"], "fold_average")  # the artifact's kind, as inspect says
        mean_averaged = sum(averaged) / len(averaged)
        self.assertAlmostEqual(rep["scores"][1]["mean_forecast"], mean_averaged, delta=1e-12)

    def test_groups_are_never_split_and_time_runs_forward(self):
        rows = simulate(1200, 4, sigmoid_distortion)
        data = self.write_rows("h.csv", rows)
        _, oof, ev, _ = self.cross_fit(data, "--map", "platt", "--split", "group=route")
        h = oof[0]
        folds_of_route = {}
        for r in oof[1:]:
            folds_of_route.setdefault(r[h.index("route")], set()).add(r[h.index("oof_fold")])
        self.assertTrue(all(len(f) == 1 for f in folds_of_route.values()))
        self.assertEqual(ev["split"], {"kind": "group", "column": "route"})

        _, oof, ev, err = self.cross_fit(data, "--map", "platt", "--split", "time=night", "--folds", "4")
        h = oof[0]
        last_night = {}
        for r in oof[1:]:
            fold, night = int(r[h.index("oof_fold")]), int(r[h.index("night")])
            last_night[fold] = max(last_night.get(fold, -1), night)
            self.assertEqual(r[h.index("oof_platt")] == "", fold == 1)  # the first block is never scored
        first_night = {}
        for r in oof[1:]:
            fold, night = int(r[h.index("oof_fold")]), int(r[h.index("night")])
            first_night[fold] = min(first_night.get(fold, 10**9), night)
        for fold in (2, 3, 4):
            self.assertLess(last_night[fold - 1], first_night[fold])
        self.assertIn("never scored", err)
        self.assertEqual(ev["scored_rows"], sum(1 for r in oof[1:] if r[h.index("oof_fold")] != "1"))

    def test_a_group_per_row_is_allowed(self):
        # Customer ids as groups: more distinct values than a report segment may have.
        g = Lcg(12)
        lines = ["customer,risk,missed"]
        for i in range(120000):
            s = round(0.01 + 0.98 * g.uniform(), 4)
            lines.append(f"c{i},{s},{1 if g.uniform() < sigmoid_distortion(s) else 0}")
        write(self.path("ids.csv"), "\n".join(lines) + "\n")
        rc, _, err = run("cross-fit", "--score", "risk", "--label", "missed", "--map", "platt", "--split",
                         "group=customer", "-o", self.path("ids.json"), self.path("ids.csv"))
        self.assertEqual(rc, 0, err)
        self.assertIn("120,000 rows scored out of fold", err)

    def test_auto_prefers_a_parametric_map_on_few_rows_of_a_sigmoid_distortion(self):
        data = self.write_rows("few.csv", simulate(400, 6, sigmoid_distortion))
        art, _, ev, err = self.cross_fit(data)
        self.assertIn(ev["chosen"], ("temperature", "platt", "beta"))
        self.assertEqual(art["kind"], ev["chosen"])
        best = min(c["log_loss"] for c in ev["candidates"])
        chosen = next(c for c in ev["candidates"] if c["kind"] == ev["chosen"])
        self.assertLessEqual(chosen["log_loss"] - best, chosen["log_loss_minus_best_se"] + 1e-15)
        self.assertLessEqual(chosen["log_loss"], ev["raw"]["log_loss"])
        self.assertIn("chosen:", err)

    def test_auto_chooses_isotonic_on_many_rows_of_a_staircase(self):
        data = self.write_rows("many.csv", simulate(20000, 8, staircase))
        art, _, ev, _ = self.cross_fit(data)
        self.assertEqual(ev["chosen"], "isotonic")
        chosen = next(c for c in ev["candidates"] if c["kind"] == "isotonic")
        self.assertLessEqual(chosen["log_loss"], ev["raw"]["log_loss"])
        self.assertEqual(art["cross_fit"]["folds"], 5)
        self.assertEqual(art["cross_fit"]["seed"], 1)
        # The shipped map is refitted on all rows: the same as plumb fit.
        rc, out, err = run("fit", "-q", "--map", "isotonic", "--score", "risk", "--label", "missed", data)
        self.assertEqual(rc, 0, err)
        self.assertEqual(json.loads(out)["parameters"], art["parameters"])

    def test_auc_column_is_each_folds_mann_whitney_averaged(self):
        # The AUC of each fold's held-out rows under its own map (the
        # Mann-Whitney probability that a positive outranks a negative, ties
        # counting one half; Hanley and McNeil 1982), averaged over the folds
        # weighted by their rows, recomputed here from --oof.
        rows = simulate(1200, 11, staircase)
        data = self.write_rows("h.csv", rows)
        _, oof, ev, err = self.cross_fit(data, "--map", "isotonic,centered_isotonic", "--increase", "strict",
                                         "--folds", "4", "--seed", "2")
        self.assertIn(" AUC ", err.splitlines()[1])
        header = oof[0]
        fold_of = [int(r[header.index("oof_fold")]) for r in oof[1:]]
        labels = [y for _, y, _, _ in rows]

        def mann_whitney(p, y):
            pos = [a for a, b in zip(p, y) if b == 1]
            neg = [a for a, b in zip(p, y) if b == 0]
            wins = sum((a > b) + 0.5 * (a == b) for a in pos for b in neg)
            return wins / (len(pos) * len(neg))

        def fold_mean(p):
            total = 0.0
            for fold in range(1, 5):
                at = [i for i, f in enumerate(fold_of) if f == fold]
                total += len(at) * mann_whitney([p[i] for i in at], [labels[i] for i in at])
            return total / len(rows)

        raw = fold_mean([s for s, _, _, _ in rows])
        self.assertAlmostEqual(ev["raw"]["auc"], raw, delta=1e-12)
        by_kind = {c["kind"]: c for c in ev["candidates"]}
        for kind in ("isotonic", "centered_isotonic"):
            got = [float(r[header.index("oof_" + kind)]) for r in oof[1:]]
            self.assertAlmostEqual(by_kind[kind]["auc"], fold_mean(got), delta=1e-12)
        # The strict centered map ties no two scores, so each fold keeps the
        # raw ranking; isotonic's blocks tie scores and cost some of it.
        self.assertEqual(by_kind["centered_isotonic"]["auc"], ev["raw"]["auc"])
        self.assertLess(by_kind["isotonic"]["auc"], ev["raw"]["auc"] - 1e-4)

    def test_small_data_guard_for_isotonic(self):
        data = self.write_rows("tiny.csv", simulate(300, 9, staircase))
        _, _, _, err = self.cross_fit(data, "--map", "isotonic")
        self.assertIn("caution: isotonic was chosen on only 300 rows; a nonparametric map usually needs about 1,000 "
                      "rows or more (common practice). It was the only candidate: compare it with the other kinds, "
                      "--map auto.", err)

    def test_small_data_guard_for_histogram(self):
        # Histogram binning is nonparametric too, and the same threshold as
        # fit's caution holds (common practice: about 1,000 rows).
        data = self.write_rows("tiny.csv", simulate(300, 9, staircase))
        _, _, _, err = self.cross_fit(data, "--map", "histogram")
        self.assertIn("caution: histogram was chosen on only 300 rows; a nonparametric map usually needs about 1,000 "
                      "rows or more (common practice). It was the only candidate: compare it with the other kinds, "
                      "--map auto.", err)
        # A parametric choice on the same rows is not cautioned.
        _, _, _, err = self.cross_fit(data, "--map", "platt")
        self.assertNotIn("caution", err)

    def test_platt_out_of_fold_matches_r_glm_on_biopsy(self):
        r_dir = self.path("r")
        os.makedirs(r_dir)
        script = f"""
        # MASS::biopsy (Wolberg's breast-cancer cytology data), NA rows removed;
        # a score from a glm on V1..V5 fitted on a seeded half, folds 1..5 by row
        # order. Reference: stats::glm(binomial) on qlogis(score), fitted on the
        # other folds (Platt 1999 without smoothed targets is exactly this fit).
        library(MASS)
        d <- na.omit(biopsy); d$y <- as.integer(d$class == "malignant")
        set.seed(20261202); half <- sample(nrow(d), nrow(d) %/% 2)
        m <- glm(y ~ V1 + V2 + V3 + V4 + V5, binomial, data = d[half, ])
        s <- predict(m, d[-half, ], type = "response"); y <- d$y[-half]
        s <- pmin(pmax(s, 1e-6), 1 - 1e-6)
        fold <- (seq_along(s) - 1) %% 5 + 1
        oof <- numeric(length(s))
        for (k in 1:5) {{
          f <- glm(y ~ qlogis(s), binomial, subset = fold != k, control = glm.control(epsilon = 1e-14, maxit = 100))
          oof[fold == k] <- predict(f, data.frame(s = s[fold == k]), type = "response")
        }}
        write.csv(data.frame(score = sprintf("%.17g", s), label = y, fold = fold, oof = sprintf("%.17g", oof)),
                  "{r_dir}/biopsy.csv", row.names = FALSE, quote = FALSE)
        """
        subprocess.run(["Rscript", "--vanilla", "-e", script], check=True, capture_output=True)
        ref = read_rows(os.path.join(r_dir, "biopsy.csv"))
        h = ref[0]
        oof_file = self.path("oof.csv")
        rc, _, err = run("cross-fit", "--score", "score", "--label", "label", "--split", "column=fold", "--map",
                         "platt", "--platt-targets", "labels", "--oof", oof_file, "-o", self.path("b.json"),
                         os.path.join(r_dir, "biopsy.csv"))
        self.assertEqual(rc, 0, err)
        ours = read_rows(oof_file)
        self.assertEqual(len(ours), len(ref))
        largest = 0.0
        for a, b in zip(ours[1:], ref[1:]):
            self.assertEqual(a[ours[0].index("oof_fold")], b[h.index("fold")])
            diff = abs(float(a[ours[0].index("oof_platt")]) - float(b[h.index("oof")]))
            largest = max(largest, diff)
        print(f"platt out of fold vs R glm on MASS::biopsy: max |diff| = {largest:.3g}")
        self.assertLess(largest, 1e-7)

    def test_refusals(self):
        data = self.write_rows("h.csv", simulate(200, 1, sigmoid_distortion))
        rc, _, err = run("cross-fit", "--score", "risk", "--label", "missed", "--map", "platt,spline", data)
        self.assertEqual(rc, 2)
        self.assertIn("spline", err)
        rc, _, err = run("cross-fit", "--score", "risk", "--label", "missed", "--split", "cluster=route", data)
        self.assertEqual(rc, 2)
        rc, _, err = run("cross-fit", "--score", "risk", "--label", "missed", "--oof", self.path("o.csv"),
                         stdin=open(data).read())
        self.assertEqual(rc, 2)
        self.assertIn("--oof needs the input as a file", err)
        self.assertFalse(os.path.exists(self.path("o.csv")))


if __name__ == "__main__":
    unittest.main()
