#!/usr/bin/env bash
# Usage: compare_report.sh OLD_PLUMB NEW_PLUMB
#
# Runs a fixed set of report command lines (every output format, both
# binnings, other bin and group counts, weights, segments, maps on the fly,
# a seeded bootstrap, tallies with and without weights) with two plumb
# binaries, say one built from an older commit and the current build, and compares the outputs byte for
# byte. Text, SVG and Markdown must be identical, and JSON may differ only in
# - the calibration regression's three numbers (slope and both intercepts),
#   whose Newton steps run on per-forecast cells since the report was moved
#   onto cells: the sums are taken in another order, so their last bits move;
# - the AUC of weighted rows with tied forecasts: its tie groups were summed
#   in the order an unstable sort left them, now in input order;
# each by at most 1e-12 * max(1, |value|);
# - the bootstrap's intervals (JSON "bootstrap") and the consistency band
#   (a bin's "band"): since cells of more than 64 rows draw their Poisson
#   and binomial counts in one exact draw (count_draws.hpp, PTRS and BTRS)
#   rather than row by row, the same seed gives other replicates on data
#   with such cells (ties.csv here), so these move by Monte Carlo noise.
#   Then, and only then, the text, SVG and Markdown of the same command may
#   differ too; so that their point estimates are still held byte for byte,
#   every command line runs a second time with --bootstrap 0 (outputs z*),
#   whose outputs must all be identical (JSON as above).
# Every difference found is printed with its size.
#
#   git worktree add /tmp/plumb-old 06af2b8 && cmake -S /tmp/plumb-old -B /tmp/plumb-old/build -G Ninja \
#     && cmake --build /tmp/plumb-old/build --target plumb_cli
#   bash tests/determinism/compare_report.sh /tmp/plumb-old/build/plumb build/plumb
set -euo pipefail
if [ $# -ne 2 ]; then
  echo "usage: $0 OLD_PLUMB NEW_PLUMB" >&2
  exit 2
fi
bin_a=$(realpath "$1")
bin_b=$(realpath "$2")
root=$(cd "$(dirname "${BASH_SOURCE[0]}")/../.." && pwd)
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
cp "$root/data/holdout.csv" "$work/"
# Many tied forecasts: the holdout's risk rounded to two decimals.
awk -F, 'NR == 1 { print; next } { $4 = sprintf("%.2f", $4); print }' OFS=, "$root/data/holdout.csv" > "$work/ties.csv"
python3 "$root/bench/make_rows.py" 20000 > "$work/rows.csv"

run_all() {
  local plumb=$1 out=$2
  mkdir -p "$out"
  cd "$out"
  local c=(--score risk --label missed)
  "$plumb" fit --map isotonic "${c[@]}" --no-timestamp -q ../holdout.csv -o iso.map.json
  "$plumb" fit --map platt "${c[@]}" --no-timestamp -q ../holdout.csv -o platt.map.json
  local i=0
  while IFS= read -r line; do
    i=$((i + 1))
    # shellcheck disable=SC2086
    "$plumb" report $line --json "r$i.json" --svg "r$i.svg" --markdown "r$i.md" > "r$i.txt" 2> "r$i.err" \
      || echo "exit $?" >> "r$i.err"
    local zline
    zline=$(sed -E 's/--bootstrap [0-9]+/--bootstrap 0/' <<< "$line")
    # shellcheck disable=SC2086
    "$plumb" report $zline --json "z$i.json" --svg "z$i.svg" --markdown "z$i.md" \
      > "z$i.txt" 2> "z$i.err" || echo "exit $?" >> "z$i.err"
  done <<'LINES'
--score risk --label missed --bootstrap 0 ../holdout.csv
--score risk --label missed --bootstrap 60 --seed 3 --threads 2 --by depot ../holdout.csv
--score risk --map iso.map.json --map platt.map.json --label missed --bootstrap 40 --seed 5 ../holdout.csv
--score risk --label missed --binning mass --bins 7 --groups 7 --bootstrap 40 ../holdout.csv
--score risk --label missed --binning mass --bins 12 --groups 10 --bootstrap 0 ../holdout.csv
--score risk --label missed --weight route_km --bootstrap 40 --by depot ../holdout.csv
--score risk --label missed --weight route_km --binning mass --bootstrap 0 ../holdout.csv
--score risk --label missed --bootstrap 40 --by depot --max ece=0.001 --max mcb=0.5 ../ties.csv
--score risk --label missed --binning mass --weight route_km --bootstrap 30 ../ties.csv
--score score --label label --bootstrap 30 --by depot ../rows.csv
--score score --label label --binning mass --bootstrap 0 --confidence 0.9 ../rows.csv
LINES
  "$plumb" tally "${c[@]}" -q ../holdout.csv -o holdout.tally.json
  "$plumb" tally "${c[@]}" -q ../ties.csv -o ties.tally.json
  "$plumb" tally "${c[@]}" --weight route_km -q ../ties.csv -o weighted.tally.json
  "$plumb" tally --score score --label label -q ../rows.csv -o rows.tally.json
  for t in holdout ties weighted; do
    # The bootstrap resamples rows: a weighted tally has summed them away.
    if [ "$t" != weighted ]; then
      "$plumb" report --score risk --tally "$t.tally.json" --bootstrap 40 --json "t-$t.json" --svg "t-$t.svg" \
        --markdown "t-$t.md" > "t-$t.txt"
      "$plumb" report --map iso.map.json --score risk --tally "$t.tally.json" --binning mass --bootstrap 20 \
        --json "tm-$t.json" > "tm-$t.txt"
    fi
    "$plumb" report --score risk --tally "$t.tally.json" --bootstrap 0 --json "zt-$t.json" --svg "zt-$t.svg" \
      --markdown "zt-$t.md" > "zt-$t.txt"
    "$plumb" report --map iso.map.json --score risk --tally "$t.tally.json" --binning mass --bootstrap 0 \
      --json "ztm-$t.json" > "ztm-$t.txt"
  done
  "$plumb" report --score score --tally rows.tally.json --bootstrap 30 --json t-rows.json > t-rows.txt
  "$plumb" report --score score --tally rows.tally.json --bootstrap 0 --binning mass --json zt-rows.json \
    > zt-rows.txt
  cd - > /dev/null
}

run_all "$bin_a" "$work/a"
run_all "$bin_b" "$work/b"

status=0
count=0
# JSON first: a file whose bootstrap intervals or band moved (and nothing
# else beyond the stated tolerances) lets the other formats of the same
# command differ; its --bootstrap 0 twin (z*) must then agree in full.
declare -A moved=()
for fa in "$work"/a/*.json; do
  f=${fa##*/}
  fb=$work/b/$f
  count=$((count + 1))
  cmp -s "$fa" "$fb" && continue
  case $f in
    *.tally.json) echo "tally file $f differs (new format version?)"; continue ;;
  esac
  rc=0
  python3 - "$fa" "$fb" <<'PY' || rc=$?
