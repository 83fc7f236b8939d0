"""Fit a plumb map on labelled scores in Python, save it, load it back and
map new scores with NumPy: the numbers `plumb fit` and `plumb apply` give.

    python3 examples/python/late_risk.py data/holdout.csv data/tonight.csv OUTDIR

Writes OUTDIR/late.map.json (the artifact `plumb fit --no-timestamp --map
isotonic --score risk --label missed data/holdout.csv` writes) and
OUTDIR/tonight.p.txt (one probability per line, shortest text); prints a
summary and the report's headline figures on the hold-out rows.
"""
import csv
import hashlib
import os
import sys

import numpy as np
import plumb


def column(path, name):
    with open(path, newline="") as f:
        return np.array([float(row[name]) for row in csv.DictReader(f)])


holdout, tonight, out = sys.argv[1:4]
risk, missed = column(holdout, "risk"), column(holdout, "missed")

# What the artifact records about the rows: with the file's name, the
# SHA-256 of its bytes and its column names it is byte for byte the CLI's.
with open(holdout, "rb") as f:
    sha256 = hashlib.sha256(f.read()).hexdigest()
fitted = plumb.fit(risk, missed, kind="isotonic", score_column="risk", label_column="missed",
                   source=holdout, source_sha256=sha256, timestamp=False)
fitted.save(os.path.join(out, "late.map.json"))

late = plumb.load_map(os.path.join(out, "late.map.json"))
p = late(column(tonight, "risk"))  # float64, one per score; the GIL is free meanwhile
with open(os.path.join(out, "tonight.p.txt"), "w") as f:
    f.writelines(repr(float(v)) + "\n" for v in p)

print(f"{late.kind} map on {late.provenance['rows']} rows; {len(p)} scores mapped, mean {p.mean():.4f}")
# In-sample figures: a map fitted on these rows looks better on them than
# it will on new rows (plumb cross-fit measures it out of fold).
figures = plumb.report({"risk": risk, "risk via late.map.json": late(risk)}, missed, bootstrap=0)
for score in figures["scores"]:
    print(f"{score['name']}: ECE {score['calibration_error']['equal_width']['ece']:.4f}, "
          f"Brier {score['brier']:.4f}")

try:
    late(np.array([0.2, 1.5]))
except plumb.Error as e:
    print(f"refused: {e}")
