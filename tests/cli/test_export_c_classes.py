"""plumb export --c for multi-class maps: the C function of a row returns the
K probabilities plumb apply writes, bit for bit.

Each multi-class kind (temperature, vector, dirichlet, one_vs_rest with
several per-class binary kinds) is fitted on the invented outcome data
(data/outcomes.csv, probabilities, and the same rows as log-probabilities
on the logit scale); the exported function is compiled with the system's C
compiler (-std=c99 -pedantic, warnings as errors, -ffp-contract=off as the
file's comment asks) into a driver that reads K scores per line with strtod
and prints each probability in 17 significant digits. Every row of
data/outcomes_tonight.csv and a set of hand-made awkward rows (exact zeros,
ties, a class near 1, tiny probabilities below the floor, huge and equal
logits) must equal the doubles apply wrote (apply prints the shortest text
that reads back to its double). Rows apply refuses give NaN and return 1."""
import math
import os
import shutil
import subprocess
import tempfile
import unittest

from plumbtest import SOURCE_DIR, PlumbCase, run, write

OUTCOMES = os.path.join(SOURCE_DIR, "data", "outcomes.csv")
TONIGHT = os.path.join(SOURCE_DIR, "data", "outcomes_tonight.csv")
CLASSES = ["on_time", "late", "lost", "returned"]
COLUMNS = ["p_" + c for c in CLASSES]

DRIVER = r"""
#include <stdio.h>
#include <stdlib.h>
int %s(const double score[4], double out[4]);
int main(void) {
  char line[512];
  while (fgets(line, sizeof line, stdin)) {
    double score[4], out[4];
    char *at = line;
    int j, rc;
    for (j = 0; j < 4; ++j) {
      score[j] = strtod(at, &at);
      if (*at == ',') ++at;
    }
    rc = %s(score, out);
    printf("%%d %%.17g %%.17g %%.17g %%.17g\n", rc, out[0], out[1], out[2], out[3]);
  }
  return 0;
}
"""

# Awkward rows on the probability scale (each sums to 1 within apply's 1e-3).
PROBABILITY_ROWS = [
    ["1", "0", "0", "0"],
    ["0", "0", "0", "1"],
    ["0.25", "0.25", "0.25", "0.25"],
    ["0.5", "0.5", "0", "0"],
    ["0.9999999999999999", "1e-16", "0", "0"],
    ["1e-300", "0.5", "0.5", "5e-324"],
    ["0.9995", "0", "0", "0"],
    ["0.3333333333333333", "0.3333333333333333", "0.3333333333333333", "0"],
]
# Awkward rows on the logit scale.
LOGIT_ROWS = [
    ["0", "0", "0", "0"],
    ["700", "700", "-700", "0"],
    ["1e300", "0", "-1e300", "5"],
    ["-745", "-746", "-800", "-745"],
    ["1e-300", "-1e-300", "0", "2"],
    ["30", "-30", "15.5", "-0"],
]


def logit_copy(source, target):
    """The same rows with each probability replaced by its logarithm (a
    log-probability row is a logit row: softmax gives the probabilities back)."""
    with open(source) as f:
        lines = f.read().splitlines()
    header = lines[0].split(",")
    at = [header.index(c) for c in COLUMNS]
    out = [lines[0]]
    for line in lines[1:]:
        fields = line.split(",")
        for i in at:
            fields[i] = repr(math.log(max(float(fields[i]), 1e-300)))
        out.append(",".join(fields))
    write(target, "\n".join(out) + "\n")


def compiler():
    for name in ("cc", "gcc", "clang"):
        if shutil.which(name):
            return name
    raise AssertionError("no C compiler (cc, gcc or clang) on PATH")


