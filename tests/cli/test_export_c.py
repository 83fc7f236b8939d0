"""plumb export --c: the C function returns plumb apply's probabilities bit
for bit.

Every kind of map (and a fold average, and maps of log-odds and margins)
is fitted on the demo's hold-out rows; the exported function is compiled
with the system's C compiler (-std=c99 -pedantic, warnings as errors,
-ffp-contract=off as the file's comment asks) into a small driver that
reads scores with strtod and prints each probability in 17 significant
digits; every one of the demo's 200,000 rows must equal the double apply
wrote (apply prints the shortest text that reads back to its double)."""
import math
import os
import shutil
import subprocess
import tempfile
import unittest

from plumbtest import SOURCE_DIR, PlumbCase, run, write

DEMO = os.path.join(SOURCE_DIR, "data")

MAPS = [
    ("isotonic", ["--map", "isotonic"], "risk"),
    ("isotonic_step", ["--map", "isotonic", "--between-blocks", "step"], "risk"),
    ("platt", ["--map", "platt"], "risk"),
    ("beta", ["--map", "beta"], "risk"),
    ("beta_shared", ["--map", "beta", "--beta-form", "shared"], "risk"),
    ("temperature", ["--map", "temperature"], "risk"),
    ("histogram", ["--map", "histogram", "--bins", "30"], "risk"),
    ("centered", ["--map", "centered_isotonic"], "risk"),
    ("centered_strict", ["--map", "centered_isotonic", "--increase", "strict"], "risk"),
    ("centered_margin", ["--map", "centered_isotonic", "--scale", "margin", "--increase", "strict"], "z"),
    ("platt_logit", ["--map", "platt", "--scale", "logit"], "z"),
    ("temperature_logit", ["--map", "temperature", "--scale", "logit"], "z"),
    ("isotonic_margin", ["--map", "isotonic", "--scale", "margin"], "z"),
]

DRIVER = r"""
#include <stdio.h>
#include <stdlib.h>
double %s(double score);
int main(void) {
  char line[128];
  while (fgets(line, sizeof line, stdin)) printf("%%.17g\n", %s(strtod(line, NULL)));
  return 0;
}
"""


def with_logit_column(source, target):
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


def compiler():
    for name in ("cc", "gcc", "clang"):
        if shutil.which(name):
            return name
    raise AssertionError("no C compiler (cc, gcc or clang) on PATH")


class ExportC(PlumbCase):
    @classmethod
    def setUpClass(cls):
        cls._class_tmp = tempfile.TemporaryDirectory(prefix="plumb-c-")
        cls.addClassCleanup(cls._class_tmp.cleanup)
        cls.work = cls._class_tmp.name
        with_logit_column(os.path.join(DEMO, "holdout.csv"), os.path.join(cls.work, "holdout_z.csv"))
        with_logit_column(os.path.join(DEMO, "tonight.csv"), os.path.join(cls.work, "tonight_z.csv"))

    def check_map(self, name, map_path, column, rows):
        function = f"p_{name}"
        rc, source, err = run("export", "--c", "--function", function, map_path)
        self.assertEqual(rc, 0, err)
        write(self.path(name + ".c"), source)
        write(self.path("driver.c"), DRIVER % (function, function))
        binary = self.path(name + ".bin")
        proc = subprocess.run([compiler(), "-std=c99", "-pedantic", "-Wall", "-Wextra", "-Werror", "-O2",
                               "-ffp-contract=off", "-o", binary, self.path("driver.c"), self.path(name + ".c"), "-lm"],
                              capture_output=True, text=True)
        self.assertEqual(proc.returncode, 0, proc.stderr)
        run("apply", map_path, rows, "--as", "ref", "-q", "-o", self.path(name + ".ref.csv"), check=True)
        with open(self.path(name + ".ref.csv")) as f:
            lines = f.read().splitlines()
        at = lines[0].split(",").index(column)
        scores = [l.split(",")[at] for l in lines[1:]]
        expected = [float(l.rsplit(",", 1)[1]) for l in lines[1:]]
        out = subprocess.run([binary], input="\n".join(scores) + "\n", capture_output=True, text=True,
                             check=True).stdout.split()
        self.assertEqual(len(out), len(expected))
        differing = [(s, o, e) for s, o, e in zip(scores, out, expected) if float(o) != e]
        self.assertEqual(differing[:5], [], f"{name}: {len(differing)} of {len(expected)} rows differ from apply")
        return binary

    def test_every_kind_is_bit_identical_to_apply(self):
        for name, args, column in MAPS:
            with self.subTest(map=name):
                holdout = os.path.join(DEMO, "holdout.csv") if column == "risk" else os.path.join(self.work, "holdout_z.csv")
                tonight = os.path.join(DEMO, "tonight.csv") if column == "risk" else os.path.join(self.work, "tonight_z.csv")
                map_path = self.path(name + ".map.json")
                run("fit", *args, "--score", column, "--label", "missed", holdout, "-q", "-o", map_path, check=True)
                self.check_map(name, map_path, column, tonight)

    def test_fold_average_and_refused_scores(self):
        map_path = self.path("folds.map.json")
        run("cross-fit", "--map", "isotonic,platt", "--final", "folds", "--score", "risk", "--label", "missed",
            os.path.join(DEMO, "holdout.csv"), "-q", "-o", map_path, check=True)
        binary = self.check_map("folds", map_path, "risk", os.path.join(DEMO, "tonight.csv"))
        # apply refuses these scores; the function returns NaN.
        out = subprocess.run([binary], input="-0.001\n1.5\ninf\nnan\n0.5\n", capture_output=True, text=True,
                             check=True).stdout.split()
        self.assertEqual([math.isnan(float(v)) for v in out], [True, True, True, True, False])

    def test_a_map_name_cannot_end_the_comment(self):
        map_path = self.path("late*/x.map.json")
        os.makedirs(os.path.dirname(map_path))
        run("fit", "--map", "histogram", "--score", "risk", "--label", "missed", os.path.join(DEMO, "holdout.csv"),
            "-q", "-o", map_path, check=True)
        self.check_map("commented", map_path, "risk", os.path.join(DEMO, "tonight.csv"))

    def test_refusals(self):
        map_path = self.path("p.map.json")
        run("fit", "--map", "platt", "--score", "risk", "--label", "missed", os.path.join(DEMO, "holdout.csv"), "-q",
            "-o", map_path, check=True)
        self.assert_refused(["export", "--c", "--function", "2late", map_path], 2, "not a C identifier")
        self.assert_refused(["export", "--c", "--score", "risk", map_path], 2, "--score")
        self.assert_refused(["export", "--c", "--inline-max", "3", map_path], 2, "--inline-max")
        self.assert_refused(["export", "--c", "--sql", "sqlite", map_path], 2, "--sql and --c were both given")
        self.assert_refused(["export", map_path], 2, "--sql DIALECT")


if __name__ == "__main__":
    unittest.main()
