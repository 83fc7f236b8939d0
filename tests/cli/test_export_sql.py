"""plumb export --sql: the SQL gives plumb apply's probabilities, computed by
the engines themselves.

Every kind of map (and a fold average, and maps of logit scores) is fitted
on the demo's hold-out rows and applied by plumb apply to the demo's
200,000 rows of tonight.csv; the same rows are loaded into SQLite (Debian's
sqlite3 shell, with its own ln and exp) and into a throwaway PostgreSQL
cluster (Debian's postgresql, initdb and pg_ctl on a Unix socket in a
temporary directory), and the exported SQL must agree with apply's column
to 1e-12, absolute, on every row (the issue's bar; the doubles go through
each engine's own text reading and arithmetic). Piecewise maps are checked
both as a CASE ladder and through a knot table. NULL, out-of-range and
infinite scores must give NULL. A missing engine fails the test."""
import glob
import math
import os
import shutil
import subprocess
import sys
import tempfile
import unittest

from plumbtest import PLUMB, SOURCE_DIR, PlumbCase, run, write

DEMO = os.path.join(SOURCE_DIR, "data")
TOLERANCE = 1e-12

# (name, fit arguments, data column and scale): every kind on the demo.
MAPS = [
    ("isotonic", ["--map", "isotonic"]),
    ("isotonic_step", ["--map", "isotonic", "--between-blocks", "step"]),
    ("platt", ["--map", "platt"]),
    ("platt_labels", ["--map", "platt", "--platt-targets", "labels"]),
    ("beta", ["--map", "beta"]),
    ("beta_midpoint", ["--map", "beta", "--beta-form", "midpoint"]),
    ("temperature", ["--map", "temperature"]),
    ("histogram", ["--map", "histogram"]),
    ("histogram_100", ["--map", "histogram", "--bins", "100"]),
    ("centered", ["--map", "centered_isotonic"]),
    ("centered_strict", ["--map", "centered_isotonic", "--increase", "strict"]),
]
# Maps of the log-odds column (logit scale) and a margin map.
LOGIT_MAPS = [
    ("platt_logit", ["--map", "platt", "--scale", "logit"]),
    ("temperature_logit", ["--map", "temperature", "--scale", "logit"]),
    ("isotonic_margin", ["--map", "isotonic", "--scale", "margin"]),
    ("histogram_margin", ["--map", "histogram", "--scale", "margin", "--bins", "20"]),
    ("centered_margin", ["--map", "centered_isotonic", "--scale", "margin", "--increase", "strict"]),
]


def with_logit_column(source, target):
    """tonight/holdout with the score as log-odds, written with 17 digits;
    plumb and the engines read the same text."""
    with open(source) as f:
        lines = f.read().splitlines()
    header = lines[0].split(",")
    at = header.index("risk")
    out = [",".join(header[:at] + ["z"] + header[at + 1:])]
    for line in lines[1:]:
        fields = line.split(",")
        p = float(fields[at])
        fields[at] = repr(math.log(p) - math.log1p(-p))
        out.append(",".join(fields))
    write(target, "\n".join(out) + "\n")


def postgres_bin(name):
    found = sorted(glob.glob(f"/usr/lib/postgresql/*/bin/{name}"))
    if not found:
        raise AssertionError(f"PostgreSQL's {name} is not installed (Debian package postgresql; tests/run.sh "
                             "installs it)")
    return found[-1]


