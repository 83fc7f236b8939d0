"""The maps and expected probabilities the C API and Python module tests share.

Every case is a map artifact made by the built plumb binary and the scores
`plumb apply` mapped with it, with apply's output: the probabilities the
embedding must give, bit for bit (apply writes the shortest text that reads
back to the same double, so parsing it recovers that double exactly).

Cases: every kind fitted on the demo's rows (data/holdout.csv) and applied to
tonight's scores (data/tonight.csv); isotonic with --between-blocks step;
cross-fit maps (the chosen map refitted on all rows, and --final folds, the
average of the fold maps); maps on log-odds and margin scores (the demo's
risk as log-odds, and a margin made from it); a weighted fit; and the
cross-fit artifact kept in tests/cli/fixtures.
"""
import csv
import json
import math
import os
import subprocess

PLUMB = os.environ.get("PLUMB_BIN", "plumb")
SOURCE_DIR = os.environ.get("PLUMB_SOURCE_DIR", os.path.join(os.path.dirname(__file__), "..", ".."))
DATA = os.path.join(SOURCE_DIR, "data")

KINDS = ["isotonic", "centered_isotonic", "platt", "beta", "temperature", "histogram"]


def plumb(*args):
    proc = subprocess.run([PLUMB, *args], capture_output=True, text=True)
    if proc.returncode != 0:
        raise AssertionError(f"plumb {' '.join(args)} exited {proc.returncode}: {proc.stderr}")
    return proc.stdout


def _column(path, name):
    with open(path, newline="") as f:
        return [row[name] for row in csv.DictReader(f)]


def _write(path, header, rows):
    with open(path, "w", newline="") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(header)
        w.writerows(rows)


def _applied(work, name, map_path, scores_csv, column):
    """(scores as text, probabilities as text) of `plumb apply` on scores_csv."""
    out = os.path.join(work, name + ".applied.csv")
    plumb("apply", "-q", map_path, scores_csv, "-o", out, "--as", "p")
    return _column(out, column), _column(out, "p")


def build(work):
    """Makes every case in directory `work`; returns a list of
    (name, map path, score texts, probability texts)."""
    holdout = os.path.join(DATA, "holdout.csv")
    tonight = os.path.join(DATA, "tonight.csv")
    cases = []

    def fit(name, rows_csv, scores_csv, column, *options, command="fit"):
        path = os.path.join(work, name + ".map.json")
        plumb(command, "-q", *options, rows_csv, "-o", path)
        scores, probabilities = _applied(work, name, path, scores_csv, column)
        cases.append((name, path, scores, probabilities))

    for kind in KINDS:
        fit("demo." + kind, holdout, tonight, "risk", "--map", kind, "--score", "risk", "--label", "missed")
    fit("demo.isotonic-step", holdout, tonight, "risk", "--map", "isotonic", "--between-blocks", "step",
        "--score", "risk", "--label", "missed")
    fit("demo.histogram-40", holdout, tonight, "risk", "--map", "histogram", "--bins", "40",
        "--score", "risk", "--label", "missed")
    fit("demo.cross-fit", holdout, tonight, "risk", "--score", "risk", "--label", "missed", command="cross-fit")
    fit("demo.cross-fit-folds", holdout, tonight, "risk", "--score", "risk", "--label", "missed",
        "--final", "folds", command="cross-fit")

    # The demo's risk as log-odds and as a margin (3 log-odds + 1), written
    # with Python's shortest repr, for the kinds that take those scales.
    risk, missed, route = _column(holdout, "risk"), _column(holdout, "missed"), _column(holdout, "route_km")
    tonight_risk = _column(tonight, "risk")

    def logit(text):
        p = min(max(float(text), 1e-6), 1 - 1e-6)
        return math.log(p / (1 - p))

    _write(os.path.join(work, "holdout.z.csv"), ["z", "m", "missed", "route_km"],
           [[repr(logit(r)), repr(3 * logit(r) + 1), y, km] for r, y, km in zip(risk, missed, route)])
    _write(os.path.join(work, "tonight.z.csv"), ["z", "m"],
           [[repr(logit(r)), repr(3 * logit(r) + 1)] for r in tonight_risk])
    hz, tz = os.path.join(work, "holdout.z.csv"), os.path.join(work, "tonight.z.csv")
    for kind in ["isotonic", "platt", "temperature", "histogram"]:
        fit("logit." + kind, hz, tz, "z", "--map", kind, "--scale", "logit", "--score", "z", "--label", "missed")
    for kind in ["isotonic", "platt", "histogram"]:
        fit("margin." + kind, hz, tz, "m", "--map", kind, "--scale", "margin", "--score", "m", "--label", "missed")
    # Weighted rows: the route length as the weight.
    for kind in ["isotonic", "beta"]:
        fit("weighted." + kind, holdout, tonight, "risk", "--map", kind, "--score", "risk", "--label", "missed",
            "--weight", "route_km")

    fixture = os.path.join(SOURCE_DIR, "tests", "cli", "fixtures", "given-split.map.json")
    with open(fixture) as f:
        column = json.load(f)["input"]["score_column"]
    _write(os.path.join(work, "fixture.scores.csv"), [column], [[t] for t in tonight_risk])
    scores, probabilities = _applied(work, "fixture", fixture, os.path.join(work, "fixture.scores.csv"), column)
    cases.append(("fixture.given-split", fixture, scores, probabilities))
    return cases


