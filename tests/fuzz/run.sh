#!/usr/bin/env bash
# Runs every libFuzzer target of a fuzz build for a bounded time, then once
# over its regression inputs; fails if any target finds a crash, a leak or
# a broken invariant.
#
#   bash tests/fuzz/run.sh BUILD_DIR SECONDS
#
# BUILD_DIR was configured with clang and -DPLUMB_FUZZ=ON (see DEVELOPERS.md,
# "Fuzzing"); SECONDS is the fuzzing time of all targets together, shared
# equally. Each target starts from a scratch copy of its seed corpus
# (tests/fuzz/corpus/TARGET), so the committed corpus is never changed.
# Inputs that fail are kept in BUILD_DIR/fuzz-failures/.
set -euo pipefail
here=$(cd "$(dirname "${BASH_SOURCE[0]}")" && pwd)
[ $# -eq 2 ] || { echo "usage: $0 BUILD_DIR SECONDS" >&2; exit 2; }
build=$(cd "$1" && pwd)
total=$2

targets=()
for source in "$here"/fuzz_*.cpp; do
  name=$(basename "$source" .cpp)
  [ -x "$build/tests/fuzz/$name" ] || { echo "fuzz: $build/tests/fuzz/$name is not built" >&2; exit 2; }
  targets+=("$name")
done
per_target=$(( total / ${#targets[@]} ))
[ "$per_target" -ge 1 ] || per_target=1

failures=$build/fuzz-failures
mkdir -p "$failures"
scratch=$(mktemp -d)
trap 'rm -rf "$scratch"' EXIT
failed=0

for name in "${targets[@]}"; do
  bin=$build/tests/fuzz/$name
  # Regression inputs first: each once, a failure names the file.
  regressions=("$here/regressions/$name"/*)
  if [ -e "${regressions[0]}" ]; then
    if ! "$bin" -rss_limit_mb=2048 -timeout=60 "${regressions[@]}" > "$scratch/$name.regressions.log" 2>&1; then
      echo "fuzz: $name fails on a regression input:" >&2
      tail -40 "$scratch/$name.regressions.log" >&2
      failed=1
    else
      echo "fuzz: $name passes its ${#regressions[@]} regression inputs"
    fi
  fi

  corpus=$scratch/corpus-$name
  mkdir -p "$corpus"
  cp "$here/corpus/$name"/* "$corpus"/ 2>/dev/null || true
  # One process, no -jobs/-workers: the machines have two cores, shared.
  if "$bin" -max_total_time="$per_target" -rss_limit_mb=2048 -timeout=60 -max_len=16384 \
       -print_final_stats=1 -artifact_prefix="$failures/$name-" "$corpus" > "$scratch/$name.log" 2>&1; then
    execs=$(sed -n 's/^stat::number_of_executed_units: *//p' "$scratch/$name.log")
    cov=$(grep -o 'cov: [0-9]*' "$scratch/$name.log" | tail -1)
    echo "fuzz: $name ran ${per_target}s, ${execs:-?} inputs, ${cov:-cov: ?}, no failures"
  else
    echo "fuzz: $name FAILED; the input is in $failures:" >&2
    tail -60 "$scratch/$name.log" >&2
    failed=1
  fi
done
exit $failed
