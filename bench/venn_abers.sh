#!/usr/bin/env bash
# Venn-Abers against isotonic: CPU seconds (user + sys) of plumb fit and
# plumb apply for the kinds venn_abers, cross_venn_abers and isotonic on one
# file, interleaved run by run so that a busy machine weighs on all alike,
# and the median of each. The issue's targets: a venn_abers fit within 3x
# of an isotonic fit, its apply within 1.5x of isotonic's.
#
#   bash bench/venn_abers.sh PLUMB ROWS_CSV [REPEAT]
#
# ROWS_CSV holds bench/make_rows.py's columns (score, label); docs/benchmarks.md
# uses the first 10^6 rows of its 10^7-row file:
#   head -n 1000001 rows.csv > /tmp/rows1m.csv
set -euo pipefail
plumb=$1
rows=$2
repeat=${3:-5}
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
kinds=(isotonic venn_abers cross_venn_abers)
cpu() { /usr/bin/time -f "%U %S" -o "$work/t" "$@" > /dev/null 2>&1; awk '{printf "%.3f\n", $1 + $2}' "$work/t"; }
for k in "${kinds[@]}"; do : > "$work/fit.$k"; : > "$work/apply.$k"; done
for ((r = 0; r < repeat; r++)); do
  for k in "${kinds[@]}"; do
    cpu "$plumb" fit -q --map "$k" --score score --label label "$rows" -o "$work/$k.json" >> "$work/fit.$k"
  done
  for k in "${kinds[@]}"; do
    cpu "$plumb" apply -q --threads 1 "$work/$k.json" "$rows" >> "$work/apply.$k"
  done
done
median() { sort -g "$1" | awk '{v[NR] = $1} END {print (NR % 2) ? v[(NR + 1) / 2] : (v[NR / 2] + v[NR / 2 + 1]) / 2}'; }
printf "%-18s %12s %12s %10s %10s\n" kind "fit CPU s" "apply CPU s" "fit/iso" "apply/iso"
fi=$(median "$work/fit.isotonic")
ai=$(median "$work/apply.isotonic")
for k in "${kinds[@]}"; do
  f=$(median "$work/fit.$k")
  a=$(median "$work/apply.$k")
  printf "%-18s %12s %12s %10.2f %10.2f\n" "$k" "$f" "$a" "$(echo "$f / $fi" | bc -l)" "$(echo "$a / $ai" | bc -l)"
done
echo "venn_abers steps: $(python3 -c "import json,sys; print(len(json.load(open(sys.argv[1]))['parameters']['p0']))" "$work/venn_abers.json") for $(python3 -c "import json,sys; print(json.load(open(sys.argv[1]))['parameters']['knots'])" "$work/venn_abers.json") knots," \
  "isotonic blocks: $(python3 -c "import json,sys; print(len(json.load(open(sys.argv[1]))['parameters']['block_score_lo']))" "$work/isotonic.json")"
