"""The C API against `plumb apply`: every case of cases.py mapped by
check_c_api.c (a C program linked against libplumb_c) must give apply's
probabilities bit for bit; and the C API's refusals (check_c_api errors)."""
import os
import subprocess
import sys
import tempfile
import unittest

sys.path.insert(0, os.path.dirname(__file__))
import cases  # noqa: E402

CHECK = os.environ.get("PLUMB_CHECK_C_API", "check_c_api")


class CApi(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.tmp = tempfile.TemporaryDirectory()
        cls.cases = cases.build(cls.tmp.name)

    @classmethod
    def tearDownClass(cls):
        cls.tmp.cleanup()

    def run_check(self, *args):
        proc = subprocess.run([CHECK, *args], capture_output=True, text=True)
        self.assertEqual(proc.returncode, 0, proc.stdout + proc.stderr)
        self.assertIn(" 0 failed", proc.stdout)
        return proc.stdout

    def files(self, name, scores, probabilities):
        """The scores and apply's probabilities, one per line, for check_c_api."""
        s, p = os.path.join(self.tmp.name, name + ".s"), os.path.join(self.tmp.name, name + ".p")
        with open(s, "w") as f:
            f.write("\n".join(scores) + "\n")
        with open(p, "w") as f:
            f.write("\n".join(probabilities) + "\n")
        return s, p

    def test_every_case_bit_identical_to_apply(self):
        for name, map_path, scores, probabilities in self.cases:
            with self.subTest(case=name):
                self.assertGreater(len(scores), 1000)
                self.run_check("map", map_path, *self.files(name, scores, probabilities))

    def test_threads_share_a_map(self):
        for name, map_path, scores, probabilities in self.cases:
            if name in ("demo.isotonic", "demo.beta"):
                with self.subTest(case=name):
                    self.run_check("threads", map_path, *self.files(name, scores, probabilities))

    def test_multi_class_maps_bit_identical_to_apply(self):
        for name, map_path, rows, probabilities in cases.build_classes(self.tmp.name):
            with self.subTest(case=name):
                self.assertGreater(len(rows), 20000)
                flat = [v for r in rows for v in r]
                self.run_check("classes", map_path, *self.files(name, flat, [v for r in probabilities for v in r]))

    def test_multi_class_refusals(self):
        binary = next(c[1] for c in self.cases if c[0] == "demo.platt")
        for name, map_path, _, _ in cases.build_classes(self.tmp.name):
            if name in ("classes.vector", "classes.dirichlet-logit"):
                with self.subTest(case=name):
                    self.run_check("class_errors", map_path, binary)

    def test_refusals(self):
        for name in ["demo.isotonic", "logit.platt"]:
            with self.subTest(case=name):
                path = next(c[1] for c in self.cases if c[0] == name)
                self.run_check("errors", path)


if __name__ == "__main__":
    unittest.main(verbosity=2)