class ExportCClasses(PlumbCase):
    @classmethod
    def setUpClass(cls):
        cls._class_tmp = tempfile.TemporaryDirectory(prefix="plumb-cc-")
        cls.addClassCleanup(cls._class_tmp.cleanup)
        cls.work = cls._class_tmp.name
        logit_copy(OUTCOMES, os.path.join(cls.work, "outcomes_z.csv"))
        logit_copy(TONIGHT, os.path.join(cls.work, "tonight_z.csv"))

    def compile_map(self, name, map_path):
        function = "q_" + name
        rc, source, err = run("export", "--c", "--function", function, map_path)
        self.assertEqual(rc, 0, err)
        self.assertIn("int " + function + "(const double score[4], double out[4])", source)
        write(self.path(name + ".c"), source)
        write(self.path("driver.c"), DRIVER % (function, function))
        binary = self.path(name + ".bin")
        proc = subprocess.run([compiler(), "-std=c99", "-pedantic", "-Wall", "-Wextra", "-Werror", "-O2",
                               "-ffp-contract=off", "-o", binary, self.path("driver.c"), self.path(name + ".c"), "-lm"],
                              capture_output=True, text=True)
        self.assertEqual(proc.returncode, 0, proc.stderr)
        return binary

    def call(self, binary, rows):
        out = subprocess.run([binary], input="".join(",".join(r) + "\n" for r in rows), capture_output=True,
                             text=True, check=True).stdout.splitlines()
        self.assertEqual(len(out), len(rows))
        return [(int(line.split()[0]), [float(v) for v in line.split()[1:]]) for line in out]

    def check_rows(self, name, map_path, binary, rows_file):
        run("apply", map_path, rows_file, "-q", "-o", self.path(name + ".ref.csv"), check=True)
        with open(self.path(name + ".ref.csv")) as f:
            lines = f.read().splitlines()
        header = lines[0].split(",")
        at_in = [header.index(c) for c in COLUMNS]
        at_out = [header.index(c + "_calibrated") for c in COLUMNS]
        rows = [l.split(",") for l in lines[1:]]
        got = self.call(binary, [[r[i] for i in at_in] for r in rows])
        differing = [(r, g) for r, g in zip(rows, got) if g != (0, [float(r[i]) for i in at_out])]
        self.assertEqual(differing[:3], [], f"{name}: {len(differing)} of {len(rows)} rows differ from apply")
        return len(rows)

    def awkward_file(self, name, rows):
        path = self.path(name + ".awkward.csv")
        write(path, ",".join(COLUMNS) + "\n" + "".join(",".join(r) + "\n" for r in rows))
        return path

    def check_kind(self, name, fit_args, logit):
        fit_rows = os.path.join(self.work, "outcomes_z.csv") if logit else OUTCOMES
        rows = os.path.join(self.work, "tonight_z.csv") if logit else TONIGHT
        map_path = self.path(name + ".map.json")
        run("fit", *fit_args, "--scores", "p_*", "--label", "outcome", *(["--scale", "logit"] if logit else []),
            fit_rows, "-q", "-o", map_path, check=True)
        binary = self.compile_map(name, map_path)
        self.assertEqual(self.check_rows(name, map_path, binary, rows), 20000)
        awkward = LOGIT_ROWS if logit else PROBABILITY_ROWS
        self.check_rows(name + "_awkward", map_path, binary, self.awkward_file(name, awkward))
        return map_path, binary

    def test_scaling_kinds_are_bit_identical_to_apply(self):
        for kind, extra in (("temperature", ()), ("vector", ()), ("dirichlet", ("--l2", "0.001"))):
            for logit in (False, True):
                with self.subTest(kind=kind, logit=logit):
                    self.check_kind(kind + ("_z" if logit else ""), ["--map", kind, *extra], logit)

    def test_one_vs_rest_is_bit_identical_to_apply(self):
        for per_class in ("isotonic", "platt", "beta", "histogram"):
            for logit in (False, True):
                if logit and per_class != "isotonic":
                    continue
                with self.subTest(per_class=per_class, logit=logit):
                    self.check_kind("ovr_" + per_class + ("_z" if logit else ""),
                                    ["--map", "one_vs_rest", "--per-class", per_class], logit)

    def test_rows_apply_refuses_give_nan(self):
        map_path, binary = self.check_kind("refuse", ["--map", "vector"], False)
        refused = [["0.5", "0.5", "0.5", "0"], ["-0.1", "0.6", "0.5", "0"], ["nan", "0.5", "0.5", "0"],
                   ["1.5", "0", "0", "-0.5"], ["0.999", "0", "0", "0"]]
        for row in refused:
            with self.subTest(row=row):
                rc, out, err = run("apply", map_path, self.awkward_file("one", [row]), "-q", "-o",
                                   self.path("refused.csv"))
                self.assertEqual(rc, 3, err)
        got = self.call(binary, refused)
        self.assertEqual([rc for rc, _ in got], [1] * len(refused))
        self.assertTrue(all(math.isnan(v) for _, q in got for v in q))
        _, binary_z = self.check_kind("refuse_z", ["--map", "temperature"], True)
        got = self.call(binary_z, [["inf", "0", "0", "0"], ["0", "-inf", "0", "0"], ["nan", "0", "0", "0"]])
        self.assertEqual([rc for rc, _ in got], [1, 1, 1])

    def test_refusals(self):
        map_path = self.path("t.map.json")
        run("fit", "--map", "temperature", "--scores", "p_*", "--label", "outcome", OUTCOMES, "-q", "-o", map_path,
            check=True)
        self.assert_refused(["export", "--c", "--function", "9q", map_path], 2, "not a C identifier")
        self.assert_refused(["export", "--c", "--score", "p_late", map_path], 2, "--score")
        self.assert_refused(["export", "--c", "--knot-table", "k", map_path], 2, "--knot-table")


if __name__ == "__main__":
    unittest.main()
