#!/usr/bin/env bash
# cmake --install puts the binary, headers and package config in a prefix;
# a separate project finds it with find_package(plumb), links plumb::core and
# maps scores in-process with exactly the numbers `plumb apply` writes.
# Arguments: BUILD_DIR SOURCE_DIR
set -euo pipefail
build=$1 src=$2
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
cmake --install "$build" --prefix "$work/prefix" >/dev/null
test -x "$work/prefix/bin/plumb"
test -f "$work/prefix/include/plumb/calibration_map.hpp"
cmake -S "$src/examples/library" -B "$work/consumer" -G Ninja -DCMAKE_PREFIX_PATH="$work/prefix" >/dev/null
cmake --build "$work/consumer" >/dev/null

printf 'risk,missed\n0.05,0\n0.1,0\n0.2,1\n0.3,0\n0.45,1\n0.6,0\n0.7,1\n0.8,1\n0.95,1\n' > "$work/h.csv"
printf 'risk\n0.01\n0.15\n0.5\n0.77\n0.99\n' > "$work/t.csv"
for kind in isotonic platt; do
  "$work/prefix/bin/plumb" fit -q --map "$kind" --score risk --label missed "$work/h.csv" -o "$work/m.json"
  "$work/prefix/bin/plumb" apply -q "$work/m.json" "$work/t.csv" | tail -n +2 | cut -d, -f2 > "$work/cli.txt"
  "$work/consumer/score_one" "$work/m.json" 0.01 0.15 0.5 0.77 0.99 > "$work/lib.txt"
  if ! cmp -s "$work/cli.txt" "$work/lib.txt"; then
    echo "library and CLI differ for $kind:"; paste "$work/cli.txt" "$work/lib.txt"; exit 1
  fi
done

# The C API: the shared library and its header, and examples/c built against
# them as a C program outside CMake, giving `plumb apply --digits 17`'s text.
test -f "$work/prefix/include/plumb/c.h"
libdir=$(dirname "$(find "$work/prefix" -name 'libplumb_c.so' | head -n 1)")
cc -std=c11 -Wall -Werror "$src/examples/c/map_scores.c" -I "$work/prefix/include" -L "$libdir" -lplumb_c \
  -Wl,-rpath,"$libdir" -o "$work/map_scores"
"$work/prefix/bin/plumb" fit -q --map beta --score risk --label missed "$src/data/holdout.csv" -o "$work/b.json"
"$work/prefix/bin/plumb" apply -q --digits 17 "$work/b.json" "$src/data/tonight.csv" | tail -n +2 | cut -d, -f5 > "$work/cli.txt"
cut -d, -f4 "$src/data/tonight.csv" | tail -n +2 | "$work/map_scores" "$work/b.json" > "$work/c.txt"
if ! cmp -s "$work/cli.txt" "$work/c.txt"; then
  echo "C example and CLI differ:"; diff "$work/cli.txt" "$work/c.txt" | head; exit 1
fi
passed=3

# The Python module where it is installed (PLUMB_PYTHON_INSTALL_DIR), and
# examples/python run against it: its artifact is the CLI's byte for byte
# and its probabilities apply's.
module=$(find "$work/prefix" -name 'plumb.cpython-*.so' | head -n 1)
if grep -q '^PLUMB_BUILD_PYTHON:BOOL=ON' "$build/CMakeCache.txt" && grep -q '^PLUMB_SANITIZE:BOOL=OFF' "$build/CMakeCache.txt"; then
  test -n "$module"
  mkdir "$work/py"
  PYTHONPATH=$(dirname "$module") /usr/bin/python3 "$src/examples/python/late_risk.py" \
    "$src/data/holdout.csv" "$src/data/tonight.csv" "$work/py" > "$work/py/out.txt"
  grep -q '^isotonic map on 20000 rows; 200000 scores mapped' "$work/py/out.txt"
  grep -q "^refused: the score at index 1 lies outside \[0, 1\]" "$work/py/out.txt"
  "$work/prefix/bin/plumb" fit -q --no-timestamp --map isotonic --score risk --label missed "$src/data/holdout.csv" \
    -o "$work/py/cli.map.json"
  cmp "$work/py/cli.map.json" "$work/py/late.map.json"
  "$work/prefix/bin/plumb" apply -q "$work/py/cli.map.json" "$src/data/tonight.csv" | tail -n +2 | cut -d, -f5 > "$work/py/cli.txt"
  /usr/bin/python3 -c 'import sys
a = [float(x) for x in open(sys.argv[1])]
b = [float(x) for x in open(sys.argv[2])]
sys.exit(0 if a == b and len(a) == 200000 else "Python example and CLI differ")' "$work/py/cli.txt" "$work/py/tonight.p.txt"
  passed=4
fi
echo "install test: $passed passed, 0 failed"
