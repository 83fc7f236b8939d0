"""plumb export --sql for multi-class maps: the SQL gives the K probabilities
of plumb apply --scores, computed by the engines themselves.

Each multi-class kind (temperature, vector, dirichlet, one_vs_rest with
isotonic and platt per class; probabilities and logits) is fitted on the
invented outcome data (data/outcomes.csv) and applied by plumb apply to
the first 5,000 rows of data/outcomes_tonight.csv plus hand-made awkward rows
(exact zeros, ties, a class near 1, probabilities below the floor, large
and equal logits). The same rows go into SQLite (Debian's sqlite3 shell)
and a throwaway PostgreSQL cluster (as tests/cli/test_export_sql.py starts
it; the select list of --sql postgresql and of --sql ansi), and every one of the K probabilities of every row must agree with
apply's to 1e-12, absolute (the bar of the binary SQL export, issue 16).
Rows apply refuses must give NULL. A missing engine fails the test."""
import math
import os
import sys
import tempfile
import unittest

from plumbtest import SOURCE_DIR, PlumbCase, run, write
from test_export_sql import Cluster, sqlite, sqlite_exact

OUTCOMES = os.path.join(SOURCE_DIR, "data", "outcomes.csv")
TONIGHT = os.path.join(SOURCE_DIR, "data", "outcomes_tonight.csv")
CLASSES = ["on_time", "late", "lost", "returned"]
COLUMNS = ["p_" + c for c in CLASSES]
OUT = [c + "_calibrated" for c in COLUMNS]
TOLERANCE = 1e-12
TONIGHT_ROWS = 5000  # of outcomes_tonight.csv's 20,000: the test stays quick

PROBABILITY_ROWS = [
    ["1", "0", "0", "0"],
    ["0", "0", "0", "1"],
    ["0.25", "0.25", "0.25", "0.25"],
    ["0.5", "0.5", "0", "0"],
    ["0.9999999999999999", "1e-16", "0", "0"],
    ["1e-300", "0.5", "0.5", "0"],
    ["0.9995", "0", "0", "0"],
]
LOGIT_ROWS = [
    ["0", "0", "0", "0"],
    ["700", "700", "-700", "0"],
    ["-745", "-746", "-800", "-745"],
    ["30", "-30", "15.5", "0"],
    ["1000", "0", "-1000", "5"],
]
# Rows apply refuses: NULL from the SQL.
REFUSED = {
    False: [["0.5", "0.5", "0.5", "0"], ["-0.1", "0.6", "0.5", "0"], ["1.5", "0", "0", "-0.5"], ["0.999", "0", "0", "0"]],
    True: [],
}

MAPS = [
    ("temperature", ["--map", "temperature"], False),
    ("vector", ["--map", "vector"], False),
    ("dirichlet", ["--map", "dirichlet", "--l2", "0.001"], False),
    ("ovr_isotonic", ["--map", "one_vs_rest", "--per-class", "isotonic"], False),
    ("ovr_platt", ["--map", "one_vs_rest", "--per-class", "platt"], False),
    ("temperature_z", ["--map", "temperature"], True),
    ("dirichlet_z", ["--map", "dirichlet", "--l2", "0.001"], True),
    ("ovr_isotonic_z", ["--map", "one_vs_rest", "--per-class", "isotonic"], True),
]


def rows_file(source, target, logit, extra):
    """parcel and the four score columns of `source` (logarithms of the
    probabilities on the logit scale, in 17 digits), then the `extra` rows."""
    with open(source) as f:
        lines = f.read().splitlines()
    header = lines[0].split(",")
    at = [header.index(c) for c in COLUMNS]
    out = ["parcel," + ",".join(COLUMNS)]
    for line in lines[1:1 + TONIGHT_ROWS]:
        fields = line.split(",")
        values = [fields[i] for i in at]
        if logit:
            values = [repr(math.log(max(float(v), 1e-300))) for v in values]
        out.append(",".join([fields[0]] + values))
    for n, row in enumerate(extra):
        out.append(",".join([f"X{n:03d}"] + row))
    write(target, "\n".join(out) + "\n")


