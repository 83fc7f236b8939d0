#!/usr/bin/env bash
# The demo, from a fresh machine: installs what is missing, builds plumb, then
# plays the courier's nightly routine on the invented data in data/:
# fit every kind of map on the labelled hold-out, inspect one, and apply it
# to tonight's 200,000 parcels, both from a file and in a pipeline.
set -euo pipefail
root=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
# shellcheck source=../cmake/setup.sh
source "$root/cmake/setup.sh"
plumb_setup build "$root/build-demo" >/dev/null

# From the repository root with relative paths: the commands shown, and the
# file names written into the report, the chart's title and the maps, are
# the same on every machine.
cd "$root"
plumb=build-demo/plumb
out=build-demo/demo
mkdir -p "$out"

say() { printf '\n$ %s\n' "$*"; "$@"; }

# 1. Fit each kind of map on last month's labelled parcels.
for kind in isotonic platt beta temperature histogram; do
  say "$plumb" fit --map "$kind" --score risk --label missed data/holdout.csv -o "$out/late.$kind.map.json"
done

# 2. Let the evidence choose: every map cross-fitted out of fold.
say "$plumb" cross-fit --score risk --label missed data/holdout.csv --oof "$out/oof.csv" -o "$out/late.map.json"

# 3. Look inside the isotonic map.
say "$plumb" inspect "$out/late.isotonic.map.json"

# 4. Calibrate tonight's dump, to a file and in a pipeline.
say "$plumb" apply "$out/late.isotonic.map.json" data/tonight.csv -o "$out/tonight.calibrated.csv"
printf '\n$ head -4 %s\n' "$out/tonight.calibrated.csv"
head -4 "$out/tonight.calibrated.csv"
printf '\n$ cat data/tonight.csv | plumb apply late.platt.map.json --as p_late - | cut -d, -f1,4,5 | head -3\n'
# head closes the pipe early; plumb then stops on SIGPIPE like any filter.
set +o pipefail
cat data/tonight.csv | "$plumb" apply "$out/late.platt.map.json" --as p_late - | cut -d, -f1,4,5 | head -3
set -o pipefail

# 5. Check the maps honestly: fit on the first 10,000 labelled parcels,
#    report raw and calibrated scores on the other 10,000, per depot.
head -n 10001 data/holdout.csv > "$out/fit-half.csv"
{ head -n 1 data/holdout.csv; tail -n 10000 data/holdout.csv; } > "$out/check-half.csv"
for kind in isotonic platt; do
  "$plumb" fit -q --map "$kind" --score risk --label missed "$out/fit-half.csv" -o "$out/half.$kind.map.json"
done
say "$plumb" report --score risk --map "$out/half.isotonic.map.json" --map "$out/half.platt.map.json" \
  --label missed --by depot "$out/check-half.csv" \
  --json "$out/report.json" --svg "$out/reliability.svg" --markdown "$out/report.md"

# 6. Four outcomes (on time, late, lost, returned): one map for all classes,
#    chosen out of fold, then tonight's parcels with their likely outcome.
say "$plumb" cross-fit --scores 'p_*' --label outcome data/outcomes.csv -o "$out/outcome.map.json"
say "$plumb" apply "$out/outcome.map.json" data/outcomes_tonight.csv --argmax likely_outcome \
  -o "$out/outcomes_tonight.calibrated.csv"
printf '\n$ head -3 %s\n' "$out/outcomes_tonight.calibrated.csv"
head -3 "$out/outcomes_tonight.calibrated.csv"

printf '\nDemo outputs are in %s\n' "$out"
