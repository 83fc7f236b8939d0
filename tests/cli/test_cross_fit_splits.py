"""plumb cross-fit splits end to end: a time column is read as numbers or as
ISO 8601 dates and date-times, never as text, and anything else is refused
with its location; folds read from a column are spelled column=COLUMN, the
first release's given=COLUMN still works, and artifacts that recorded it
still load."""
import datetime
import json
import os
import unittest

from plumbtest import SOURCE_DIR, Lcg, PlumbCase, read_rows, run, write


def night_rows(nights=12, per_night=30, seed=3):
    """(risk, missed, night) rows: nights 1..nights, per_night rows each."""
    g = Lcg(seed)
    rows = []
    for night in range(1, nights + 1):
        for _ in range(per_night):
            s = round(0.05 + 0.9 * g.uniform(), 3)
            rows.append([s, 1 if g.uniform() < s else 0, str(night)])
    return rows


class TimeColumn(PlumbCase):
    def write_rows(self, name, rows, header="risk,missed,night"):
        write(self.path(name), "\n".join([header] + [",".join(str(v) for v in r) for r in rows]) + "\n")
        return self.path(name)

    def cross_fit(self, data, *args):
        oof = self.path("oof.csv")
        rc, _, err = run("cross-fit", "--score", "risk", "--label", "missed", "--map", "platt", "--folds", "4",
                         "--oof", oof, "-o", self.path("m.json"), data, *args)
        self.assertEqual(rc, 0, err)
        return read_rows(oof), err

    def test_one_na_among_numeric_nights_is_refused_with_its_location(self):
        rows = night_rows()
        rows[4 * 30 + 3][2] = "NA"  # night 5's fourth row: data row 124, line 125
        data = self.write_rows("nights.csv", rows)
        out = self.path("m.json")
        # Read as text, "10" < "2": nights 10-12 would fit the maps that score nights 2-4.
        self.assert_refused(["cross-fit", "--score", "risk", "--label", "missed", "--split", "time=night", "-o", out,
                             data], 3, "nights.csv:125:3 (column 'night')", "got 'NA'",
                            "expected a decimal number, as the column's first time '1' (line 2) is", output=out)

    def test_numeric_nights_fold_in_time_order(self):
        oof, err = self.cross_fit(self.write_rows("nights.csv", night_rows()), "--split", "time=night")
        h = oof[0]
        fold_of_night = {}
        for r in oof[1:]:
            fold_of_night.setdefault(int(r[h.index("night")]), set()).add(int(r[h.index("oof_fold")]))
        # 360 rows in 4 blocks of 90: nights 1-3, 4-6, 7-9, 10-12.
        self.assertEqual(fold_of_night, {n: {(n - 1) // 3 + 1} for n in range(1, 13)})
        self.assertIn("never scored", err)

    def test_a_date_among_numbers_is_refused(self):
        rows = night_rows()
        rows[200][2] = "2026-11-30"
        data = self.write_rows("nights.csv", rows)
        self.assert_refused(["cross-fit", "--score", "risk", "--label", "missed", "--split", "time=night", data], 3,
                            "nights.csv:202:3 (column 'night')", "mixes forms", "got '2026-11-30'",
                            "a decimal number")

    def test_a_number_among_dates_is_refused(self):
        rows = night_rows()
        for r in rows:
            r[2] = f"2026-11-{int(r[2]):02d}"
        rows[7][2] = "20261101"
        data = self.write_rows("nights.csv", rows)
        self.assert_refused(["cross-fit", "--score", "risk", "--label", "missed", "--split", "time=night", data], 3,
                            "nights.csv:9:3 (column 'night')", "got '20261101'", "a date as YYYY-MM-DD")

    def test_timestamps_with_offsets_fold_as_instants(self):
        # Hourly deliveries written in three offsets, so that the text order
        # differs from the order in time. Reference: Python's datetime
        # (strptime %z reads Z and +hh:mm) gives each row's instant.
        g = Lcg(21)
        start = datetime.datetime(2026, 11, 28, tzinfo=datetime.timezone.utc)
        zones = [datetime.timezone.utc, datetime.timezone(datetime.timedelta(hours=5)),
                 datetime.timezone(datetime.timedelta(hours=-3, minutes=-30))]
        rows = []
        for hour in range(48):
            instant = start + datetime.timedelta(hours=hour)
            local = instant.astimezone(zones[hour % 3])
            text = local.strftime("%Y-%m-%dT%H:%M:%S") + ("Z" if hour % 3 == 0 else local.strftime("%z")[:3] + ":" +
                                                          local.strftime("%z")[3:])
            for _ in range(10):
                s = round(0.05 + 0.9 * g.uniform(), 3)
                rows.append([s, 1 if g.uniform() < s else 0, text])
        self.assertNotEqual(sorted(r[2] for r in rows), [r[2] for r in rows])  # text order is not time order
        oof, _ = self.cross_fit(self.write_rows("hours.csv", rows), "--split", "time=night")
        h = oof[0]
        instants = {}
        for r in oof[1:]:
            when = datetime.datetime.strptime(r[h.index("night")], "%Y-%m-%dT%H:%M:%S%z")
            instants.setdefault(int(r[h.index("oof_fold")]), []).append(when)
        self.assertEqual(sorted(instants), [1, 2, 3, 4])
        for fold in (2, 3, 4):
            self.assertLess(max(instants[fold - 1]), min(instants[fold]))
        self.assertEqual([len(instants[f]) for f in (1, 2, 3, 4)], [120, 120, 120, 120])


class ColumnSplit(PlumbCase):
    def write_folds(self):
        g = Lcg(5)
        lines = ["risk,missed,fold"]
        for i in range(300):
            s = round(0.05 + 0.9 * g.uniform(), 3)
            lines.append(f"{s},{1 if g.uniform() < s else 0},f{i % 3}")
        write(self.path("folds.csv"), "\n".join(lines) + "\n")
        return self.path("folds.csv")

    def test_column_split_and_the_old_spelling_give_the_same_folds(self):
        data = self.write_folds()
        results = {}
        for spelling in ("column", "given"):
            oof, ev = self.path(spelling + ".oof.csv"), self.path(spelling + ".json")
            rc, _, err = run("cross-fit", "-q", "--score", "risk", "--label", "missed", "--map", "platt", "--split",
                             spelling + "=fold", "--oof", oof, "--json", ev, "-o", self.path(spelling + ".map.json"),
                             data)
            self.assertEqual(rc, 0, err)
            with open(oof) as f:
                results[spelling] = (f.read(), self.load_json(ev))
        self.assertEqual(results["column"], results["given"])
        oof_text, evidence = results["column"]
        self.assertEqual(evidence["split"], {"kind": "column", "column": "fold"})
        self.assertEqual(self.load_json(self.path("given.map.json"))["cross_fit"]["split"]["kind"], "column")
        self.assertEqual({r[-2] for r in read_rows(oof_text, is_text=True)[1:]}, {"f0", "f1", "f2"})
        rc, out, err = run("inspect", self.path("given.map.json"))
        self.assertEqual(rc, 0, err)
        self.assertIn("3 folds, column split on 'fold', seed 1", out)

    def test_help_and_messages_show_only_the_new_spelling(self):
        rc, out, _ = run("cross-fit", "--help")
        self.assertEqual(rc, 0)
        self.assertIn("column=COLUMN", out)
        self.assertNotIn("given=", out)
        rc, _, err = run("cross-fit", "--score", "risk", "--label", "missed", "--split", "folds=fold",
                         self.write_folds())
        self.assertEqual(rc, 2)
        self.assertIn("column=COLUMN", err)
        self.assertNotIn("given", err)

    def test_an_artifact_that_recorded_given_still_loads(self):
        # Written by the first release's plumb cross-fit --split given=fold.
        old = os.path.join(SOURCE_DIR, "tests", "cli", "fixtures", "given-split.map.json")
        self.assertEqual(self.load_json(old)["cross_fit"]["split"], {"kind": "given", "column": "fold"})
        rc, out, err = run("inspect", old)
        self.assertEqual(rc, 0, err)
        self.assertIn("3 folds, column split on 'fold', seed 1, 60 rows scored out of fold", out)
        rc, out, err = run("inspect", "--json", old)
        self.assertEqual(rc, 0, err)
        self.assertEqual(json.loads(out)["cross_fit"]["split"]["kind"], "given")  # the record is kept as written
        write(self.path("s.csv"), "risk\n0.2\n0.7\n")
        rc, out, err = run("apply", "-q", old, self.path("s.csv"))
        self.assertEqual(rc, 0, err)
        self.assertEqual(len(out.splitlines()), 3)


if __name__ == "__main__":
    unittest.main()