class ExportSqlClasses(PlumbCase):
    @classmethod
    def setUpClass(cls):
        cls._class_tmp = tempfile.TemporaryDirectory(prefix="plumb-sqlc-")
        cls.work = cls._class_tmp.name
        cls.addClassCleanup(cls._class_tmp.cleanup)
        w = lambda name: os.path.join(cls.work, name)
        with open(OUTCOMES) as f:
            lines = f.read().splitlines()
        header = lines[0].split(",")
        at = [header.index(c) for c in COLUMNS] + [header.index("outcome")]
        write(w("fit_z.csv"), "\n".join(
            [",".join(COLUMNS + ["outcome"])] +
            [",".join([repr(math.log(max(float(l.split(",")[i]), 1e-300))) for i in at[:4]] + [l.split(",")[at[4]]])
             for l in lines[1:]]) + "\n")
        rows_file(TONIGHT, w("rows_p.csv"), False, PROBABILITY_ROWS)
        rows_file(TONIGHT, w("rows_z.csv"), True, LOGIT_ROWS)
        cls.count = {False: TONIGHT_ROWS + len(PROBABILITY_ROWS), True: TONIGHT_ROWS + len(LOGIT_ROWS)}
        for name, args, logit in MAPS:
            run("fit", *args, "--scores", "p_*", "--label", "outcome", *(["--scale", "logit"] if logit else []),
                w("fit_z.csv") if logit else OUTCOMES, "-q", "-o", w(name + ".map.json"), check=True)
            run("apply", w(name + ".map.json"), w("rows_z.csv" if logit else "rows_p.csv"), "-q", "-o",
                w(name + ".ref.csv"), check=True)
        # SQLite: the scores as exact quotients (tests/cli/test_export_sql.py
        # says why), apply's probabilities as text.
        cls.db = w("rows.db")
        script = ["BEGIN;"]
        for logit in (False, True):
            table = "rows_z" if logit else "rows_p"
            script.append(f"CREATE TABLE {table} (parcel TEXT, " + ", ".join(f"{c} REAL" for c in COLUMNS) + ");")
            with open(w(table + ".csv")) as f:
                next(f)
                for line in f:
                    fields = line.strip().split(",")
                    script.append(f"INSERT INTO {table} VALUES ('{fields[0]}', " +
                                  ", ".join(sqlite_exact(float(v)) for v in fields[1:]) + ");")
            script.append(f"CREATE TABLE refused_{table} (" + ", ".join(f"{c} REAL" for c in COLUMNS) + ");")
            for row in REFUSED[logit]:
                script.append(f"INSERT INTO refused_{table} VALUES (" + ", ".join(row) + ");")
        script.append("COMMIT;")
        for name, _, _ in MAPS:
            script.append(f'CREATE TABLE "ref_{name}" (parcel TEXT, s0 TEXT, s1 TEXT, s2 TEXT, s3 TEXT, '
                          'r0 REAL, r1 REAL, r2 REAL, r3 REAL);')
            script.append(f'.import --csv --skip 1 {w(name + ".ref.csv")} "ref_{name}"')
        sqlite(cls.db, "\n".join(script) + "\n")
        cls.cluster = Cluster()
        cls.addClassCleanup(cls.cluster.close)
        script = []
        for name, _, _ in MAPS:
            script.append(f'CREATE TABLE "{name}" (parcel text, ' + ", ".join(f"{c} float8" for c in COLUMNS) +
                          ", r0 float8, r1 float8, r2 float8, r3 float8);")
            script.append(f"\\copy \"{name}\" FROM '{w(name + '.ref.csv')}' CSV HEADER")
        script.append("CREATE TABLE refused (" + ", ".join(f"{c} float8" for c in COLUMNS) + ");")
        for row in REFUSED[False]:
            script.append("INSERT INTO refused VALUES (" + ", ".join(row) + ");")
        cls.cluster.psql("\n".join(script) + "\n")

    def export(self, name, *args):
        rc, out, err = run("export", *args, os.path.join(self.work, name + ".map.json"))
        self.assertEqual(rc, 0, err)
        self.assertEqual(err, "")
        return out

    @staticmethod
    def split(text):
        head, select = text.split("-- The probabilities", 1)
        statements = "\n".join(l for l in head.splitlines() if not l.startswith("--"))
        return statements, select.split("\n", 1)[1].strip()

    measured = []

    @classmethod
    def tearDownClass(cls):
        # The agreement measured, for the record (docs/library.md quotes it).
        for how, worst in sorted(cls.measured):
            print(f"{how}: largest difference {worst}", file=sys.stderr)

    def assert_agrees(self, name, how, result, logit):
        rows, nulls, worst = result.strip().split("|")
        self.measured.append((f"{name} {how}", float(worst)))
        self.assertEqual(int(rows), self.count[logit], how)
        self.assertEqual(int(nulls), 0, how)
        self.assertLessEqual(float(worst), TOLERANCE, f"{name} ({how}): largest difference from apply {worst}")

    WORST_SQLITE = "max(" + ", ".join(f"abs({o} - r{j})" for j, o in enumerate(OUT)) + ")"
    WORST_PG = "GREATEST(" + ", ".join(f"abs(q[{j + 1}] - r{j})" for j in range(4)) + ")"

    def test_sqlite_agrees_with_apply(self):
        for name, _, logit in MAPS:
            for ladder in ("0", "1000000"):
                with self.subTest(map=name, inline_max=ladder):
                    text = self.export(name, "--sql", "sqlite", "--inline-max", ladder, "--knot-table",
                                       f"k_{name}_{ladder}")
                    statements, select = self.split(text)
                    for o in OUT:
                        self.assertIn(f'AS "{o}"', select)
                    table = "rows_z" if logit else "rows_p"
                    result = sqlite(self.db, statements + f"\nSELECT count(*), sum({OUT[0]} IS NULL), "
                                    f"max({self.WORST_SQLITE}) FROM (SELECT {select}, r.* FROM {table} JOIN "
                                    f"\"ref_{name}\" AS r ON r.rowid = {table}.rowid);\n")
                    self.assert_agrees(name, f"sqlite, inline-max {ladder}", result, logit)
                    if REFUSED[logit]:
                        nulls = sqlite(self.db, f"SELECT count(*), " + " + ".join(
                            f"sum({o} IS NULL)" for o in OUT) + f" FROM (SELECT {select} FROM refused_{table});\n")
                        n = len(REFUSED[logit])
                        self.assertEqual(nulls.strip(), f"{n}|{4 * n}")

    def test_postgresql_select_list_agrees_with_apply(self):
        for name, _, logit in MAPS:
            for ladder in ("0", "1000000"):
                with self.subTest(map=name, inline_max=ladder):
                    statements, select = self.split(self.export(name, "--sql", "postgresql", "--inline-max", ladder,
                                                                 "--knot-table", f"k_{name}_{ladder}"))
                    self.assertIn("::float8", select)
                    worst = "GREATEST(" + ", ".join(f"abs({o} - r{j})" for j, o in enumerate(OUT)) + ")"
                    result = self.cluster.psql(
                        "SET jit = off;\n" + statements + f"\nSELECT count(*), count(*) FILTER (WHERE {OUT[0]} IS "
                        f"NULL), max({worst}) FROM (SELECT {select}, r0, r1, r2, r3 FROM \"{name}\" OFFSET 0) AS x;\n")
                    self.assert_agrees(name, f"postgresql, inline-max {ladder}", result, logit)
                    if not logit:
                        nulls = self.cluster.psql(f"SELECT count(*) FILTER (WHERE {OUT[0]} IS NULL "
                                                  f"AND {OUT[3]} IS NULL) FROM (SELECT {select} FROM refused) AS x;\n")
                        self.assertEqual(nulls.strip(), str(len(REFUSED[False])))

    def test_ansi_select_list_agrees_with_apply_on_postgresql(self):
        for name, _, logit in MAPS:
            with self.subTest(map=name):
                statements, select = self.split(self.export(name, "--sql", "ansi", "--inline-max", "20",
                                                             "--knot-table", f"a_{name}"))
                self.assertNotIn("::", statements + select)
                worst = "GREATEST(" + ", ".join(f"abs({o} - r{j})" for j, o in enumerate(OUT)) + ")"
                result = self.cluster.psql(
                    "SET jit = off;\n" + statements + f"\nSELECT count(*), count(*) FILTER (WHERE {OUT[0]} IS NULL), "
                    f"max({worst}) FROM (SELECT {select}, r0, r1, r2, r3 FROM \"{name}\" OFFSET 0) AS x;\n")
                self.assert_agrees(name, "ansi on postgresql", result, logit)

    def test_refusals(self):
        self.assert_refused(["export", "--sql", "sqlite", "--score", "p_late",
                             os.path.join(self.work, "vector.map.json")], 2, "--score")
        self.assert_refused(["export", "--sql", "postgresql", "--function", "f",
                             os.path.join(self.work, "vector.map.json")], 2, "--function")


if __name__ == "__main__":
    unittest.main()
