#!/usr/bin/env bash
# Multi-class benchmarks (issue 13): fit of each multi-class kind and apply of
# a dirichlet map on N rows x 4 classes of the invented outcome scenario,
# against binary apply (platt on one class's column) on the same file, one
# thread, interleaved. Prints CPU seconds (user + sys) and peak memory.
#
#   bash bench/class_bench.sh BUILD_DIR [N] [WORK_DIR]
set -euo pipefail
build=$1
n=${2:-1000000}
work=${3:-$(mktemp -d)}
root=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
plumb=$build/plumb
rows=$work/rows4.csv
[ -f "$rows" ] || /usr/bin/python3 "$root/bench/make_class_rows.py" "$n" "$rows"
cpu() {  # label, command...
  local label=$1
  shift
  /usr/bin/time -f "%U %S %M" -o "$work/time" "$@"
  read -r user sys kb < "$work/time"
  printf '%-28s %8.2f s CPU %8d KB\n' "$label" "$(echo "$user + $sys" | bc)" "$kb"
}
for kind in temperature vector dirichlet one_vs_rest; do
  cpu "fit $kind" "$plumb" fit -q --map "$kind" --l2 0.001 --scores 'p_*' --label outcome "$rows" -o "$work/$kind.json"
done
"$plumb" fit -q --map platt --score p_late --label late "$rows" -o "$work/binary.json"
for round in 1 2 3; do
  cpu "apply binary (round $round)" "$plumb" apply -q "$work/binary.json" "$rows" --threads 1 -o "$work/binary.out.csv"
  cpu "apply dirichlet (round $round)" "$plumb" apply -q "$work/dirichlet.json" "$rows" --threads 1 -o "$work/class.out.csv"
done
