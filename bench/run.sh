#!/usr/bin/env bash
# plumb's benchmark suite: times plumb's commands and their baselines on
# generated rows, prints the raw times, the ratios against the scale
# targets, and the Google Benchmark kernel table.
#
#   bash bench/run.sh [BUILD_DIR]
#
# Without BUILD_DIR, installs what is missing (Debian, as tests/run.sh does)
# and makes a Release build of plumb and the kernels in build-bench/. A
# BUILD_DIR given is used as it is (no build); the kernels and the
# read-only baseline are taken from it when it was configured with
# -DPLUMB_BUILD_BENCH=ON, else their rows say "not built".
#
# Environment:
#   BENCH_ROWS=N          rows of the main file (default 10000000, about 287 MB)
#   BENCH_REPEAT=K        runs of each timed command; the median is reported (default 3)
#   BENCH_MIN_TIME=S      --benchmark_min_time of the kernels (default 0.2)
#   BENCH_JOBS=J          build jobs (default 1)
#   BENCH_WORK=DIR        keep the generated files in DIR and reuse them next time
#                         (default: a temporary directory, removed at the end)
#
# Every timed command runs under /usr/bin/time -v (wall clock and peak
# resident memory) with its output sent to /dev/null. A full run at 10^7
# rows should take about 15 minutes, most of it the report's bootstrap and R.
set -euo pipefail
root=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
# shellcheck source=../cmake/setup.sh
source "$root/cmake/setup.sh"

rows=${BENCH_ROWS:-10000000}
repeat=${BENCH_REPEAT:-3}
min_time=${BENCH_MIN_TIME:-0.2}
jobs=${BENCH_JOBS:-1}
if ! [ "$rows" -ge 1000 ] 2>/dev/null || ! [ "$repeat" -ge 1 ] 2>/dev/null; then
  echo "bench/run.sh: BENCH_ROWS must be a number of at least 1000 and BENCH_REPEAT at least 1" >&2
  exit 2
fi

plumb_install "${plumb_build_packages[@]}" libbenchmark-dev time gzip mawk r-base-core r-cran-iso
if [ $# -ge 1 ]; then
  build=$(cd "$1" && pwd)
else
  build=$root/build-bench
  cmake -S "$root" -B "$build" -G Ninja -DCMAKE_BUILD_TYPE=Release -DPLUMB_BUILD_TESTS=OFF \
    -DPLUMB_BUILD_BENCH=ON -DPLUMB_WERROR=ON > /dev/null
  cmake --build "$build" -j "$jobs" > /dev/null
fi
plumb=$build/plumb
reader=$build/bench/kernels/plumb_bench_read
kernels=$build/bench/kernels/plumb_kernels
[ -x "$plumb" ] || { echo "bench/run.sh: no plumb in $build" >&2; exit 1; }
build_type=$(sed -n 's/^CMAKE_BUILD_TYPE:[A-Z]*=//p' "$build/CMakeCache.txt" 2>/dev/null || true)
[ "$build_type" = Release ] || echo "bench/run.sh: warning: $build is a '${build_type:-unknown}' build, not Release" >&2

if [ -n "${BENCH_WORK:-}" ]; then
  work=$BENCH_WORK
  mkdir -p "$work"
else
  work=$(mktemp -d)
  trap 'rm -rf "$work"' EXIT
fi

# --- data --------------------------------------------------------------------
# make_rows.py is deterministic; a file already in BENCH_WORK is reused when
# its row count is right.
make_rows() {  # N FILE
  if [ ! -f "$2" ] || [ "$(wc -l < "$2")" -ne $(($1 + 1)) ]; then
    echo "bench/run.sh: generating $1 rows in $2" >&2
    /usr/bin/python3 "$root/bench/make_rows.py" "$1" > "$2.tmp"
    mv "$2.tmp" "$2"
  fi
}
small=$((rows / 10))
slice=$((rows < 100000 ? rows : 100000))
big_file=$work/rows_$rows.csv
small_file=$work/rows_$small.csv
slice_file=$work/slice_$slice.csv
make_rows "$rows" "$big_file"
make_rows "$small" "$small_file"
head -n $((slice + 1)) "$big_file" > "$slice_file"
if [ ! -f "$big_file.gz" ] || [ "$big_file.gz" -ot "$big_file" ]; then
  gzip -c "$big_file" > "$big_file.gz.tmp" && mv "$big_file.gz.tmp" "$big_file.gz"
fi
header=$(head -n 1 "$big_file")
[ "$header" = "id,score,label,depot,route_km,shift" ] || {
  echo "bench/run.sh: unexpected header '$header' from make_rows.py" >&2
  exit 1
}
big_bytes=$(stat -L -c %s "$big_file")

# The isotonic map that apply uses, fitted on the smaller file.
"$plumb" fit -q --map isotonic --score score --label label "$small_file" -o "$work/isotonic.map.json"

# Options that other work adds to apply: use them when this plumb has them.
threads_option=()
one_thread=""
has_threads=0
if "$plumb" apply --help | grep -q -- '--threads'; then
  has_threads=1
  threads_option=(--threads 1)
  one_thread=" --threads 1"
fi
has_gzip=0
printf 'score\n0.5\n' | gzip -c > "$work/probe.csv.gz"
if "$plumb" apply -q "$work/isotonic.map.json" "$work/probe.csv.gz" > /dev/null 2>&1; then has_gzip=1; fi

# --- timing ------------------------------------------------------------------
results=$work/results.tsv
: > "$results"
declare -A wall peak

seconds_of() {  # the "Elapsed (wall clock)" line of time -v, h:mm:ss or m:ss, in seconds
  awk -F': ' '/Elapsed \(wall clock\)/ {
    n = split($2, p, ":"); s = 0
    for (i = 1; i <= n; i++) s = s * 60 + p[i]
    printf "%.2f\n", s }' "$1"
}