class Cluster:
    """A throwaway PostgreSQL cluster owned by the unprivileged postgres user
    (initdb refuses root), listening only on a Unix socket in its directory."""

    def __init__(self):
        self.dir = tempfile.mkdtemp(prefix="plumb-pg-")
        self.started = False
        try:
            if os.geteuid() == 0:
                shutil.chown(self.dir, "postgres", "postgres")
                self.prefix = ["runuser", "-u", "postgres", "--"]
            else:
                self.prefix = []
            self.data = os.path.join(self.dir, "data")
            self._as_owner(postgres_bin("initdb"), "-D", self.data, "--auth=trust", "-U", "postgres", "-E", "UTF8",
                           "--no-sync", "--no-instructions")
            self._as_owner(postgres_bin("pg_ctl"), "-D", self.data, "-l", os.path.join(self.dir, "log"), "-w",
                           "-o", f"-k {self.dir} -c listen_addresses='' -p 5432 -c fsync=off", "start")
            self.started = True
        except BaseException:
            self.close()
            raise

    def _as_owner(self, *args):
        proc = subprocess.run([*self.prefix, *args], capture_output=True, text=True, cwd=self.dir)
        if proc.returncode != 0:
            raise AssertionError(f"{' '.join(args)} failed: {proc.stdout}{proc.stderr}")

    def psql(self, sql):
        proc = subprocess.run(["psql", "-X", "-q", "-A", "-t", "-v", "ON_ERROR_STOP=1", "-h", self.dir, "-p", "5432",
                               "-U", "postgres", "-d", "postgres"], input=sql, capture_output=True, text=True)
        if proc.returncode != 0:
            raise AssertionError(f"psql failed: {proc.stderr}\n{sql[:2000]}")
        return proc.stdout

    def close(self):
        try:
            if self.started:
                self._as_owner(postgres_bin("pg_ctl"), "-D", self.data, "-m", "immediate", "-w", "stop")
        finally:
            shutil.rmtree(self.dir, ignore_errors=True)


def sqlite(database, sql):
    if shutil.which("sqlite3") is None:
        raise AssertionError("the sqlite3 shell is not installed (Debian package sqlite3; tests/run.sh installs it)")
    proc = subprocess.run(["sqlite3", "-bail", "-batch", database], input=sql, capture_output=True, text=True)
    if proc.returncode != 0 or proc.stderr:
        raise AssertionError(f"sqlite3 failed: {proc.stderr}\n{sql[:2000]}")
    return proc.stdout


def sqlite_exact(x):
    """x as SQLite reads it exactly: an integer over a power of two (SQLite
    reads integers exactly; dividing by a power of two is exact)."""
    n, d = x.as_integer_ratio()
    out = f"CAST({n} AS REAL)"
    while d > 1:
        step = min(d, 2**62)
        out += f" / CAST({step} AS REAL)"
        d //= step
    return out


def split_export(text):
    """(statements before the expression, the expression) of --sql sqlite/ansi."""
    head, expression = text.split("-- The probability for the score column", 1)
    expression = expression.split("\n", 1)[1]
    statements = "\n".join(l for l in head.splitlines() if not l.startswith("--"))
    return statements, expression.strip()


