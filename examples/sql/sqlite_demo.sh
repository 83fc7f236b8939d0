#!/usr/bin/env bash
# The demo's map used inside SQLite: fit an isotonic map on the hold-out
# parcels, export it as SQL, load tonight's parcels into a database and
# calibrate them there, with the numbers plumb apply gives.
#
#   bash examples/sql/sqlite_demo.sh [WORK_DIR]     (plumb and sqlite3 on PATH)
set -euo pipefail
root=$(cd "$(dirname "${BASH_SOURCE[0]}")/../.." && pwd)
work=${1:-$(mktemp -d)}

plumb fit --map isotonic --score risk --label missed "$root/data/holdout.csv" -q -o "$work/late.map.json"
plumb export --sql sqlite "$work/late.map.json" -o "$work/late.sql"

# The export holds the knot table's statements (a map of more than 64
# blocks), then the expression, after the line "-- The probability ...".
statements=$(sed '/^-- The probability/,$d' "$work/late.sql")
expression=$(sed -n '/^-- The probability/,$p' "$work/late.sql" | tail -n +2)

rm -f "$work/parcels.db"
sqlite3 -bail "$work/parcels.db" <<SQL
CREATE TABLE tonight (parcel_id TEXT, depot TEXT, route_km REAL, risk REAL);
.import --csv --skip 1 $root/data/tonight.csv tonight
$statements
CREATE VIEW tonight_calibrated AS SELECT parcel_id, depot, risk, $expression AS p_late FROM tonight;
.mode list
.separator ,
.headers on
-- Tonight's parcels most likely to miss their window, and each depot's expected misses.
SELECT parcel_id, depot, risk, printf('%!.17g', p_late) AS p_late FROM tonight_calibrated
  ORDER BY p_late DESC, parcel_id LIMIT 5;
SELECT depot, count(*) AS parcels, printf('%.1f', sum(p_late)) AS expected_misses FROM tonight_calibrated
  GROUP BY depot ORDER BY depot;
SQL