# measure KEY LABEL ROWS COMMAND...: runs COMMAND $repeat times; records the
# median wall time and the largest peak RSS (KiB) of the runs.
measure() {
  local key=$1 label=$2 n=$3
  shift 3
  local times=() top=0 r i
  for ((i = 1; i <= repeat; i++)); do
    if ! /usr/bin/time -v -o "$work/time.txt" "$@" > /dev/null 2> "$work/stderr.txt"; then
      echo "bench/run.sh: '$label' failed:" >&2
      cat "$work/stderr.txt" "$work/time.txt" >&2
      exit 1
    fi
    times+=("$(seconds_of "$work/time.txt")")
    r=$(awk '/Maximum resident set size/ {print $NF}' "$work/time.txt")
    ((r > top)) && top=$r
  done
  wall[$key]=$(printf '%s\n' "${times[@]}" | sort -g |
    awk '{ a[NR] = $1 } END { printf "%.2f\n", NR % 2 ? a[(NR + 1) / 2] : (a[NR / 2] + a[NR / 2 + 1]) / 2 }')
  peak[$key]=$top
  printf '%s\t%s\t%s\t%s\t%s\n' "$label" "$n" "${wall[$key]}" "$top" "${times[*]}" >> "$results"
  echo "bench/run.sh: $label: ${times[*]} s" >&2
}

echo "bench/run.sh: timing each command $repeat times on $rows rows" >&2
load_before=$(cut -d' ' -f1-3 /proc/loadavg)
map=$work/isotonic.map.json
# shellcheck disable=SC2016  # the awk program is the baseline, quoted as it is
awk_line='{print $0 "," $2*0.9}'
measure awk "awk -F, '$awk_line'" "$rows" awk -F, "$awk_line" "$big_file"
measure apply1 "plumb apply (isotonic)$one_thread" "$rows" \
  "$plumb" apply -q "${threads_option[@]}" "$map" "$big_file"
measure apply_small "plumb apply (isotonic)$one_thread" "$small" \
  "$plumb" apply -q "${threads_option[@]}" "$map" "$small_file"
if "$plumb" drift --help > /dev/null 2>&1; then
  measure drift "plumb drift (isotonic, no labels)" "$rows" "$plumb" drift -q --map "$map" "$big_file"
fi
if [ $has_threads = 1 ]; then
  measure apply2 "plumb apply (isotonic) --threads 2" "$rows" "$plumb" apply -q --threads 2 "$map" "$big_file"