CLASS_COLUMNS = ["p_on_time", "p_late", "p_lost", "p_returned"]
# Awkward rows (each accepted by apply): exact zeros, ties, a class near 1,
# probabilities below the floor; and logits large, equal and far apart.
CLASS_PROBABILITY_ROWS = [["1", "0", "0", "0"], ["0.25", "0.25", "0.25", "0.25"], ["0.5", "0.5", "0", "0"],
                          ["0.9999999999999999", "1e-16", "0", "0"], ["1e-300", "0.5", "0.5", "5e-324"],
                          ["0.9995", "0", "0", "0"]]
CLASS_LOGIT_ROWS = [["0", "0", "0", "0"], ["700", "700", "-700", "0"], ["1e300", "0", "-1e300", "5"],
                    ["-745", "-746", "-800", "-745"], ["30", "-30", "15.5", "-0"]]


def build_classes(work):
    """Multi-class cases in directory `work`: each kind fitted on the outcome
    data (data/outcomes.csv; on the logit scale its logarithms) and applied
    to data/outcomes_tonight.csv and the awkward rows above. Returns a list of
    (name, map path, rows of K score texts, rows of K probability texts)."""
    outcomes = os.path.join(DATA, "outcomes.csv")
    with open(outcomes, newline="") as f:
        fit_rows = list(csv.DictReader(f))
    with open(os.path.join(DATA, "outcomes_tonight.csv"), newline="") as f:
        tonight = [[r[c] for c in CLASS_COLUMNS] for r in csv.DictReader(f)]

    def log_text(v):
        return repr(math.log(max(float(v), 1e-300)))

    _write(os.path.join(work, "outcomes.z.csv"), CLASS_COLUMNS + ["outcome"],
           [[log_text(r[c]) for c in CLASS_COLUMNS] + [r["outcome"]] for r in fit_rows])
    rows_p = tonight + CLASS_PROBABILITY_ROWS
    rows_z = [[log_text(v) for v in r] for r in tonight] + CLASS_LOGIT_ROWS
    _write(os.path.join(work, "classes.p.csv"), CLASS_COLUMNS, rows_p)
    _write(os.path.join(work, "classes.z.csv"), CLASS_COLUMNS, rows_z)
    cases = []
    for name, options, logit in [("temperature", ["--map", "temperature"], False),
                                 ("vector", ["--map", "vector"], False),
                                 ("dirichlet", ["--map", "dirichlet", "--l2", "0.001"], False),
                                 ("one_vs_rest", ["--map", "one_vs_rest"], False),
                                 ("one_vs_rest-platt", ["--map", "one_vs_rest", "--per-class", "platt"], False),
                                 ("temperature-logit", ["--map", "temperature"], True),
                                 ("dirichlet-logit", ["--map", "dirichlet", "--l2", "0.001"], True),
                                 ("one_vs_rest-logit", ["--map", "one_vs_rest"], True)]:
        path = os.path.join(work, "classes." + name + ".map.json")
        plumb("fit", "-q", *options, "--scores", "p_*", "--label", "outcome",
              *(["--scale", "logit"] if logit else []),
              os.path.join(work, "outcomes.z.csv") if logit else outcomes, "-o", path)
        out = os.path.join(work, "classes." + name + ".applied.csv")
        plumb("apply", "-q", path, os.path.join(work, "classes.z.csv" if logit else "classes.p.csv"), "-o", out)
        with open(out, newline="") as f:
            applied = list(csv.DictReader(f))
        cases.append(("classes." + name, path, [[r[c] for c in CLASS_COLUMNS] for r in applied],
                      [[r[c + "_calibrated"] for c in CLASS_COLUMNS] for r in applied]))
    return cases
