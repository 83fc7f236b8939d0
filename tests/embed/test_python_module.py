"""The Python module `plumb` (src/python/module.cpp) with Debian's python3
and NumPy: mapping bit-identical to `plumb apply` on every case of cases.py;
dtypes, shapes and no copy of the scores; exceptions carrying plumb's
message; fit -> save byte-identical to `plumb fit --no-timestamp`; the
report's figures equal to `plumb report --json`."""
import csv
import hashlib
import json
import math
import os
import re
import subprocess
import sys
import tempfile
import tracemalloc
import unittest
import warnings

import numpy as np

sys.path.insert(0, os.path.dirname(__file__))
import cases  # noqa: E402
import plumb  # noqa: E402

HOLDOUT = os.path.join(cases.DATA, "holdout.csv")


def column(path, name):
    with open(path, newline="") as f:
        return [row[name] for row in csv.DictReader(f)]


def cli_error(*args):
    """The message `plumb` prints on stderr for a refused command, without
    its "plumb: " prefix."""
    proc = subprocess.run([cases.PLUMB, *args], capture_output=True, text=True)
    assert proc.returncode != 0, proc
    line = proc.stderr.strip()
    assert line.startswith("plumb: "), line
    return proc.returncode, line[len("plumb: "):]


# The cases are made once for every test class.
TMP = None
CASES = None


def setUpModule():
    global TMP, CASES
    TMP = tempfile.TemporaryDirectory()
    CASES = cases.build(TMP.name)


def tearDownModule():
    TMP.cleanup()


