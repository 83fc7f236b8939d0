#!/usr/bin/env bash
# Peak memory and wall time of `plumb apply` at 10^6 and 10^7 rows, against
# the one-line awk transform, to show that apply streams in flat memory.
#   bash bench/apply_memory.sh [BUILD_DIR]   (default: build)
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
  /usr/bin/time -v "$@" > "$work/out.csv" 2> "$work/time.txt"
  printf '| %s | %s | %s |\n' "$label" \
    "$(grep 'Elapsed' "$work/time.txt" | awk '{print $NF}')" \
    "$(grep 'Maximum resident' "$work/time.txt" | awk '{print $NF}')"
}
echo "| run | wall time (m:ss) | peak RSS (KiB) |"
echo "| --- | --- | --- |"
measure "plumb apply, 10^6 rows" "$plumb" apply -q "$work/map.json" "$work/rows1m.csv"
measure "plumb apply, 10^7 rows" "$plumb" apply -q "$work/map.json" "$work/rows10m.csv"
measure "awk -F, '{print \$0 \",\" \$2*0.9}', 10^7 rows" awk -F, '{print $0 "," $2*0.9}' "$work/rows10m.csv"