class ExportSql(PlumbCase):
    @classmethod
    def setUpClass(cls):
        cls._class_tmp = tempfile.TemporaryDirectory(prefix="plumb-sql-")
        cls.work = cls._class_tmp.name
        cls.addClassCleanup(cls._class_tmp.cleanup)
        w = lambda name: os.path.join(cls.work, name)
        with_logit_column(os.path.join(DEMO, "holdout.csv"), w("holdout_z.csv"))
        with_logit_column(os.path.join(DEMO, "tonight.csv"), w("tonight_z.csv"))
        cls.maps = {}
        for name, args in MAPS:
            run("fit", *args, "--score", "risk", "--label", "missed", os.path.join(DEMO, "holdout.csv"), "-q",
                "-o", w(name + ".map.json"), check=True)
            cls.maps[name] = ("risk", os.path.join(DEMO, "tonight.csv"))
        for name, args in LOGIT_MAPS:
            run("fit", *args, "--score", "z", "--label", "missed", w("holdout_z.csv"), "-q", "-o",
                w(name + ".map.json"), check=True)
            cls.maps[name] = ("z", w("tonight_z.csv"))
        # A fold average of isotonic maps: several knot tables at once.
        run("cross-fit", "--map", "isotonic", "--final", "folds", "--score", "risk", "--label", "missed",
            os.path.join(DEMO, "holdout.csv"), "-q", "-o", w("folds.map.json"), check=True)
        cls.maps["folds"] = ("risk", os.path.join(DEMO, "tonight.csv"))
        # apply's probabilities, loaded into both engines beside the score.
        for name, (column, rows) in cls.maps.items():
            run("apply", w(name + ".map.json"), rows, "--as", "ref", "-q", "-o", w(name + ".ref.csv"), check=True)
        # SQLite 3.40 reads some decimals an ulp away from the nearest double
        # (0.953347 one ulp low), so the scores go in as exact quotients of
        # integers by powers of two: the doubles plumb apply read. apply's
        # probabilities are read as text (an ulp there is far below 1e-12).
        cls.db = w("demo.db")
        script = ["BEGIN;", "CREATE TABLE scores (risk REAL, z REAL);"]
        with open(os.path.join(DEMO, "tonight.csv")) as f, open(w("tonight_z.csv")) as g:
            next(f), next(g)
            for a, b in zip(f, g):
                script.append(f"INSERT INTO scores VALUES ({sqlite_exact(float(a.split(',')[3]))}, "
                              f"{sqlite_exact(float(b.split(',')[3]))});")
        script.append("COMMIT;")
        for name, (column, _) in cls.maps.items():
            script.append(f'CREATE TABLE "{name}" (parcel_id TEXT, depot TEXT, route_km REAL, score_text TEXT, ref REAL);')
            script.append(f'.import --csv --skip 1 {w(name + ".ref.csv")} "{name}"')
        sqlite(cls.db, "\n".join(script) + "\n")
        cls.cluster = Cluster()
        cls.addClassCleanup(cls.cluster.close)
        script = []
        for name, (column, _) in cls.maps.items():
            script.append(f'CREATE TABLE "{name}" (parcel_id text, depot text, route_km float8, {column} float8, '
                          'ref float8);')
            script.append(f"\\copy \"{name}\" FROM '{w(name + '.ref.csv')}' CSV HEADER")
        cls.cluster.psql("\n".join(script) + "\n")

    def export(self, name, *args):
        rc, out, err = run("export", *args, os.path.join(self.work, name + ".map.json"))
        self.assertEqual(rc, 0, err)
        self.assertEqual(err, "")
        return out

    measured = []

    @classmethod
    def tearDownClass(cls):
        # The agreement measured, for the record (docs/library.md quotes it).
        for how, worst, identical in sorted(cls.measured):
            print(f"{how}: largest difference {worst}, bit-identical rows {identical}", file=sys.stderr)

    def assert_agrees(self, name, result, how):
        fields = result.strip().split("|")
        rows, nulls, worst = fields[:3]
        self.measured.append((f"{name} {how}", float(worst), fields[3] if len(fields) > 3 else "-"))
        self.assertEqual(int(rows), 200000, how)
        self.assertEqual(int(nulls), 0, how)
        self.assertLessEqual(float(worst), TOLERANCE, f"{name} ({how}): largest difference from apply {worst}")

    # Each piecewise map both ways: written into the SQL (nested CASEs) and through a knot table.
    LADDERS = ("0", "1000000")

    def test_sqlite_agrees_with_apply(self):
        for name, (column, _) in self.maps.items():
            for ladder in self.LADDERS:
                with self.subTest(map=name, inline_max=ladder):
                    statements, expression = split_export(
                        self.export(name, "--sql", "sqlite", "--inline-max", ladder, "--knot-table", f"k_{name}_{ladder}"))
                    result = sqlite(self.db, statements + f"\nSELECT count(*), sum(p IS NULL), max(abs(p - ref)), "
                                    f"sum(p = ref) FROM (SELECT {expression} AS p, r.ref FROM scores "
                                    f"JOIN \"{name}\" AS r ON r.rowid = scores.rowid);\n")
                    self.assert_agrees(name, result, f"sqlite, inline-max {ladder}")

    def test_postgresql_function_agrees_with_apply(self):
        for name, (column, _) in self.maps.items():
            for ladder in self.LADDERS:
                with self.subTest(map=name, inline_max=ladder):
                    function = f"p_{name}_{ladder}"
                    text = self.export(name, "--sql", "postgresql", "--function", function, "--inline-max", ladder,
                                       "--knot-table", f"k_{name}_{ladder}")
                    self.assertIn(f'CREATE OR REPLACE FUNCTION "{function}"(score double precision)', text)
                    # PostgreSQL's JIT takes minutes to compile the largest inline
                    # maps (the fold average's 500 blocks); the arithmetic is the same.
                    jit = "SET jit = off;\n" if ladder != "0" else ""
                    result = self.cluster.psql(
                        jit + text + f"SELECT count(*), count(*) FILTER (WHERE p IS NULL), max(abs(p - ref)), "
                        f"count(*) FILTER (WHERE p = ref) FROM (SELECT \"{function}\"({column}) AS p, ref "
                        f"FROM \"{name}\" OFFSET 0) AS x;\n")
                    self.assert_agrees(name, result, f"postgresql, inline-max {ladder}")

    def test_ansi_expression_agrees_with_apply_on_postgresql(self):
        for name, (column, _) in self.maps.items():
            with self.subTest(map=name):
                statements, expression = split_export(
                    self.export(name, "--sql", "ansi", "--inline-max", "20", "--knot-table", f"a_{name}"))
                self.assertNotIn("::", statements + expression)
                result = self.cluster.psql(
                    statements + f"\nSELECT count(*), count(*) FILTER (WHERE p IS NULL), max(abs(p - ref)) "
                    f"FROM (SELECT {expression} AS p, ref FROM \"{name}\" OFFSET 0) AS x;\n")
                self.assert_agrees(name, result, "ansi on postgresql")

    def test_sqlite_reads_every_number_as_plumb_wrote_it(self):
        """SQLite 3.40 reads the decimal 0.953347 one ulp below the nearest
        double. Written as a decimal, an isotonic block ending there would
        send the score 0.953347 itself into the 1e-6 gap to the next block,
        1.1e-10 up the interpolation; the export writes numbers SQLite reads
        exactly, so the score gets its block's value, 0, as in apply."""
        self.assertEqual(sqlite(":memory:", "SELECT 0.953347 = 0.95334700000000005548;\n").strip(), "0",
                         "this SQLite reads decimals exactly; the check below no longer shows the difference")
        write(self.path("edge.csv"), "s,y\n" + "0.953347,0\n" * 3 + "0.953348,1\n" * 3)
        run("fit", "--map", "isotonic", "--score", "s", "--label", "y", self.path("edge.csv"), "-q", "-o",
            self.path("edge.map.json"), check=True)
        rc, text, err = run("export", "--sql", "sqlite", self.path("edge.map.json"))
        self.assertEqual(rc, 0, err)
        _, expression = split_export(text)
        out = sqlite(":memory:", f"CREATE TABLE t (s REAL);\nINSERT INTO t VALUES ({sqlite_exact(0.953347)});\n"
                     f"SELECT printf('%!.17g', {expression}) FROM t;\n")
        self.assertLessEqual(abs(float(out)), TOLERANCE, out)

    def test_large_maps_use_knot_tables_by_default(self):
        """--inline-max (128) counts the pieces of every fold: a fold average
        of five isotonic maps of about 100 blocks gets one knot table per fold."""
        text = self.export("folds", "--sql", "sqlite")
        self.assertEqual(text.count('CREATE TABLE "plumb_knots'), 5, text[:500])
        text = self.export("histogram_100", "--sql", "sqlite")
        self.assertNotIn("CREATE TABLE", text)
        self.assertEqual(text.count('"risk" <= '), 100)  # the guard and 99 boundaries

    def test_scores_apply_refuses_give_null(self):
        """apply refuses these (a score outside [0, 1] on the probability
        scale; infinities; not a number); the SQL gives NULL instead, and NULL
        for NULL, as docs/library.md says."""
        for name in ("platt", "beta", "isotonic", "histogram", "folds"):
            with self.subTest(map=name):
                statements, expression = split_export(self.export(name, "--sql", "sqlite", "--knot-table", f"n_{name}"))
                out = sqlite(":memory:", statements + "\nCREATE TABLE s (risk REAL);\n"
                             "INSERT INTO s VALUES (NULL), (-0.001), (1.5), (9e999), (-9e999), (0.5);\n"
                             f"SELECT coalesce({expression}, 'null') FROM s;\n")
                values = out.split()
                self.assertEqual(values[:5], ["null"] * 5, out)
                self.assertNotEqual(values[5], "null")
                text = self.export(name, "--sql", "postgresql", "--function", f"n_{name}", "--knot-table", f"n_{name}")
                out = self.cluster.psql(text + f"SELECT coalesce(n_{name}(x)::text, 'null') FROM (VALUES (NULL::float8), "
                                        "(-0.001), (1.5), ('Infinity'), ('-Infinity'), ('NaN'), (0.5)) AS v(x);\n")
                values = out.split()
                self.assertEqual(values[:6], ["null"] * 6, out)
                self.assertNotEqual(values[6], "null")
        # Logit scale: only NULL and the non-finite are refused.
        text = self.export("platt_logit", "--sql", "postgresql", "--function", "n_logit")
        out = self.cluster.psql(text + "SELECT coalesce(n_logit(x)::text, 'null') FROM (VALUES ('Infinity'::float8), "
                                "('NaN'), (-1e308), (1e308)) AS v(x);\n")
        values = out.split()
        self.assertEqual(values[:2], ["null", "null"], out)
        # Far beyond the fitted scores the probability is 0 or 1 (to 1e-300), with no overflow error.
        self.assertLess(min(float(values[2]), 1 - float(values[3])), 1e-300, out)

    def test_sqlite_example_runs(self):
        """examples/sql/sqlite_demo.sh: its figures are apply's (the top
        parcels' probabilities, each depot's expected misses as the sum of
        apply's probabilities to one decimal)."""
        env = dict(os.environ, PATH=os.path.dirname(os.path.abspath(shutil.which(PLUMB) or PLUMB)) + os.pathsep + os.environ["PATH"])
        proc = subprocess.run(["bash", os.path.join(SOURCE_DIR, "examples", "sql", "sqlite_demo.sh"), self.dir],
                              capture_output=True, text=True, env=env)
        self.assertEqual(proc.returncode, 0, proc.stderr)
        self.assertEqual(proc.stderr, "")
        run("apply", os.path.join(self.dir, "late.map.json"), os.path.join(DEMO, "tonight.csv"), "--as", "p", "-q",
            "-o", self.path("applied.csv"), check=True)
        with open(self.path("applied.csv")) as f:
            rows = [line.split(",") for line in f.read().splitlines()[1:]]
        p = {r[0]: float(r[4]) for r in rows}
        sums = {}
        for r in rows:
            sums[r[1]] = sums.get(r[1], 0.0) + float(r[4])
        lines = proc.stdout.splitlines()
        at = lines.index("depot,parcels,expected_misses")
        top, depots = lines[1:at], lines[at + 1:]
        self.assertEqual(len(top), 5)
        for line in top:
            parcel, _, _, value = line.split(",")
            self.assertLessEqual(abs(float(value) - p[parcel]), TOLERANCE, line)
        self.assertEqual(max(p.values()), float(top[0].split(",")[3]))
        self.assertEqual(len(depots), 7)
        for line in depots:
            depot, count, expected = line.split(",")
            self.assertEqual(int(count), sum(1 for r in rows if r[1] == depot))
            self.assertEqual(expected, f"{sums[depot]:.1f}", line)

    def test_names_stay_inside_the_comments(self):
        """A map file or column name with a line break is still one comment
        line: nothing of it runs as SQL."""
        weird = self.path("late\nDROP TABLE scores;.map.json")
        shutil.copy(os.path.join(self.work, "platt.map.json"), weird)
        rc, text, err = run("export", "--sql", "sqlite", "--score", "risk\nDROP TABLE x;", weird)
        self.assertEqual(rc, 0, err)
        lines = text.splitlines()
        self.assertEqual([l.startswith("--") for l in lines[:4]], [True, True, True, False], text[:300])
        self.assertIn("DROP TABLE scores;", lines[0])
        self.assertIn('column "risk DROP TABLE x;":', lines[2])
        self.assertIn('"risk\nDROP TABLE x;"', text)  # the column's line break stays inside its quotes

    def test_refusals(self):
        self.assert_refused(["export", "--sql", "postgresql", "--score", "risk", os.path.join(self.work, "platt.map.json")],
                            2, "plumb export: --score names the column of an expression")
        self.assert_refused(["export", "--sql", "sqlite", "--function", "f", os.path.join(self.work, "platt.map.json")],
                            2, "plumb export: --function names a function")
        self.assert_refused(["export", "--sql", "mysql", os.path.join(self.work, "platt.map.json")], 2, "--sql")
        self.assert_refused(["export", "--sql", "sqlite", "--score", "knot_lo", os.path.join(self.work, "platt.map.json")],
                            2, "knot table column")
        write(self.path("bad.map.json"), "{}")
        self.assert_refused(["export", "--sql", "sqlite", self.path("bad.map.json"), "-o", self.path("out.sql")], 4,
                            output=self.path("out.sql"))


if __name__ == "__main__":
    unittest.main()
