#!/usr/bin/env bash
# Wall time and peak memory of plumb's commands on a generated file of 10^7
# rows (and apply at 10^6, to show flat memory), against the one-line awk
# transform, with /usr/bin/time -v. Prints a Markdown table.
#   bash bench/run.sh [BUILD_DIR]   (default: build)
set -euo pipefail
root=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
plumb="${1:-$root/build}/plumb"
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
/usr/bin/python3 "$root/bench/make_rows.py" 1000000 > "$work/rows1m.csv"
/usr/bin/python3 "$root/bench/make_rows.py" 10000000 > "$work/rows10m.csv"
"$plumb" fit -q --map isotonic --score score --label label "$work/rows1m.csv" -o "$work/map.json"
measure() {  # label, command...
  local label=$1
  shift
  /usr/bin/time -v "$@" > /dev/null 2> "$work/time.txt"
  printf '| %s | %s | %s |\n' "$label" \
    "$(grep 'Elapsed' "$work/time.txt" | awk '{print $NF}')" \
    "$(grep 'Maximum resident' "$work/time.txt" | awk '{print $NF}')"
}
f=$work/rows10m.csv
echo "| run (10^7 rows unless said) | wall time (m:ss) | peak RSS (KiB) |"
echo "| --- | --- | --- |"
measure "plumb apply (isotonic), 10^6 rows" "$plumb" apply -q "$work/map.json" "$work/rows1m.csv"
measure "plumb apply (isotonic)" "$plumb" apply -q "$work/map.json" "$f"
measure "awk -F, '{print \$0 \",\" \$2*0.9}'" awk -F, '{print $0 "," $2*0.9}' "$f"
measure "plumb fit --map isotonic" "$plumb" fit -q --map isotonic --score score --label label "$f"
measure "plumb fit --map platt" "$plumb" fit -q --map platt --score score --label label "$f"
measure "plumb cross-fit --map isotonic,platt,beta (5 folds)" \
  "$plumb" cross-fit -q --map isotonic,platt,beta --score score --label label "$f"
measure "plumb report --bootstrap 0" "$plumb" report -q --bootstrap 0 --score score --label label "$f"
measure "plumb report --bootstrap 200" "$plumb" report -q --bootstrap 200 --score score --label label "$f"
