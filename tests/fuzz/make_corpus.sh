#!/usr/bin/env bash
# Writes the seed corpora of the fuzz targets into tests/fuzz/corpus/ from
# the demo data and from maps fitted by a plumb binary (an ordinary build):
#
#   bash tests/fuzz/make_corpus.sh BUILD_DIR
#
# The files are committed; run this again only to refresh them. Each stays
# small: a fuzzer mutates seeds, it does not need many rows.
set -euo pipefail
root=$(cd "$(dirname "${BASH_SOURCE[0]}")/../.." && pwd)
plumb=$(cd "$1" && pwd)/plumb
[ -x "$plumb" ] || { echo "usage: $0 BUILD_DIR (with a built plumb binary)" >&2; exit 2; }
corpus=$root/tests/fuzz/corpus
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
# Fits and tallies record the input's name: work in the scratch directory,
# so that the names are short and the same on every run.
cd "$work"
rm -rf "$corpus"
mkdir -p "$corpus/fuzz_csv" "$corpus/fuzz_labelled" "$corpus/fuzz_artifact" "$corpus/fuzz_tally" "$corpus/fuzz_class_input"

# --- CSV texts, shared by fuzz_csv (3 option bytes first) and fuzz_labelled
# (1 option byte first); see the layout at the top of each target.
texts=$work/texts
mkdir -p "$texts"
head -25 "$root/data/holdout.csv" > "$texts/holdout-head.csv"
head -25 "$root/data/tonight.csv" > "$texts/tonight-head.csv"
head -12 "$root/data/holdout.csv" | sed 's/$/\r/' > "$texts/holdout-crlf.csv"
{ printf '\xef\xbb\xbf'; head -8 "$root/data/holdout.csv"; } > "$texts/holdout-bom.csv"
head -10 "$root/data/holdout.csv" | tr ',' '\t' > "$texts/holdout-tab.tsv"
head -10 "$root/data/holdout.csv" | tr ',' ';' > "$texts/holdout-semicolon.csv"
head -6 "$root/data/holdout.csv" | head -c -1 > "$texts/holdout-no-final-newline.csv"
cat > "$texts/quoted.csv" <<'EOF'
"parcel id","depot, area",score,label,weight,segment
P1,"Brellinford, north",0.25,1,2,a
P2,"say ""late""",0.5,0,1,b
"P3","two
lines",0.75,true,0.5,a
P4,,1,FALSE,0,b

P5,"",0e0,0,1e-3,c
EOF
cat > texts/labelled.csv <<'EOF'
score,label,weight,segment
0.1,0,1,north
0.35,1,2.5,south
0.9,1,1,north
0,false,3,east
1,true,0.25,south
0.5,0,0,north
EOF
cat > texts/labelled-logit.csv <<'EOF'
score,label,weight,segment
-2.5,0,1,a
3.25,1,1e2,b
0,1,1,a
-1e300,0,1,c
1e300,1,1,b
EOF
cat > texts/labelled-named.csv <<'EOF'
id,score,label,weight,segment
1,0.2,on time,1,x
2,0.8,late,1,y
3,0.55,late,2,x
EOF
printf 'score,label,weight,segment\r\n0.25,1,1,a\r\n0.75,0,1,b\r\n' > "$texts/labelled-crlf.csv"
printf 'score\tlabel\tweight\tsegment\n0.3\t1\t1\ta\n0.6\t0\t2\tb\n' > "$texts/labelled-tab.tsv"
printf 'score,label\n"0.5","1"\n" 0.25 ",0\n+.5,1\n5e-1,0\n' > "$texts/numbers.csv"

