#!/usr/bin/python3
"""Write plumb's invented multi-class demo data: a parcel courier's outcome scores.

Scenario (invented): the courier of make_demo_data.py also scores each parcel
for its outcome among four: on_time, late, lost and returned (to the sender).
Its outcome model ranks well but is over-confident and leans towards on_time:
its log-odds are twice the true ones, plus a shift. Because the data are
simulated, the true recalibration map is known exactly: with l the model's
log-probabilities, the true probabilities are softmax(l / 2 - shift / 2), a
vector scaling with every scale 1/2 (and a temperature of 2 up to the shift),
which a dirichlet map also holds.

Usage, from the repository root:

    /usr/bin/python3 examples/make_outcome_data.py [--out data] [--seed N]

Writes data/outcomes.csv (labelled rows to fit on) and
data/outcomes_tonight.csv (unlabelled rows to apply the map to), plus the
true probabilities of the labelled rows in data/outcomes_truth.csv. Output is
byte-identical across Python 3 versions for a seed: only
random.Random(seed).random() and the math module are used, and every number
is written with a fixed format.
"""

import argparse
import math
import os
import random

DEFAULT_SEED = 20261203
FIT_ROWS = 8_000
TONIGHT_ROWS = 20_000
CLASSES = ["on_time", "late", "lost", "returned"]
# The true log-odds of each class against on_time: a base, and effects of the
# route length (km, scaled) and of a night shift.
BASE = [0.0, -1.6, -4.2, -3.3]
ROUTE = [0.0, 0.9, 0.6, -0.2]
NIGHT = [0.0, 0.7, 0.3, 0.1]
# The model's log-odds are 2 x the true ones plus this shift (towards on_time).
SHIFT = [0.8, 0.0, -0.4, 0.2]


def softmax(eta):
    m = max(eta)
    e = [math.exp(v - m) for v in eta]
    s = sum(e)
    return [v / s for v in e]


def draw(rng):
    route_km = 2.0 + 60.0 * rng.random()
    night = 1 if rng.random() < 0.3 else 0
    x = (route_km - 30.0) / 15.0
    true_eta = [BASE[k] + ROUTE[k] * x + NIGHT[k] * night for k in range(4)]
    truth = softmax(true_eta)
    model = softmax([2.0 * true_eta[k] + SHIFT[k] for k in range(4)])
    u = rng.random()
    outcome, acc = CLASSES[-1], 0.0
    for k in range(4):
        acc += truth[k]
        if u < acc:
            outcome = CLASSES[k]
            break
    return route_km, night, model, truth, outcome


def text(p):
    return format(p, ".6g")


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", default="data")
    parser.add_argument("--seed", type=int, default=DEFAULT_SEED)
    args = parser.parse_args()
    rng = random.Random(args.seed)
    header = "parcel,route_km,shift," + ",".join("p_" + c for c in CLASSES)
    with open(os.path.join(args.out, "outcomes.csv"), "w", newline="") as rows, \
            open(os.path.join(args.out, "outcomes_truth.csv"), "w", newline="") as truths:
        rows.write(header + ",outcome\n")
        truths.write("parcel," + ",".join("true_" + c for c in CLASSES) + "\n")
        for i in range(FIT_ROWS):
            route_km, night, model, truth, outcome = draw(rng)
            parcel = "P%06d" % (i + 1)
            rows.write("%s,%.1f,%s,%s,%s\n" % (parcel, route_km, "night" if night else "day",
                                                ",".join(text(p) for p in model), outcome))
            truths.write("%s,%s\n" % (parcel, ",".join(text(p) for p in truth)))
    with open(os.path.join(args.out, "outcomes_tonight.csv"), "w", newline="") as rows:
        rows.write(header + "\n")
        for i in range(TONIGHT_ROWS):
            route_km, night, model, _, _ = draw(rng)
            rows.write("T%06d,%.1f,%s,%s\n" % (i + 1, route_km, "night" if night else "day",
                                              ",".join(text(p) for p in model)))


if __name__ == "__main__":
    main()