class Shared(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.work = TMP.name
        cls.cases = CASES
        cls.iso = plumb.load_map(next(c[1] for c in cls.cases if c[0] == "demo.isotonic"))
        cls.platt_logit = plumb.load_map(next(c[1] for c in cls.cases if c[0] == "logit.platt"))
        cls.scores = np.array([float(s) for s in next(c[2] for c in cls.cases if c[0] == "demo.isotonic")])


class MapsLikeApply(Shared):
    def test_every_case_bit_identical_to_apply(self):
        for name, path, scores, probabilities in self.cases:
            with self.subTest(case=name):
                m = plumb.load_map(path)
                got = m(np.array([float(s) for s in scores]))
                want = np.array([float(p) for p in probabilities])
                self.assertEqual(got.dtype, np.float64)
                # Bit for bit: the same 64-bit patterns, not merely close.
                self.assertTrue(np.array_equal(got.view(np.uint64), want.view(np.uint64)),
                                f"{np.count_nonzero(got != want)} of {len(want)} differ")

    def test_attributes_are_the_artifact(self):
        for name, path, _, _ in self.cases:
            with self.subTest(case=name):
                m = plumb.load_map(path)
                with open(path) as f:
                    doc = json.load(f)
                self.assertEqual(m.kind, doc["kind"])
                self.assertEqual(m.scale, doc["input"]["scale"])
                self.assertEqual(m.score_column, doc["input"]["score_column"])
                self.assertEqual(m.parameters, doc["parameters"])
                self.assertEqual(m.provenance, doc["provenance"])
                self.assertEqual(m.fit, doc["fit"])
                self.assertEqual(m.cross_fit, doc.get("cross_fit"))
        kinds = {plumb.load_map(c[1]).kind for c in self.cases}
        self.assertTrue({"isotonic", "platt", "beta", "temperature", "histogram"} <= kinds, kinds)


class DtypesAndShapes(Shared):
    def test_float_dtypes_map_their_values(self):
        x = self.scores[:5000]
        for dtype in [np.float16, np.float32, np.float64, np.longdouble]:
            with self.subTest(dtype=dtype.__name__):
                a = x.astype(dtype)
                got = self.iso(a)
                self.assertEqual(got.dtype, np.float64)
                # Each element is the map of its exact value as a double.
                want = self.iso(a.astype(np.float64))
                self.assertTrue(np.array_equal(got, want))
        # float32 values differ from the decimals: the map sees the float32 value.
        self.assertFalse(np.array_equal(self.iso(x.astype(np.float32)), self.iso(x)))

    def test_other_byte_order_and_integers(self):
        x = self.scores[:1000]
        self.assertTrue(np.array_equal(self.iso(x.astype(">f8")), self.iso(x)))
        self.assertTrue(np.array_equal(self.iso(np.array([0, 1])), self.iso(np.array([0.0, 1.0]))))
        self.assertTrue(np.array_equal(self.iso([0.2, 0.4]), self.iso(np.array([0.2, 0.4]))))

    def test_refused_dtypes(self):
        for bad in [np.array([0.5 + 0j]), np.array(["0.5"]), np.array([None, 0.5], dtype=object)]:
            with self.subTest(dtype=str(bad.dtype)):
                with self.assertRaises(TypeError) as e:
                    self.iso(bad)
                self.assertIn(str(bad.dtype), str(e.exception))

    def test_shapes_and_strides(self):
        x = self.scores[:6000]
        flat = self.iso(x)
        self.assertEqual(self.iso(x.reshape(60, 100)).shape, (60, 100))
        self.assertTrue(np.array_equal(self.iso(x.reshape(60, 100)), flat.reshape(60, 100)))
        self.assertTrue(np.array_equal(self.iso(x.reshape(10, 20, 30)), flat.reshape(10, 20, 30)))
        self.assertTrue(np.array_equal(self.iso(x.reshape(60, 100).T), flat.reshape(60, 100).T))
        f = np.asfortranarray(x.reshape(60, 100))
        self.assertTrue(np.array_equal(self.iso(f), flat.reshape(60, 100)))
        self.assertTrue(np.array_equal(self.iso(x[::7]), flat[::7]))
        self.assertTrue(np.array_equal(self.iso(x.reshape(60, 100)[5:40:3, ::-2]), flat.reshape(60, 100)[5:40:3, ::-2]))
        self.assertEqual(self.iso(np.empty((3, 0))).shape, (3, 0))
        zero_d = self.iso(np.array(x[10]))
        self.assertIsInstance(zero_d, float)
        self.assertEqual(zero_d, flat[10])
        self.assertIsInstance(self.iso(float(x[10])), float)
        self.assertEqual(self.iso(float(x[10])), flat[10])

    def test_input_left_alone_and_output_fresh(self):
        x = self.scores[:1000].copy()
        before = x.copy()
        out = self.iso(x)
        self.assertTrue(np.array_equal(x, before))
        self.assertFalse(np.shares_memory(out, x))
        self.assertTrue(out.flags.c_contiguous and out.flags.writeable)

    def test_out_buffer(self):
        x = self.scores[:6000].reshape(60, 100)
        buf = np.empty((60, 100))
        got = self.iso(x, out=buf)
        self.assertIs(got, buf)
        self.assertTrue(np.array_equal(buf, self.iso(x)))
        # In place: the scores' own float64 buffer.
        y = x.copy()
        self.iso(y, out=y)
        self.assertTrue(np.array_equal(y, self.iso(x)))
        for bad in [np.empty((100, 60)), np.empty((60, 100), dtype=np.float32), np.empty((60, 100), order="F"),
                    np.empty((60, 200))[:, ::2], [0.0] * 6000]:
            with self.assertRaises(plumb.Error) as e:
                self.iso(x, out=bad)
            self.assertIn("out is not a writable float64 array in C order of the scores' shape", str(e.exception))
        ro = np.empty((60, 100))
        ro.flags.writeable = False
        with self.assertRaises(plumb.Error):
            self.iso(x, out=ro)

    def test_no_copy_of_float_scores(self):
        # NumPy reports its buffers to tracemalloc, so the peak during a call
        # shows every array allocated in it: the float64 result (n * 8 bytes)
        # and nothing of the size of the scores. An integer array, converted
        # to float64 first, shows the copy: the check can tell them apart.
        n = 1_000_000
        base = np.resize(self.scores, 2 * n)

        def peak(a):
            tracemalloc.start()
            try:
                tracemalloc.reset_peak()
                before = tracemalloc.get_traced_memory()[0]
                out = self.iso(a)
                return tracemalloc.get_traced_memory()[1] - before, out
            finally:
                tracemalloc.stop()

        slack = 64 * 1024
        for name, a in [("float64 strided", base[::2]), ("float32", base[:n].astype(np.float32)),
                        ("float64 2-D transposed", base[:n].reshape(1000, 1000).T),
                        ("longdouble", base[:n].astype(np.longdouble))]:
            with self.subTest(array=name):
                used, out = peak(a)
                self.assertEqual(out.size, n)
                self.assertLess(used, n * 8 + slack, f"{used} bytes for {name}")
        used, _ = peak((base[:n] * 0).astype(np.int32))
        self.assertGreater(used, n * 8 + n * 8 - slack, "an int32 array is copied to float64")


class ClassMapsLikeApply(unittest.TestCase):
    """plumb.load_class_map: rows x K arrays mapped as plumb apply --scores
    maps them (cases.build_classes: every multi-class kind on the outcome
    data and awkward rows)."""

    @classmethod
    def setUpClass(cls):
        cls.cases = cases.build_classes(TMP.name)
        cls.vector = plumb.load_class_map(next(c[1] for c in cls.cases if c[0] == "classes.vector"))
        cls.rows = np.array([[float(v) for v in r] for r in next(c[2] for c in cls.cases if c[0] == "classes.vector")])

    def test_every_case_bit_identical_to_apply(self):
        for name, path, rows, probabilities in self.cases:
            with self.subTest(case=name):
                m = plumb.load_class_map(path)
                got = m(np.array([[float(v) for v in r] for r in rows]))
                want = np.array([[float(v) for v in r] for r in probabilities])
                self.assertEqual(got.dtype, np.float64)
                self.assertEqual(got.shape, want.shape)
                self.assertTrue(np.array_equal(got.view(np.uint64), want.view(np.uint64)),
                                f"{np.count_nonzero(got != want)} of {want.size} differ")

    def test_attributes_are_the_artifact(self):
        path = next(c[1] for c in self.cases if c[0] == "classes.dirichlet")
        with open(path) as f:
            doc = json.load(f)
        m = plumb.load_class_map(path)
        self.assertEqual(m.kind, "dirichlet")
        self.assertEqual(m.scale, "probability")
        self.assertEqual(m.classes, doc["classes"])
        self.assertEqual(m.score_columns, doc["input"]["score_columns"])
        self.assertEqual(m.parameters, doc["parameters"])
        self.assertEqual(m.provenance, doc["provenance"])
        self.assertIn("dirichlet", repr(m))

    def test_one_row_strides_and_out(self):
        want = self.vector(self.rows)
        self.assertTrue(np.array_equal(self.vector(self.rows[3]), want[3]))  # one row, 1-D
        fortran = np.asfortranarray(self.rows)
        self.assertTrue(np.array_equal(self.vector(fortran), want))
        self.assertTrue(np.array_equal(self.vector(self.rows[::2]), want[::2]))
        f32 = self.rows.astype(np.float32)
        expected32 = self.vector(f32.astype(np.float64))
        self.assertTrue(np.array_equal(self.vector(f32), expected32))
        out = np.empty_like(self.rows)
        self.assertIs(self.vector(self.rows, out=out), out)
        self.assertTrue(np.array_equal(out, want))
        inplace = self.rows.copy()
        self.vector(inplace, out=inplace)
        self.assertTrue(np.array_equal(inplace, want))
        with self.assertRaises(plumb.Error):
            self.vector(self.rows, out=np.empty((3, 4)))
        with self.assertRaises(plumb.Error) as e:
            self.vector(self.rows[:, :3])
        self.assertIn("rows of 4 classes", str(e.exception))

    def test_no_copy_of_float_rows(self):
        # As for binary maps: the peak during the call is the float64 result,
        # not a copy of the rows (a float32 and a strided array included).
        n = 250_000
        base = np.resize(self.rows, (2 * n, 4))

        def peak(a):
            tracemalloc.start()
            try:
                tracemalloc.reset_peak()
                before = tracemalloc.get_traced_memory()[0]
                out = self.vector(a)
                return tracemalloc.get_traced_memory()[1] - before, out
            finally:
                tracemalloc.stop()

        slack = 64 * 1024
        for name, a in [("float64 strided", base[::2]), ("float32", base[:n].astype(np.float32)),
                        ("float64 Fortran order", np.asfortranarray(base[:n]))]:
            with self.subTest(array=name):
                used, out = peak(a)
                self.assertEqual(out.shape, (n, 4))
                self.assertLess(used, n * 4 * 8 + slack, f"{used} bytes for {name}")

    def test_refused_rows_carry_plumbs_message(self):
        bad = self.rows[:5].copy()
        bad[2, 1] = np.nan
        with self.assertRaises(plumb.Error) as e:
            self.vector(bad)
        self.assertEqual(e.exception.exit_code, 3)
        self.assertIn("row 2, class 'late'", str(e.exception))
        bad[2] = [0.5, 0.5, 0.5, 0.0]
        with self.assertRaises(plumb.Error) as e:
            self.vector(bad)
        self.assertIn("row 2: the row's 4 probabilities sum to", str(e.exception))
        binary = next(c[1] for c in CASES if c[0] == "demo.platt")
        with self.assertRaises(plumb.Error) as e:
            plumb.load_class_map(binary)
        self.assertEqual(e.exception.exit_code, 4)
        self.assertIn("binary map", str(e.exception))


class Exceptions(Shared):
    def test_error_is_an_exception_class(self):
        self.assertTrue(issubclass(plumb.Error, Exception))

    def test_missing_file_carries_plumbs_message(self):
        path = os.path.join(self.work, "no-such.map.json")
        code, message = cli_error("apply", path, HOLDOUT)
        with self.assertRaises(plumb.Error) as e:
            plumb.load_map(path)
        self.assertEqual(str(e.exception), message)
        self.assertEqual(e.exception.exit_code, code)
        self.assertEqual(e.exception.kind, "io")

    def test_tampered_artifact_carries_plumbs_message(self):
        path = next(c[1] for c in self.cases if c[0] == "demo.platt")
        with open(path) as f:
            text = f.read()
        bad = os.path.join(self.work, "tampered.map.json")
        with open(bad, "w") as f:
            f.write(text.replace('"rows": 20000', '"rows": 20001'))
        code, message = cli_error("apply", bad, HOLDOUT)
        with self.assertRaises(plumb.Error) as e:
            plumb.load_map(bad)
        self.assertEqual(str(e.exception), message)
        self.assertIn("integrity", message)
        self.assertEqual((e.exception.kind, e.exception.exit_code, code), ("artifact", 4, 4))

    def test_bad_scores_name_their_position(self):
        with self.assertRaises(plumb.Error) as e:
            self.iso(np.array([0.1, 0.2, 1.25]))
        self.assertEqual(str(e.exception),
                         "the score at index 2 lies outside [0, 1]: got '1.25'; expected a probability in [0, 1]")
        self.assertEqual((e.exception.kind, e.exception.exit_code), ("input", 3))
        grid = np.full((3, 4), 0.5)
        grid[1, 2] = np.nan
        with self.assertRaises(plumb.Error) as e:
            self.iso(grid)
        self.assertIn("the score at (1, 2) is not a number", str(e.exception))
        with self.assertRaises(plumb.Error) as e:
            self.platt_logit(np.array([0.0, -np.inf]))
        self.assertIn("the score at index 1 is infinite", str(e.exception))
        self.assertIn("expected a finite number", str(e.exception))
        with self.assertRaises(plumb.Error) as e:
            self.iso(grid, missing="skip")
        self.assertEqual(e.exception.kind, "usage")

    def test_missing_empty_maps_nan_to_nan(self):
        grid = np.full((3, 4), 0.5)
        grid[1, 2] = np.nan
        out = self.iso(grid, missing="empty")
        self.assertTrue(np.isnan(out[1, 2]))
        self.assertEqual(np.count_nonzero(np.isnan(out)), 1)
        self.assertEqual(out[0, 0], self.iso(0.5))

    def test_fit_refusals(self):
        with self.assertRaises(plumb.Error) as e:
            plumb.fit([0.1, 0.2, 0.3], [1, 1, 1], "platt")
        self.assertEqual((e.exception.kind, e.exception.exit_code), ("fit", 6))
        with self.assertRaises(plumb.Error) as e:
            plumb.fit([0.1, 0.2, 0.3], [0, 2, 1], "platt")
        self.assertIn("the label at index 1 is neither 0 nor 1", str(e.exception))
        with self.assertRaises(plumb.Error) as e:
            plumb.fit([0.1, 0.2, 0.3], [0, 1, 1], "platt", weights=[1, -1, 1])
        self.assertIn("the weight at index 1", str(e.exception))
        with self.assertRaises(plumb.Error) as e:
            plumb.fit([0.1, 0.2], [0, 1, 1], "platt")
        self.assertIn("labels and scores differ in length", str(e.exception))
        with self.assertRaises(plumb.Error) as e:
            plumb.fit([0.1, 0.2], [0, 1], "spline")
        self.assertEqual(e.exception.kind, "usage")
        self.assertIn("isotonic, platt, beta, temperature, histogram", str(e.exception))
        with self.assertRaises(plumb.Error) as e:
            plumb.fit([0.1, 0.2], [0, 1], "beta", scale="logit")
        self.assertIn("does not accept scores on the logit scale", str(e.exception))


class FitLikeCli(Shared):
    def fit_both(self, rows_csv, score, label, kind, cli_options=(), weight=None, **keywords):
        cli_path = os.path.join(self.work, "cli.map.json")
        py_path = os.path.join(self.work, "py.map.json")
        args = ["fit", "--no-timestamp", "--map", kind, "--score", score, "--label", label,
                *cli_options, rows_csv, "-o", cli_path]
        if weight:
            args[-3:-3] = ["--weight", weight]
        proc = subprocess.run([cases.PLUMB, *args], capture_output=True, text=True, check=True)
        # After its summary line, fit prints one line per warning or caution.
        cli_cautions = proc.stderr.splitlines()[1:]
        with open(rows_csv, "rb") as f:
            sha = hashlib.sha256(f.read()).hexdigest()
        scores = np.array([float(v) for v in column(rows_csv, score)])
        labels = np.array([float(v) for v in column(rows_csv, label)])
        weights = np.array([float(v) for v in column(rows_csv, weight)]) if weight else None
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            m = plumb.fit(scores, labels, kind, weights, score_column=score, label_column=label,
                          weight_column=weight, source=rows_csv, source_sha256=sha, timestamp=False, **keywords)
        self.assertTrue(all(w.category is plumb.FitWarning for w in caught))
        self.assertEqual(len(caught), len(cli_cautions), (cli_cautions, [str(w.message) for w in caught]))
        m.save(py_path)
        with open(cli_path, "rb") as f:
            cli = f.read()
        with open(py_path, "rb") as f:
            py = f.read()
        self.assertEqual(py.decode(), cli.decode())
        self.assertEqual(m.text().encode(), cli)
        return m

    def test_every_kind_byte_identical(self):
        for kind in cases.KINDS:
            with self.subTest(kind=kind):
                self.fit_both(HOLDOUT, "risk", "missed", kind)
            with self.subTest(kind=kind, weighted=True):
                self.fit_both(HOLDOUT, "risk", "missed", kind, weight="route_km")

    def test_options_byte_identical(self):
        self.fit_both(HOLDOUT, "risk", "missed", "isotonic", ["--between-blocks", "step"], between_blocks="step")
        self.fit_both(HOLDOUT, "risk", "missed", "platt", ["--platt-targets", "labels"], platt_targets="labels")
        self.fit_both(HOLDOUT, "risk", "missed", "beta", ["--beta-form", "shared"], beta_form="shared")
        self.fit_both(HOLDOUT, "risk", "missed", "histogram", ["--bins", "25"], bins=25)
        self.fit_both(HOLDOUT, "risk", "missed", "centered_isotonic", ["--increase", "strict"], increase="strict")
        self.fit_both(HOLDOUT, "risk", "missed", "venn_abers")
        self.fit_both(HOLDOUT, "risk", "missed", "cross_venn_abers", ["--venn-folds", "3"], venn_folds=3)
        z = os.path.join(self.work, "holdout.z.csv")
        self.fit_both(z, "z", "missed", "temperature", ["--scale", "logit"], scale="logit")
        self.fit_both(z, "m", "missed", "platt", ["--scale", "margin"], scale="margin")

    def test_cautions_are_warnings(self):
        few = self.scores[:200]
        with self.assertWarnsRegex(plumb.FitWarning, r"^200 rows is few for an isotonic map \(common practice"):
            plumb.fit(few, (few > 0.3).astype(float), "isotonic")
        with self.assertWarnsRegex(plumb.FitWarning, r"^the fitted map decreases"):
            plumb.fit(self.scores[:5000], (self.scores[:5000] < 0.3).astype(float), "platt")
        with warnings.catch_warnings():
            warnings.simplefilter("error")
            with self.assertRaises(plumb.FitWarning):
                plumb.fit(few, (few > 0.3).astype(float), "histogram")

    def test_defaults_and_timestamp(self):
        m = plumb.fit(self.scores[:500], (self.scores[:500] > 0.3).astype(float), "platt")
        p = m.provenance
        self.assertEqual((p["source"], p["rows"], p["weight_column"]), ("<array>", 500, None))
        self.assertRegex(p["created_utc"], r"^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ$")
        # By default the source hash is of the rows as float64 bytes.
        labels = (self.scores[:500] > 0.3).astype(float)
        self.assertEqual(p["source_sha256"], hashlib.sha256(self.scores[:500].tobytes() + labels.tobytes()).hexdigest())
        # A map fitted in Python loads back with the same numbers.
        path = os.path.join(self.work, "round.map.json")
        m.save(path)
        back = plumb.load_map(path)
        self.assertTrue(np.array_equal(back(self.scores), m(self.scores)))


class ReportLikeCli(Shared):
    def test_report_dict_equals_cli_json(self):
        out = os.path.join(self.work, "report.json")
        cases.plumb("report", "-q", "--score", "risk", "--label", "missed", "--bootstrap", "50", "--seed", "7",
                    "--bins", "12", "--json", out, HOLDOUT)
        with open(out) as f:
            cli = json.load(f)
        scores = np.array([float(v) for v in column(HOLDOUT, "risk")])
        labels = np.array([float(v) for v in column(HOLDOUT, "missed")])
        got = plumb.report({"risk": scores}, labels, bootstrap=50, seed=7, bins=12, label_column="missed",
                           source=HOLDOUT)
        # Every figure, name and option, as the CLI wrote them.
        self.assertEqual(got, cli)
        self.assertEqual(got["scores"][0]["name"], "risk")

    def test_report_of_one_array(self):
        labels = (self.scores > 0.5).astype(float)
        got = plumb.report(self.scores, labels, bootstrap=0)
        self.assertEqual(got["source"], "<array>")
        self.assertEqual(len(got["scores"]), 1)
        with self.assertRaises(plumb.Error) as e:
            plumb.report(self.scores * 2, labels)
        self.assertIn("outside [0, 1]", str(e.exception))


if __name__ == "__main__":
    unittest.main(verbosity=2)
