#!/usr/bin/python3
"""Write plumb's invented demo data: a parcel courier's nightly lateness scores.

Scenario (invented): a regional parcel courier scores every parcel each night
for the chance that it misses its promised delivery window. The scoring model
ranks parcels well but is over-confident: its scores are too extreme. One depot
is also worse off than the model believes. Because the data are simulated, the
true recalibration curve is known exactly (see data/README.md).

Usage, from the repository root:

    /usr/bin/python3 examples/make_demo_data.py [--out data] [--seed N]

Output is byte-identical across Python 3 versions for the same seed: only
random.Random(seed).random() and the math module are used (no random.gauss,
choices or shuffle, whose algorithms have changed between versions), and every
number is written with a fixed format.
"""

import argparse
import math
import os
import random
import sys

DEFAULT_SEED = 20260214
HOLDOUT_ROWS = 20_000
TONIGHT_ROWS = 200_000

# Invented depot names with their share of parcels and their effect on the
# log-odds of a missed window. `shift` is the part of the depot's true log-odds
# that the scoring model does not see: only Quarrendon has one, so its parcels
# miss their window more often than their scores say.
DEPOTS = [
    # name,          share, effect, shift
    ("Ambercliff",    0.22,  0.00,  0.0),
    ("Brellinford",   0.18, -0.25,  0.0),
    ("Dunmarrow",     0.16,  0.20,  0.0),
    ("Kestlow Vale",  0.14, -0.10,  0.0),
    ("Oxtide",        0.12,  0.35,  0.0),
    ("Quarrendon",    0.10,  0.10,  0.7),
    ("Varnholm",      0.08, -0.40,  0.0),
]

# Monday .. Sunday: weekend and Friday rounds are harder.
WEEKDAY_EFFECT = [0.00, -0.05, -0.05, 0.00, 0.25, 0.35, 0.15]

INTERCEPT = -2.20          # log-odds of a miss for a typical parcel
ROUTE_KM_SLOPE = 0.85      # per unit of ln(route_km / 25)
PARCEL_SD = 1.05           # spread of parcel-level factors (access, size, ...)
OVERCONFIDENCE = 1.8       # the model's log-odds are this many times too large


def sigmoid(x):
    if x >= 0:
        return 1.0 / (1.0 + math.exp(-x))
    e = math.exp(x)
    return e / (1.0 + e)


def standard_normal(rng):
    """One N(0, 1) draw by the Box-Muller transform from two uniforms."""
    u1 = rng.random()
    while u1 <= 0.0:
        u1 = rng.random()
    u2 = rng.random()
    return math.sqrt(-2.0 * math.log(u1)) * math.cos(2.0 * math.pi * u2)


def pick_depot(rng):
    u = rng.random()
    total = 0.0
    for depot in DEPOTS:
        total += depot[1]
        if u < total:
            return depot
    return DEPOTS[-1]


def draw_parcel(rng):
    """Return (depot name, route_km, risk, true probability of a miss)."""
    name, _share, effect, shift = pick_depot(rng)
    weekday = min(int(rng.random() * 7), 6)
    # Route length: log-normal around 25 km, kept within 2 .. 240 km.
    route_km = 25.0 * math.exp(0.6 * standard_normal(rng))
    route_km = min(max(route_km, 2.0), 240.0)
    route_km = float("%.1f" % route_km)  # the value the file carries
    parcel = PARCEL_SD * standard_normal(rng)

    # What the model captures (it sees depot, route, weekday and the parcel).
    z_seen = (INTERCEPT + effect + WEEKDAY_EFFECT[weekday]
              + ROUTE_KM_SLOPE * math.log(route_km / 25.0) + parcel)
    z_true = z_seen + shift
    # Six decimals, kept off 0 and 1 so that every written risk has log-odds.
    risk = min(max(sigmoid(OVERCONFIDENCE * z_seen), 1e-6), 1.0 - 1e-6)
    risk = float("%.6f" % risk)
    # The true curve is stated in terms of the risk written to the file, so
    # the written value (not the unrounded one) drives the label.
    p_true = sigmoid(logit(risk) / OVERCONFIDENCE + shift)
    return name, route_km, risk, p_true


def logit(p):
    return math.log(p) - math.log1p(-p)


def write_holdout(path, rng, rows):
    misses = 0
    with open(path, "w", encoding="ascii", newline="\n") as out:
        out.write("parcel_id,depot,route_km,risk,missed\n")
        for i in range(rows):
            name, km, risk, p = draw_parcel(rng)
            missed = 1 if rng.random() < p else 0
            misses += missed
            out.write("P%07d,%s,%.1f,%.6f,%d\n" % (1_000_001 + i, name, km, risk, missed))
    return misses


def write_tonight(path, rng, rows):
    with open(path, "w", encoding="ascii", newline="\n") as out:
        out.write("parcel_id,depot,route_km,risk\n")
        for i in range(rows):
            name, km, risk, _p = draw_parcel(rng)
            out.write("P%07d,%s,%.1f,%.6f\n" % (3_000_001 + i, name, km, risk))


def main(argv):
    here = os.path.dirname(os.path.abspath(__file__))
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", default=os.path.join(os.path.dirname(here), "data"),
                        help="output directory (default: the repository's data/)")
    parser.add_argument("--seed", type=int, default=DEFAULT_SEED,
                        help="random seed (default: %(default)s)")
    args = parser.parse_args(argv)

    os.makedirs(args.out, exist_ok=True)
    holdout = os.path.join(args.out, "holdout.csv")
    tonight = os.path.join(args.out, "tonight.csv")
    # Separate streams, so the two files do not depend on each other's size.
    misses = write_holdout(holdout, random.Random(args.seed), HOLDOUT_ROWS)
    write_tonight(tonight, random.Random(args.seed + 1), TONIGHT_ROWS)
    print("%s: %d rows, %d missed (%.2f%%)"
          % (holdout, HOLDOUT_ROWS, misses, 100.0 * misses / HOLDOUT_ROWS))
    print("%s: %d rows" % (tonight, TONIGHT_ROWS))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
