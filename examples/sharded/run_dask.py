#!/usr/bin/python3
"""Sharded fitting with Dask: tally every shard in parallel, merge the
tallies, fit one map, and apply it to every shard in parallel.

The data are invented (the demo's courier: parcels scored for the chance of
missing their delivery window; see data/README.md). The script writes N
shard CSV files of labelled parcels, then on a dask.distributed LocalCluster
of two worker processes on this machine:

  1. runs `plumb tally` on each shard, one task per shard;
  2. merges the tallies pairwise, as a tree of `plumb merge` tasks;
  3. runs `plumb fit --tally` on the merged tally;
  4. runs `plumb apply` on each shard, one task per shard.

It then checks its own result: the map fitted on the merged tallies must
equal, parameters and diagnostics alike, the map `plumb fit` gives on all
the rows concatenated into one file, and every shard must come back from
apply with every row. It exits 1 when a check fails.

    /usr/bin/python3 examples/sharded/run_dask.py --plumb build/plumb --workdir /tmp/sharded
    /usr/bin/python3 examples/sharded/run_dask.py --shards 16 --rows 50000 --map platt

Needs Debian's python3-dask and python3-distributed.
"""
import argparse
import json
import math
import os
import random
import shutil
import subprocess
import sys

DEPOTS = ("Ambercliff", "Brellinford", "Dunmarrow", "Kestlow Vale", "Oxtide", "Quarrendon", "Varnholm")


def make_shard(path, index, rows, seed):
    """One shard of invented labelled parcels: an over-confident score
    (the true log-odds times 1.8, through the logistic curve), six digits."""
    g = random.Random(seed * 1000003 + index)
    with open(path, "w", newline="") as f:
        f.write("parcel_id,depot,risk,missed\n")
        for i in range(rows):
            depot = DEPOTS[g.randrange(len(DEPOTS))]
            z = g.uniform(-4.0, 1.5) + (0.4 if depot == "Quarrendon" else 0.0)
            risk = round(1.0 / (1.0 + math.exp(-1.8 * z)), 6)
            missed = 1 if g.random() < 1.0 / (1.0 + math.exp(-z)) else 0
            f.write(f"P{index:03d}{i:07d},{depot},{risk},{missed}\n")


def plumb_run(plumb, *args):
    """Runs plumb; raises with its stderr on failure. Runs inside a worker."""
    proc = subprocess.run([plumb, *args], capture_output=True, text=True)
    if proc.returncode != 0:
        raise RuntimeError(f"plumb {' '.join(args)} exited {proc.returncode}: {proc.stderr.strip()}")
    return proc.stderr


def tally_shard(plumb, shard, out, grid):
    extra = ["--logit-grid", str(grid)] if grid else []
    plumb_run(plumb, "tally", "--score", "risk", "--label", "missed", *extra, "-q", shard, "-o", out)
    return out


def merge_pair(plumb, a, b, out):
    plumb_run(plumb, "merge", "-q", a, b, "-o", out)
    return out


def apply_shard(plumb, artifact, shard, out):
    plumb_run(plumb, "apply", "-q", "--as", "risk_calibrated", artifact, shard, "-o", out)
    with open(out) as f:
        return sum(1 for _ in f) - 1


def without_source(doc):
    """An artifact without the members that name its input."""
    doc = dict(doc)
    doc.pop("integrity_sha256")
    doc["provenance"] = {k: v for k, v in doc["provenance"].items() if k not in ("source", "source_sha256")}
    return doc


def main():
    ap = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    ap.add_argument("--plumb", default=os.environ.get("PLUMB_BIN") or shutil.which("plumb") or "plumb",
                    help="the plumb binary (default: $PLUMB_BIN, else plumb on PATH)")
    ap.add_argument("--workdir", default="sharded-work", help="where shards, tallies and outputs go")
    ap.add_argument("--shards", type=int, default=8, help="number of shard files (default 8)")
    ap.add_argument("--rows", type=int, default=20000, help="rows per shard (default 20000)")
    ap.add_argument("--map", default="isotonic", help="kind of map to fit (default isotonic)")
    ap.add_argument("--logit-grid", type=float, default=0.0,
                    help="tally on a logit grid of this step (the exactness check is then skipped)")
    ap.add_argument("--seed", type=int, default=1)
    args = ap.parse_args()

    # Imported here so that --help works without Dask installed.
    from dask.distributed import Client, LocalCluster

    plumb = os.path.abspath(args.plumb) if os.path.sep in args.plumb else args.plumb
    work = os.path.abspath(args.workdir)
    os.makedirs(work, exist_ok=True)
    shards = [os.path.join(work, f"part-{i:04d}.csv") for i in range(args.shards)]
    for i, path in enumerate(shards):
        make_shard(path, i, args.rows, args.seed)

    # Worker processes, two of them (this machine has two cores); the
    # scheduler listens on the loopback address only, with no dashboard.
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                      dashboard_address=None) as cluster, Client(cluster) as client:
        # 1. One tally task per shard.
        level = client.map(tally_shard, [plumb] * len(shards), shards,
                           [p[:-4] + ".tally.json" for p in shards], [args.logit_grid] * len(shards),
                           pure=False)
        # 2. Merge pairwise: a tree of depth log2(shards), each level in parallel.
        depth = 0
        while len(level) > 1:
            depth += 1
            nxt = []
            for k in range(0, len(level) - 1, 2):
                out = os.path.join(work, f"merge-{depth}-{k // 2}.tally.json")
                nxt.append(client.submit(merge_pair, plumb, level[k], level[k + 1], out, pure=False))
            if len(level) % 2 == 1:
                nxt.append(level[-1])
            level = nxt
        merged = level[0].result()
        # 3. One fit on the merged tally.
        artifact = os.path.join(work, f"late.{args.map}.map.json")
        print(plumb_run(plumb, "fit", "--map", args.map, "--tally", merged, "--no-timestamp", "-o", artifact),
              end="")
        # 4. One apply task per shard.
        outs = [p[:-4] + ".calibrated.csv" for p in shards]
        counts = client.gather(client.map(apply_shard, [plumb] * len(shards), [artifact] * len(shards), shards,
                                          outs, pure=False))

    ok = True
    if counts != [args.rows] * len(shards):
        print(f"run_dask: apply wrote {counts} rows per shard, expected {args.rows} each", file=sys.stderr)
        ok = False
    # The check: the same map from all the rows at once.
    if not args.logit_grid:
        everything = os.path.join(work, "all-rows.csv")
        with open(everything, "w") as out:
            for i, path in enumerate(shards):
                with open(path) as f:
                    header = f.readline()
                    if i == 0:
                        out.write(header)
                    shutil.copyfileobj(f, out)
        direct = os.path.join(work, f"direct.{args.map}.map.json")
        plumb_run(plumb, "fit", "--map", args.map, "--score", "risk", "--label", "missed", "--no-timestamp", "-q",
                  everything, "-o", direct)
        with open(artifact) as f:
            a = json.load(f)
        with open(direct) as f:
            b = json.load(f)
        if without_source(a) != without_source(b):
            print("run_dask: the map from the merged tallies differs from the map fitted on all rows",
                  file=sys.stderr)
            ok = False
        else:
            print(f"run_dask: the {args.map} map from {len(shards)} merged tallies equals the map fitted on all "
                  f"{len(shards) * args.rows:,} rows at once")
    print(f"run_dask: {len(shards)} shards applied; outputs in {work}")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