fi
if [ $has_gzip = 1 ]; then
  measure zcat "zcat FILE.gz" "$rows" zcat "$big_file.gz"
  measure apply_gz "plumb apply (isotonic)$one_thread FILE.gz" "$rows" \
    "$plumb" apply -q "${threads_option[@]}" "$map" "$big_file.gz"
fi
if [ -x "$reader" ]; then
  measure read "plumb_bench_read (read and parse score, label)" "$rows" "$reader" "$big_file" score label
fi
measure fit_iso "plumb fit --map isotonic" "$rows" \
  "$plumb" fit -q --map isotonic --score score --label label "$big_file" -o "$work/fit_isotonic.json"
measure fit_platt "plumb fit --map platt" "$rows" \
  "$plumb" fit -q --map platt --score score --label label "$big_file" -o "$work/fit_platt.json"
measure r_platt "R: scan() + glm(quasibinomial) Platt" "$rows" \
  Rscript "$root/bench/platt_glm.R" "$big_file" "$work/r_platt.txt"
measure fit_slice "plumb fit --map isotonic" "$slice" \
  "$plumb" fit -q --map isotonic --score score --label label "$slice_file" -o "$work/fit_slice.json"
measure r_pava "R: scan() + order() + Iso::pava" "$slice" Rscript "$root/bench/pava_iso.R" "$slice_file"
measure report "plumb report --bootstrap 200" "$rows" \
  "$plumb" report -q --bootstrap 200 --score score --label label "$big_file"
load_after=$(cut -d' ' -f1-3 /proc/loadavg)

# R's Platt coefficients must be plumb's, or the baseline fits another model.
platt_check=$(/usr/bin/python3 - "$work/fit_platt.json" "$work/r_platt.txt" <<'EOF'
import json, sys
p = json.load(open(sys.argv[1]))["parameters"]
a, b = (float(v) for v in open(sys.argv[2]).read().split())
d = max(abs(p["a"] - a), abs(p["b"] - b))
print(f"plumb A={p['a']:.9g} B={p['b']:.9g}; R A={a:.9g} B={b:.9g}; largest difference {d:.2g}"
      + ("" if d < 1e-6 else " (MORE THAN 1e-6: the baseline does not fit the same model)"))
EOF
)

# --- tables ------------------------------------------------------------------
mib() { awk -v k="$1" 'BEGIN { printf "%.1f", k / 1024 }'; }
ratio() { awk -v a="$1" -v b="$2" 'BEGIN { if (b < 0.01) b = 0.01; printf "%.2f", a / b }'; }
status() {  # VALUE OP TARGET
  awk -v v="$1" -v t="$3" -v op="$2" 'BEGIN { ok = (op == ">=") ? v >= t : v <= t; print ok ? "met" : "not met" }'
}

echo
echo "## plumb benchmarks, $(date -u +%Y-%m-%d)"
echo
echo "- $("$plumb" --version 2>/dev/null | head -n 1) at $(git -C "$root" describe --always --dirty 2>/dev/null || echo '?'), $build_type build in $build"
echo "- machine: $(nproc) cores, $(sed -n 's/^model name[[:space:]]*: //p' /proc/cpuinfo | head -n 1), $(awk '/MemTotal/ {printf "%.1f GiB", $2 / 1048576}' /proc/meminfo) RAM, $(. /etc/os-release && echo "$PRETTY_NAME")"
echo "- load average (1, 5, 15 min) before: $load_before; after: $load_after"
echo "- data: bench/make_rows.py $rows: $big_bytes bytes ($(awk -v b="$big_bytes" -v n="$rows" 'BEGIN { printf "%.1f", b / n }') bytes a row), header $header; gzip -6: $(stat -L -c %s "$big_file.gz") bytes"
echo "- awk is $(readlink -f "$(command -v awk)"); $(R --version | head -n 1)"
echo "- each command run $repeat times, output to /dev/null; median wall time, largest peak RSS"
echo
echo "| command | rows | median wall (s) | peak RSS (MiB) | runs (s) |"
echo "| --- | ---: | ---: | ---: | --- |"
while IFS=$'\t' read -r label n w k runs; do
  printf '| %s | %s | %s | %s | %s |\n' "$label" "$n" "$w" "$(mib "$k")" "$runs"
