#!/usr/bin/python3
"""Rows for the multi-class benchmarks: N parcels of the invented outcome
scenario (examples/make_outcome_data.py), labelled, four classes.

    /usr/bin/python3 bench/make_class_rows.py N OUT.csv [SEED]
"""
import os
import random
import sys

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "examples"))
import make_outcome_data as m  # noqa: E402


def main():
    n, out = int(sys.argv[1]), sys.argv[2]
    rng = random.Random(int(sys.argv[3]) if len(sys.argv) > 3 else 1)
    with open(out, "w", newline="") as f:
        f.write("parcel,route_km,shift," + ",".join("p_" + c for c in m.CLASSES) + ",outcome,late\n")
        for i in range(n):
            route_km, night, model, _, outcome = m.draw(rng)
            f.write("P%07d,%.1f,%s,%s,%s,%d\n" % (i + 1, route_km, "night" if night else "day",
                                                  ",".join(m.text(p) for p in model), outcome,
                                                  1 if outcome == "late" else 0))


if __name__ == "__main__":
    main()