import json, sys
a, b = (json.load(open(p)) for p in sys.argv[1:3])
allowed = ("slope", "intercept_free", "intercept_at_unit_slope")
bad = False
intervals = 0
def walk(x, y, path):
    global bad, intervals
    if isinstance(x, dict) and isinstance(y, dict) and x.keys() == y.keys():
        for k in x: walk(x[k], y[k], path + "." + k)
    elif isinstance(x, list) and isinstance(y, list) and len(x) == len(y):
        for i, (u, v) in enumerate(zip(x, y)): walk(u, v, f"{path}[{i}]")
    elif x != y:
        if ".bootstrap." in path or ".band." in path:
            intervals += 1
            return
        rel = abs(x - y) / max(abs(x), abs(y)) if isinstance(x, float) and isinstance(y, float) else float("inf")
        close = isinstance(x, float) and isinstance(y, float) and abs(x - y) <= 1e-12 * max(1.0, abs(x))
        key = path.rsplit(".", 1)[1]
        ok = close and ((".calibration_regression." in path and key in allowed) or key == "auc")
        bad = bad or not ok
        print(f"{sys.argv[1].rsplit('/', 1)[1]}{path}: {x!r} -> {y!r} (relative {rel:.2g}){'' if ok else '  NOT ALLOWED'}")
walk(a, b, "")
name = sys.argv[1].rsplit('/', 1)[1]
if intervals:
    print(f"{name}: {intervals} bootstrap interval or band bounds moved (allowed: new draws for cells of more than 64 rows)")
sys.exit(1 if bad else (3 if intervals else 0))
PY
  case $rc in
    0) ;;
    3) if [[ $f == z* ]]; then
         echo "$f: intervals moved in a --bootstrap 0 run  NOT ALLOWED"
         status=1
       else
         moved[${f%.json}]=1
       fi ;;
    *) status=1 ;;
  esac
done
for fa in "$work"/a/*; do
  f=${fa##*/}
  [[ $f == *.json ]] && continue
  fb=$work/b/$f
  count=$((count + 1))
  cmp -s "$fa" "$fb" && continue
  stem=${f%.*}
  if [[ $f != *.err && -n ${moved[$stem]:-} ]]; then
    echo "$f differs where its JSON's intervals moved (allowed; its --bootstrap 0 twin is compared in full)"
    continue
  fi
  echo "$f differs"; diff "$fa" "$fb" | head -5; status=1
done
if [ "$count" -lt 50 ]; then
  echo "compare_report: only $count outputs were written" >&2
  exit 1
fi
[ $status -eq 0 ] && echo "compare_report: $count outputs compared; within the stated differences"
exit $status
