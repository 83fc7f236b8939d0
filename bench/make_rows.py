#!/usr/bin/python3
"""Writes N rows of invented labelled scores for benchmarks, deterministically:
    bench/make_rows.py N > rows.csv
Columns: id,score,label,depot,route_km,shift (about 29 bytes per row at 10^7
rows, so 287 MB; scores have six decimals)."""
import math
import random
import sys


def main():
    n = int(sys.argv[1])
    rng = random.Random(20261202)
    out = sys.stdout
    out.write("id,score,label,depot,route_km,shift\n")
    buf = []
    for i in range(n):
        z = rng.random() * 5.0 - 3.5
        s = 1.0 / (1.0 + math.exp(-1.8 * z))
        y = 1 if rng.random() < 1.0 / (1.0 + math.exp(-z)) else 0
        buf.append(f"{i},{s:.6f},{y},D{i % 7},{(i * 37) % 500 / 10:.1f},{'AB'[i & 1]}\n")
        if len(buf) == 100000:
            out.write("".join(buf))
            buf.clear()
    out.write("".join(buf))


if __name__ == "__main__":
    main()
