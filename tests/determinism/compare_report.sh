#!/usr/bin/env bash
# Usage: compare_report.sh OLD_PLUMB NEW_PLUMB
#
# Runs a fixed set of report command lines (every output format, both
# binnings, other bin and group counts, weights, segments, maps on the fly,
# a seeded bootstrap, a tally) with two plumb binaries, say one built from
# an older commit and the current build, and compares the outputs byte for
# byte. Text, SVG and Markdown must be identical. JSON may differ only in
# - the calibration regression's three numbers (slope and both intercepts),
#   whose Newton steps run on per-forecast cells since the report was moved
#   onto cells: the sums are taken in another order, so their last bits move;
# - the AUC of weighted rows with tied forecasts: its tie groups were summed
#   in the order an unstable sort left them, now in input order;
# each by at most 1e-12 * max(1, |value|). Every difference found is printed
# with its size.
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
  for t in holdout ties; do
    "$plumb" report --score risk --tally "$t.tally.json" --bootstrap 40 --json "t-$t.json" --svg "t-$t.svg" \
      --markdown "t-$t.md" > "t-$t.txt"
    "$plumb" report --map iso.map.json --score risk --tally "$t.tally.json" --binning mass --bootstrap 20 \
      --json "tm-$t.json" > "tm-$t.txt"
  done
  cd - > /dev/null
}

run_all "$bin_a" "$work/a"
run_all "$bin_b" "$work/b"

status=0
count=0
for fa in "$work"/a/*; do
  f=${fa##*/}
  fb=$work/b/$f
  count=$((count + 1))
  cmp -s "$fa" "$fb" && continue
  case $f in
    *.tally.json) echo "tally file $f differs (new format version?)"; continue ;;
    *.json)
      python3 - "$fa" "$fb" <<'PY' || status=1
import json, sys
a, b = (json.load(open(p)) for p in sys.argv[1:3])
allowed = ("slope", "intercept_free", "intercept_at_unit_slope")
bad = False
def walk(x, y, path):
    global bad
    if isinstance(x, dict) and isinstance(y, dict) and x.keys() == y.keys():
        for k in x: walk(x[k], y[k], path + "." + k)
    elif isinstance(x, list) and isinstance(y, list) and len(x) == len(y):
        for i, (u, v) in enumerate(zip(x, y)): walk(u, v, f"{path}[{i}]")
    elif x != y:
        rel = abs(x - y) / max(abs(x), abs(y)) if isinstance(x, float) and isinstance(y, float) else float("inf")
        close = isinstance(x, float) and isinstance(y, float) and abs(x - y) <= 1e-12 * max(1.0, abs(x))
        key = path.rsplit(".", 1)[1]
        ok = close and ((".calibration_regression." in path and key in allowed) or key == "auc")
        bad = bad or not ok
        print(f"{sys.argv[1].rsplit('/', 1)[1]}{path}: {x!r} -> {y!r} (relative {rel:.2g}){'' if ok else '  NOT ALLOWED'}")
walk(a, b, "")
sys.exit(1 if bad else 0)
PY
      ;;
    *) echo "$f differs"; diff "$fa" "$fb" | head -5; status=1 ;;
  esac
done
if [ "$count" -lt 50 ]; then
  echo "compare_report: only $count outputs were written" >&2
  exit 1
fi
[ $status -eq 0 ] && echo "compare_report: $count outputs compared; text, SVG and Markdown identical, JSON within the stated differences"
exit $status
