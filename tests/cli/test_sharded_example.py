"""The Dask example (examples/sharded/run_dask.py) on small data: four
shards of 2,500 rows tallied, merged, fitted and applied on a LocalCluster of
two worker processes. The example checks itself (the map from the merged
tallies equals the map fitted on all rows concatenated); this test runs it,
requires that check to pass, and checks the applied shards independently:
each calibrated probability is the map's value at the row's score, read
from the artifact's isotonic blocks (docs/artifact-format.md)."""
import bisect
import csv
import json
import os
import subprocess
import sys
import unittest

from plumbtest import PLUMB, SOURCE_DIR, PlumbCase

SCRIPT = os.path.join(SOURCE_DIR, "examples", "sharded", "run_dask.py")


def isotonic_value(params, score):
    """The isotonic map as docs/artifact-format.md defines it, with linear
    interpolation between blocks and the end values held outside them."""
    lo, hi, val = params["block_score_lo"], params["block_score_hi"], params["block_value"]
    if score <= lo[0]:
        return val[0]
    if score >= hi[-1]:
        return val[-1]
    i = bisect.bisect_right(lo, score) - 1
    if score <= hi[i]:
        return val[i]
    t = (score - hi[i]) / (lo[i + 1] - hi[i])
    return val[i] + t * (val[i + 1] - val[i])


class ShardedExample(PlumbCase):
    def test_dask_tallies_merge_to_the_map_of_all_rows(self):
        proc = subprocess.run([sys.executable, SCRIPT, "--plumb", PLUMB, "--workdir", self.dir, "--shards", "4",
                               "--rows", "2500", "--map", "isotonic"], capture_output=True, text=True, timeout=300)
        self.assertEqual(proc.returncode, 0, proc.stdout + proc.stderr)
        self.assertIn("equals the map fitted on all 10,000 rows at once", proc.stdout)
        with open(self.path("late.isotonic.map.json")) as f:
            artifact = json.load(f)
        self.assertEqual(artifact["provenance"]["rows"], 10000)
        params = artifact["parameters"]
        for i in range(4):
            with open(self.path(f"part-{i:04d}.calibrated.csv"), newline="") as f:
                rows = list(csv.DictReader(f))
            self.assertEqual(len(rows), 2500)
            for r in rows[:500]:
                self.assertAlmostEqual(float(r["risk_calibrated"]), isotonic_value(params, float(r["risk"])),
                                       delta=1e-12)


if __name__ == "__main__":
    unittest.main()
