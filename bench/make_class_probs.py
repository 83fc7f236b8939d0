#!/usr/bin/python3
"""Writes N rows of an invented 4-class parcel outcome for benchmarks,
deterministically:
    bench/make_class_probs.py N > class_probs.csv
Columns: id,p_on_time,p_late,p_lost,p_returned,outcome. Logits z_k are
uniform on [-2, 2]; the scores are softmax(1.6 z) (over-confident) with four
decimals, the largest adjusted so that the row sums to 1 exactly as printed; the
outcome is drawn from softmax(z)."""
import math
import random
import sys

CLASSES = ("on_time", "late", "lost", "returned")


def main():
    n = int(sys.argv[1])
    rng = random.Random(20261203)
    out = sys.stdout
    out.write("id,p_on_time,p_late,p_lost,p_returned,outcome\n")
    buf = []
    for i in range(n):
        z = [rng.random() * 4.0 - 2.0 for _ in CLASSES]
        e = [math.exp(1.6 * v) for v in z]
        t = [math.exp(v) for v in z]
        s = sum(e)
        p = [round(v / s * 1e4) for v in e]
        p[p.index(max(p))] += 10000 - sum(p)
        u = rng.random() * sum(t)
        y = 0
        while y + 1 < len(t) and u >= t[y]:
            u -= t[y]
            y += 1
        buf.append(f"{i}," + ",".join(f"{v / 1e4:.4f}" for v in p) + f",{CLASSES[y]}\n")
        if len(buf) == 100000:
            out.write("".join(buf))
            buf.clear()
    out.write("".join(buf))


if __name__ == "__main__":
    main()
