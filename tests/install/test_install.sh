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
echo "install test: 2 passed, 0 failed"
