#!/usr/bin/env bash
# Usage: compare_builds.sh BIN_A BIN_B
#
# Runs the same commands (every map kind and option that changes the
# arithmetic, cross-fit with a seed, report with a seeded bootstrap on one
# and two threads, apply on one and two threads, inspect) with two plumb binaries, say the
# optimised build and the sanitizer build, and checks that every output is
# byte-identical: the numbers must not depend on the build type.
#
# They agree because nothing lets the compiler change the arithmetic: no
# -ffast-math, no -march (so on x86-64 doubles use SSE2, not the x87's
# 80-bit registers, and no FMA instructions exist for GCC to contract
# a * b + c into), and no sum whose order depends on the thread count.
# A build with -march=native or -mfma may round differently; this script
# is the check that says so.
set -euo pipefail
if [ $# -ne 2 ]; then
  echo "usage: $0 BIN_A BIN_B" >&2
  exit 2
fi
bin_a=$(realpath "$1")
bin_b=$(realpath "$2")
root=$(cd "$(dirname "${BASH_SOURCE[0]}")/../.." && pwd)
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
cp "$root/data/holdout.csv" "$work/"
head -n 50001 "$root/data/tonight.csv" > "$work/tonight.csv"

# Runs every command with plumb binary $1 in directory $2. Inputs are named
# by the same relative path in both runs, so provenance is the same too.
run_all() {
  local plumb=$1 out=$2
  mkdir -p "$out"
  cd "$out"
  local common=(--score risk --label missed --no-timestamp -q)
  "$plumb" fit --map isotonic "${common[@]}" ../holdout.csv -o isotonic.json
  "$plumb" fit --map isotonic --between step "${common[@]}" ../holdout.csv -o isotonic-step.json
  "$plumb" fit --map platt "${common[@]}" ../holdout.csv -o platt.json
  "$plumb" fit --map platt --platt-targets labels --weight route_km "${common[@]}" ../holdout.csv -o platt-w.json
  "$plumb" fit --map platt --scale margin --score route_km --label missed --no-timestamp -q ../holdout.csv \
    -o platt-margin.json
  "$plumb" fit --map beta "${common[@]}" ../holdout.csv -o beta.json
  "$plumb" fit --map beta --beta-form midpoint "${common[@]}" ../holdout.csv -o beta-midpoint.json
  "$plumb" fit --map beta --beta-form shared "${common[@]}" ../holdout.csv -o beta-shared.json
  "$plumb" fit --map temperature "${common[@]}" ../holdout.csv -o temperature.json
  "$plumb" fit --map histogram --bins 25 "${common[@]}" ../holdout.csv -o histogram.json
  "$plumb" cross-fit --seed 7 --oof oof.csv --json cross-fit.json "${common[@]}" ../holdout.csv -o cross-fit.map.json
  "$plumb" cross-fit --seed 7 --split group=depot --final folds "${common[@]}" ../holdout.csv \
    -o cross-fit-groups.map.json
  "$plumb" apply platt.json ../tonight.csv --threads 1 -q -o apply-platt-1.csv
  for threads in 1 2; do
    "$plumb" report --score risk --map platt.json --map isotonic.json --label missed --by depot \
      --bootstrap 100 --seed 3 --threads "$threads" --json "report-$threads.json" --svg "report-$threads.svg" \
      --markdown "report-$threads.md" ../holdout.csv > "report-$threads.txt"
  done
  for map in *.json; do
    case $map in report-*|cross-fit.json) continue ;; esac
    "$plumb" inspect "$map" > "inspect-${map%.json}.txt"
    "$plumb" apply "$map" ../tonight.csv --threads 2 -q -o "apply-${map%.json}.csv"
  done
  cd - > /dev/null
}

run_all "$bin_a" "$work/a"
run_all "$bin_b" "$work/b"

count=$(find "$work/a" -type f | wc -l)
if [ "$count" -lt 40 ]; then
  echo "compare_builds: only $count outputs were written" >&2
  exit 1
fi
if ! diff -r -q "$work/a" "$work/b" >&2; then
  echo "compare_builds: the outputs of $bin_a and $bin_b differ" >&2
  exit 1
fi
# The seeded bootstrap gives the same figures on one and two threads.
for ext in json svg md txt; do
  cmp "$work/a/report-1.$ext" "$work/a/report-2.$ext" >&2
done
cmp "$work/a/apply-platt-1.csv" "$work/a/apply-platt.csv" >&2
echo "compare_builds: $count outputs byte-identical between $bin_a and $bin_b"
