#!/usr/bin/python3
"""Write a month of the invented parcel courier's nightly dumps, with drift.

Scenario (invented, as data/README.md's): every night the courier scores each
parcel for the chance that it misses its delivery window; the outcomes arrive
the next day. For 30 nights the parcels are drawn as examples/make_demo_data.py
draws them, so the holdout map (data/holdout.csv) fits them, except that from
night 18 on one depot, Dunmarrow, drifts: a new sorting hall moves its
parcels' scores up (the model sees part of the change, +0.9 in its log-odds)
and its parcels miss more often than even the new scores say (+0.8 in the
true log-odds that the model does not see). Scores and calibration both move.

Usage, from the repository root:

    /usr/bin/python3 examples/make_nights.py [--out DIR] [--rows N] [--seed N]

writes DIR/night-01.csv .. DIR/night-30.csv (default DIR: nights, N 2000),
columns parcel_id,depot,route_km,risk,missed. Byte-identical across Python 3
versions for the same seed (random.Random(seed).random() and math only).
"""

import argparse
import math
import os
import random
import sys

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import make_demo_data as demo  # noqa: E402  (the same parcels, depots and model)

NIGHTS = 30
DRIFT_NIGHT = 18
DRIFT_DEPOT = "Dunmarrow"
SEEN_SHIFT = 0.9     # added to the model's log-odds (z_seen) of the drifting depot
UNSEEN_SHIFT = 0.8   # added to the true log-odds only: the map's calibration goes stale
DEFAULT_SEED = 20261203


def draw(rng, drifting):
    name, route_km, risk, p_true = demo.draw_parcel(rng)
    if drifting and name == DRIFT_DEPOT:
        z = demo.logit(risk) / demo.OVERCONFIDENCE + SEEN_SHIFT
        risk = min(max(demo.sigmoid(demo.OVERCONFIDENCE * z), 1e-6), 1.0 - 1e-6)
        risk = float("%.6f" % risk)
        p_true = demo.sigmoid(demo.logit(risk) / demo.OVERCONFIDENCE + UNSEEN_SHIFT)
    return name, route_km, risk, p_true


def write_night(path, night, rows, seed):
    rng = random.Random(seed * 100 + night)
    drifting = night >= DRIFT_NIGHT
    with open(path, "w", encoding="ascii", newline="\n") as out:
        out.write("parcel_id,depot,route_km,risk,missed\n")
        for i in range(rows):
            name, km, risk, p = draw(rng, drifting)
            missed = 1 if rng.random() < p else 0
            out.write("N%02d%06d,%s,%.1f,%.6f,%d\n" % (night, i + 1, name, km, risk, missed))


def main(argv):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", default="nights", help="output directory (default: %(default)s)")
    parser.add_argument("--rows", type=int, default=2000, help="rows per night (default: %(default)s)")
    parser.add_argument("--seed", type=int, default=DEFAULT_SEED, help="random seed (default: %(default)s)")
    args = parser.parse_args(argv)
    os.makedirs(args.out, exist_ok=True)
    for night in range(1, NIGHTS + 1):
        write_night(os.path.join(args.out, "night-%02d.csv" % night), night, args.rows, args.seed)
    print("%s: %d nights of %d rows; %s drifts from night %d" % (args.out, NIGHTS, args.rows, DRIFT_DEPOT, DRIFT_NIGHT))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
