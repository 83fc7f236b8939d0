"""Mapping 10^7 scores from Python (the plumb module) against the C++
library (plumb_bench_map_array: load_artifact and CalibrationMap::map in a
loop). Not a test: prints a Markdown table for docs/benchmarks.md.

    cmake -S . -B build-bench -G Ninja -DPLUMB_BUILD_TESTS=OFF -DPLUMB_BUILD_BENCH=ON -DPLUMB_WERROR=ON
    cmake --build build-bench -j2 --target plumb plumb_python plumb_bench_map_array
    /usr/bin/python3 bench/embed/python_map.py build-bench [N] [REPEAT]

Maps of every kind are fitted by the built plumb on data/holdout.csv; the
scores are N (default 10^7) uniform draws on [0, 1] (NumPy, seed 1), as
float64 and as float32, and into a
float64 buffer given as out= (no allocation, as the C++ loop). Each side reports the best of REPEAT (default 5)
runs, in CPU seconds of the mapping thread (the machine is shared; CPU time
is what the two sides spend) and in wall seconds, and the two sides'
probabilities must agree (their sums, added in order, are the same double).
"""
import os
import subprocess
import sys
import tempfile
import time

import numpy as np

build = os.path.abspath(sys.argv[1])
n = int(float(sys.argv[2])) if len(sys.argv) > 2 else 10_000_000
repeat = int(sys.argv[3]) if len(sys.argv) > 3 else 5
sys.path.insert(0, os.path.join(build, "python"))
import plumb  # noqa: E402

root = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..")
holdout = os.path.join(root, "data", "holdout.csv")
native = os.path.join(build, "bench", "kernels", "plumb_bench_map_array")

work = tempfile.mkdtemp()
x = np.random.default_rng(1).random(n)
x.tofile(os.path.join(work, "scores.f64"))
x32 = x.astype(np.float32)


def best(f):
    cpu, wall, out = 1e300, 1e300, None
    for _ in range(repeat):
        c0, w0 = time.thread_time(), time.perf_counter()
        out = f()
        wall = min(wall, time.perf_counter() - w0)
        cpu = min(cpu, time.thread_time() - c0)
    return cpu, wall, out


print(f"{n:,} scores, best of {repeat}; CPU seconds of the mapping thread (wall seconds)\n")
print("| map | C++ library | Python, float64 | ratio | Python, float64, out= | ratio | Python, float32 |")
print("|---|---:|---:|---:|---:|---:|---:|")
for kind in ["isotonic", "platt", "beta", "temperature", "histogram"]:
    path = os.path.join(work, kind + ".map.json")
    subprocess.run([os.path.join(build, "plumb"), "fit", "-q", "--map", kind, "--score", "risk", "--label", "missed",
                    holdout, "-o", path], check=True)
    m = plumb.load_map(path)
    c_cpu, c_wall, c_sum = subprocess.run([native, path, os.path.join(work, "scores.f64"), str(repeat)], check=True,
                                          capture_output=True, text=True).stdout.split()
    p_cpu, p_wall, p = best(lambda: m(x))
    # The same probabilities: the C++ side's sum, added in the same order.
    total = float(np.add.accumulate(p)[-1])
    assert float(c_sum) == total, (kind, c_sum, total)
    buf = np.empty_like(x)
    o_cpu, o_wall, _ = best(lambda: m(x, out=buf))
    f_cpu, f_wall, _ = best(lambda: m(x32))
    print(f"| {kind} | {float(c_cpu):.3f} ({float(c_wall):.3f}) | {p_cpu:.3f} ({p_wall:.3f}) | "
          f"{p_cpu / float(c_cpu):.2f} | {o_cpu:.3f} ({o_wall:.3f}) | {o_cpu / float(c_cpu):.2f} | "
          f"{f_cpu:.3f} ({f_wall:.3f}) |")
