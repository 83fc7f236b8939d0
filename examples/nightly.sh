#!/usr/bin/env bash
# A month of the courier's nightly job on invented data: every night, apply
# the map to the night's parcels, report on the night's outcomes, and check
# drift (plumb drift) for the whole night against the map's fit rows and for
# each depot against that depot's own hold-out rows. One depot, Dunmarrow,
# drifts from night 18 on (examples/make_nights.py); the summary lines show
# which nights and depots the PSI gate flags. The report and the whole
# night's drift append to WORK_DIR/nightly.jsonl (the nights are dated
# 2026-11-01 to 2026-11-30), and the last night's report writes the review
# page WORK_DIR/review.html with the month's trend (and its text report,
# WORK_DIR/review.txt).
#
# Usage: examples/nightly.sh [WORK_DIR]   (default: nightly-work; PLUMB=path/to/plumb)
# The map is data/late.map.json when it exists, else an isotonic map fitted
# here on data/holdout.csv.
set -euo pipefail
root=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
plumb=${PLUMB:-plumb}
work=${1:-nightly-work}
# The gate: a PSI above 0.25 is a large shift (common practice: 0.1 and
# 0.25; some use 0.2).
gate=psi=0.25
mkdir -p "$work/out" "$work/ref" "$work/depot"
history=$work/nightly.jsonl
rm -f "$history"

/usr/bin/python3 "$root/examples/make_nights.py" --out "$work/nights"

map=$work/late.map.json
if [[ -f $root/data/late.map.json ]]; then
  cp "$root/data/late.map.json" "$map"
else
  "$plumb" fit --map isotonic --score risk --label missed "$root/data/holdout.csv" --no-timestamp -q -o "$map"
fi

# Each depot's own hold-out rows: the reference its nights are compared with.
depots=()
while IFS= read -r depot; do depots+=("$depot"); done < <(tail -n +2 "$root/data/holdout.csv" | cut -d, -f2 | sort -u)
slug() { printf '%s' "$1" | tr ' ' '_'; }
for depot in "${depots[@]}"; do
  awk -F, -v d="$depot" 'NR == 1 || $2 == d' "$root/data/holdout.csv" > "$work/ref/$(slug "$depot").csv"
done

for n in $(seq -w 1 30); do
  night=$work/nights/night-$n.csv
  out=$work/out/night-$n
  "$plumb" apply -q "$map" "$night" -o "$out.calibrated.csv"
  if [[ $n == 30 ]]; then
    # The last night: the review page, and the text report with the trend.
    "$plumb" report --map "$map" --label missed --bootstrap 0 --json "$out.report.json" \
      --history "$history" --history-date "2026-11-$n" --html "$work/review.html" "$night" > "$work/review.txt"
  else
    "$plumb" report -q --map "$map" --label missed --bootstrap 0 --json "$out.report.json" \
      --history "$history" --history-date "2026-11-$n" "$night"
  fi
  status=0
  "$plumb" drift -q --map "$map" --label missed --json "$out.drift.json" --max "$gate" \
    --history "$history" --history-date "2026-11-$n" "$night" || status=$?
  [[ $status -eq 0 || $status -eq 7 ]] || exit "$status"
  flagged=()
  [[ $status -eq 7 ]] && flagged+=("all rows")
  for depot in "${depots[@]}"; do
    rows=$work/depot/night-$n-$(slug "$depot").csv
    awk -F, -v d="$depot" 'NR == 1 || $2 == d' "$night" > "$rows"
    status=0
    "$plumb" drift -q --map "$map" --reference "$work/ref/$(slug "$depot").csv" --label missed \
      --json "$work/out/night-$n-$(slug "$depot").drift.json" --max "$gate" "$rows" || status=$?
    [[ $status -eq 0 || $status -eq 7 ]] || exit "$status"
    [[ $status -eq 7 ]] && flagged+=("$depot")
  done
  if [[ ${#flagged[@]} -eq 0 ]]; then
    echo "night $n: no drift gate failed"
  else
    (IFS=','; echo "night $n: $gate failed for: ${flagged[*]}")
  fi
done