for f in "$texts"/*; do
  name=$(basename "$f")
  # fuzz_csv: separator detected (byte 0 = 0), pieces of up to 8 bytes (byte 1 = 7).
  { printf '\x00\x07,'; cat "$f"; } > "$corpus/fuzz_csv/$name"
  # fuzz_labelled: probability scale, weighted, with segments (0x14); the
  # demo data's score and label columns renamed to the ones it reads.
  { printf '\x14'; sed '1s/risk/score/; 1s/missed/label/' "$f"; } > "$corpus/fuzz_labelled/$name"
done
# A few other option bytes: explicit tab, explicit ';' with small pieces, a
# small record limit; logit scale and the named positive value.
{ printf '\x02\x00\t'; cat "$texts/holdout-tab.tsv"; } > "$corpus/fuzz_csv/holdout-tab-explicit.tsv"
{ printf '\x03\x01;'; cat "$texts/holdout-semicolon.csv"; } > "$corpus/fuzz_csv/holdout-semicolon-explicit.csv"
{ printf '\x0d\x3f,'; cat "$texts/quoted.csv"; } > "$corpus/fuzz_csv/quoted-limit-24.csv"
{ printf '\x15'; cat texts/labelled-logit.csv; } > "$corpus/fuzz_labelled/labelled-logit-scale.csv"
{ printf '\x1c'; cat texts/labelled-named.csv; } > "$corpus/fuzz_labelled/labelled-named-positive.csv"
{ printf '\x34'; cat "$texts/labelled-tab.tsv"; } > "$corpus/fuzz_labelled/labelled-tab-explicit.tsv"
gzip -9n < texts/labelled.csv > "$work/labelled.csv.gz"
{ printf '\x00\x03,'; cat "$work/labelled.csv.gz"; } > "$corpus/fuzz_csv/labelled.csv.gz"

# --- Artifacts: every kind plumb fit makes, on a small slice of the demo
# data (so that isotonic and histogram maps stay a few KB), each scale a
# kind accepts, and a fold average from cross-fit.
head -401 "$root/data/holdout.csv" > fit.csv
fit() { "$plumb" fit --score risk --label missed --no-timestamp -q fit.csv "$@"; }
fit --map isotonic -o "$corpus/fuzz_artifact/isotonic.json"
fit --map isotonic --between step -o "$corpus/fuzz_artifact/isotonic-step.json"
fit --map platt -o "$corpus/fuzz_artifact/platt.json"
fit --map beta -o "$corpus/fuzz_artifact/beta.json"
fit --map beta --beta-form midpoint -o "$corpus/fuzz_artifact/beta-midpoint.json"
fit --map beta --beta-form shared -o "$corpus/fuzz_artifact/beta-shared.json"
fit --map temperature -o "$corpus/fuzz_artifact/temperature.json"
fit --map histogram -o "$corpus/fuzz_artifact/histogram.json"
# Log-odds scores: the same rows with the risk column as log-odds.
awk -F, 'NR == 1 { print; next } { p = $4; if (p <= 0) p = 1e-6; if (p >= 1) p = 1 - 1e-6; $4 = log(p / (1 - p)); print }' OFS=, \
  fit.csv > fit-logit.csv
for kind in platt temperature isotonic histogram; do
  "$plumb" fit --map "$kind" --scale logit --score risk --label missed --no-timestamp -q fit-logit.csv \
    -o "$corpus/fuzz_artifact/$kind-logit.json"
done
"$plumb" fit --map platt --scale margin --score risk --label missed --no-timestamp -q fit-logit.csv \
  -o "$corpus/fuzz_artifact/platt-margin.json"
"$plumb" cross-fit --score risk --label missed --map platt,isotonic --folds 3 --final folds --no-timestamp -q \
  fit.csv -o "$corpus/fuzz_artifact/fold-average.json"
# Adjusted maps (format version 2): downsampled negatives at fit time, then
# a prior shift; and a prior estimated by EM.
fit --map platt --negative-rate 0.5 -o "$work/platt-sampled.json"
"$plumb" adjust -q "$work/platt-sampled.json" --prior 0.3 -o "$corpus/fuzz_artifact/platt-adjusted.json"
"$plumb" adjust -q "$corpus/fuzz_artifact/isotonic.json" --estimate-prior fit.csv --bootstrap 20 \
  -o "$corpus/fuzz_artifact/isotonic-prior-estimated.json"

# --- Tallies: exact and on a logit grid, weighted, named positive value,
# logit and margin scales, and a merge of two shards.
tally() { "$plumb" tally -q "$@"; }
head -41 "$root/data/holdout.csv" > shard-a.csv
{ head -1 "$root/data/holdout.csv"; sed -n 42,81p "$root/data/holdout.csv"; } > shard-b.csv
tally --score risk --label missed shard-a.csv -o "$corpus/fuzz_tally/exact.json"
tally --score risk --label missed shard-b.csv -o b.json
"$plumb" merge -q "$corpus/fuzz_tally/exact.json" b.json -o "$corpus/fuzz_tally/merged.json"
tally --score risk --label missed --logit-grid 0.05 fit.csv -o "$corpus/fuzz_tally/grid.json"
tally --score score --label label --weight weight texts/labelled.csv -o "$corpus/fuzz_tally/weighted.json"
tally --score score --label label --positive late texts/labelled-named.csv -o "$corpus/fuzz_tally/named.json"
tally --score score --label label --scale logit texts/labelled-logit.csv -o "$corpus/fuzz_tally/logit.json"
tally --score score --label label --scale margin texts/labelled-logit.csv -o "$corpus/fuzz_tally/margin.json"
# Rows left out for a missing score (rows_skipped).
{ cat shard-a.csv; echo "P9999999,Brellinford,3.5,NA,1"; } > shard-skip.csv
tally --score risk --label missed --missing skip shard-skip.csv -o "$corpus/fuzz_tally/skipped.json"

# --- fuzz_class_input (1 option byte first): columns p_*, y and w.
printf '\x00p_a,p_b,p_c,y\n0.2,0.3,0.5,a\n0.6,0.3,0.1,c\n0.1,0.8,0.1,b\n' > "$corpus/fuzz_class_input/probabilities.csv"
printf '\x03p_a,p_b,y,w\n1.5,-2,a,1\n0,3,b,2.5\n-1,1,a,0\n' > "$corpus/fuzz_class_input/logits-weighted.csv"
printf '\x04p_a,p_b,y\n0.5,0.5,a\nNA,0.5,b\n0.3,0.7,b\n' > "$corpus/fuzz_class_input/missing-skipped.csv"
{ printf '\x00'; head -21 "$root/data/outcomes.csv" | cut -d, -f4-8 | sed '1s/outcome/y/'; } \
  > "$corpus/fuzz_class_input/outcomes.csv"

du -sh "$corpus"