done < "$results"
echo
echo "| target | measured | goal | status |"
echo "| --- | --- | --- | --- |"
if [ -n "${wall[drift]:-}" ]; then
  x=$(ratio "${wall[drift]}" "${wall[apply1]}")
  echo "| drift on unlabelled rows vs apply (one thread) | ${x}x the time | <= 1.5x | $(status "$x" '<=' 1.5) |"
fi
x=$(ratio "${wall[awk]}" "${wall[apply1]}")
echo "| apply (one thread) vs the awk line | ${x}x faster | >= 10x | $(status "$x" '>=' 10) |"
if [ $has_threads = 1 ]; then
  x=$(ratio "${wall[apply1]}" "${wall[apply2]}")
  echo "| apply --threads 2 vs one thread | ${x}x faster | >= 1.7x | $(status "$x" '>=' 1.7) |"
else
  echo "| apply --threads 2 vs one thread | not measured: this plumb apply has no --threads | >= 1.7x | - |"
fi
top=${peak[apply1]}
[ $has_threads = 1 ] && ((peak[apply2] > top)) && top=${peak[apply2]}
flat=$(awk -v s="${peak[apply_small]}" -v b="${peak[apply1]}" 'BEGIN { print (b <= s * 1.1 + 1024) ? 1 : 0 }')
x=$(awk -v t="$top" -v f="$flat" 'BEGIN { print (t < 65536 && f) ? "met" : "not met" }')
echo "| apply peak memory, flat | $(mib "$top") MiB at $rows rows; $(mib "${peak[apply_small]}") MiB at $small rows ($( ((flat)) && echo flat || echo grows)) | < 64 MB and flat | $x |"
if [ -x "$reader" ]; then
  x=$(ratio "${wall[fit_iso]}" "${wall[read]}")
  echo "| fit --map isotonic vs reading and parsing the two columns | ${x}x the time | <= 2x | $(status "$x" '<=' 2) |"
else
  echo "| fit --map isotonic vs reading and parsing the two columns | not measured: plumb_bench_read not built | <= 2x | - |"
fi
x=$(awk -v k="${peak[fit_iso]}" -v n="$rows" 'BEGIN { printf "%.1f", k * 1024 / n }')
echo "| fit --map isotonic peak memory per row | $x bytes | <= about 40 bytes | $(status "$x" '<=' 40) |"
x=$(ratio "${wall[report]}" "${wall[fit_iso]}")
echo "| report --bootstrap 200 vs one fit (isotonic) | ${x}x the time | <= 3x | $(status "$x" '<=' 3) |"
if [ $has_gzip = 1 ]; then
  x=$(awk -v g="${wall[apply_gz]}" -v z="${wall[zcat]}" -v p="${wall[apply1]}" 'BEGIN { printf "%.2f", g / (z + p) }')
  echo "| apply FILE.gz vs zcat FILE.gz plus apply FILE | ${x}x the time | <= 1x | $(status "$x" '<=' 1) |"
else
  echo "| apply FILE.gz vs zcat FILE.gz plus apply FILE | not measured: this plumb apply does not read .gz | <= 1x | - |"
fi
x=$(ratio "${wall[r_platt]}" "${wall[fit_platt]}")
echo "| fit --map platt vs R scan() + glm() | ${x}x faster | (no target) | - |"
x=$(ratio "${wall[r_pava]}" "${wall[fit_slice]}")
echo "| fit --map isotonic vs R order() + Iso::pava, $slice rows | ${x}x faster | (no target) | - |"
echo
echo "Same model check: $platt_check"
if [ "$rows" -lt 10000000 ]; then
  echo
  echo "(BENCH_ROWS=$rows: the targets are stated for 10^7 rows; at fewer rows start-up and"
  echo "fixed memory dominate, so the ratios above only check that the script works.)"
fi

echo
echo "## Kernels (Google Benchmark, --benchmark_min_time=$min_time)"
echo
if [ -x "$kernels" ]; then
  echo '```'
  "$kernels" --benchmark_min_time="$min_time" 2>&1
  echo '```'
else
  echo "not built: configure $build with -DPLUMB_BUILD_BENCH=ON"
fi
