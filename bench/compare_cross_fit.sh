#!/bin/bash
# Runs a fixed set of cross-fit command lines through two plumb binaries and
# compares every output byte for byte: the artifact (written with
# --no-timestamp), the --json evidence, the --oof file, the evidence table on
# stderr and the exit code. Used to check that a change to cross-fit's
# computation leaves its results as they were (docs/benchmarks.md):
#
#     bash bench/compare_cross_fit.sh OLD_PLUMB NEW_PLUMB [ROWS]
#
# ROWS (default 20000) rows of invented data with a weight, a group, a time
# and a given-fold column are written by the generator below, plus the demo
# holdout (data/holdout.csv). Prints one line per command line and exits 1
# if any output differs.
set -u
old=$(realpath "$1")
new=$(realpath "$2")
rows=${3:-20000}
root=$(cd "$(dirname "$0")/.." && pwd)
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

/usr/bin/python3 - "$rows" > "$work/rows.csv" <<'PY'
import math, random, sys
n = int(sys.argv[1])
rng = random.Random(20261203)
print("id,score,logit,label,weight,route,night,cv")
for i in range(n):
    z = rng.random() * 5.0 - 3.5
    s = 1.0 / (1.0 + math.exp(-1.8 * z))
    y = 1 if rng.random() < 1.0 / (1.0 + math.exp(-z)) else 0
    # Scores rounded to four decimals, so that many rows share a score;
    # weights with fractions, some zero, so that sums round.
    w = 0.0 if i % 97 == 0 else round(rng.random() * 3.0, 3)
    print(f"{i},{s:.4f},{1.8 * z:.5f},{y},{w},R{rng.randrange(400)},{i // (n // 40 + 1)},{rng.randrange(4)}")
PY
demo=$root/data/holdout.csv

status=0
run() {  # NAME ARGS...
  local name=$1
  shift
  for which in old new; do
    local bin=$old
    [ "$which" = new ] && bin=$new
    mkdir -p "$work/$which"
    (cd "$work/$which" && "$bin" cross-fit --no-timestamp "$@" -o "$name.map.json" --json "$name.evidence.json" \
        --oof "$name.oof.csv" > /dev/null 2> "$name.stderr"; echo $? > "$name.rc")
  done
  local differs=
  for f in map.json evidence.json oof.csv stderr rc; do
    if [ -e "$work/old/$name.$f" ] || [ -e "$work/new/$name.$f" ]; then
      cmp -s "$work/old/$name.$f" "$work/new/$name.$f" || differs="$differs $f"
    fi
  done
  if [ -n "$differs" ]; then
    echo "DIFFERS $name:$differs"
    status=1
  else
    echo "same    $name (exit $(cat "$work/new/$name.rc"))"
  fi
}

d=$work/rows.csv
base=(--score score --label label)
run strat_auto "${base[@]}" "$d"
run strat_three "${base[@]}" --map isotonic,platt,beta "$d"
run strat_each_kind "${base[@]}" --map isotonic,platt,beta,temperature,histogram --folds 3 --seed 7 "$d"
run strat_weighted "${base[@]}" --weight weight --map auto "$d"
run strat_weighted_folds "${base[@]}" --weight weight --final folds --map isotonic,platt,beta "$d"
run group "${base[@]}" --split group=route --map auto "$d"
run group_weighted_folds "${base[@]}" --weight weight --split group=route --final folds --folds 4 "$d"
run time "${base[@]}" --split time=night --map auto "$d"
run time_weighted_folds "${base[@]}" --weight weight --split time=night --final folds --map isotonic,platt,beta "$d"
run given "${base[@]}" --split given=cv --map auto "$d"
run given_weighted "${base[@]}" --weight weight --split given=cv --final folds --map auto "$d"
run logit_auto --score logit --label label --scale logit "$d"
run logit_weighted_folds --score logit --label label --scale logit --weight weight --final folds "$d"
run margin --score logit --label label --scale margin --map auto "$d"
run options "${base[@]}" --map isotonic,platt,beta,histogram --between step --platt-targets labels --beta-form midpoint --bins 7 "$d"
run beta_shared "${base[@]}" --map beta --beta-form shared --weight weight "$d"
run demo_auto --score risk --label missed "$demo"
run demo_three_folds --score risk --label missed --map isotonic,platt,beta --final folds "$demo"
run demo_each --score risk --label missed --map isotonic --folds 10 --seed 3 "$demo"
run demo_histogram --score risk --label missed --map histogram --bins 20 --split group=depot "$demo"
run demo_temperature --score risk --label missed --map temperature,platt "$demo"
run demo_time --score risk --label missed --split time=route_km --map auto "$demo"
exit $status
