"""Shared helpers for the end-to-end tests: run the built plumb binary."""
import csv
import io
import json
import math
import os
import re
import subprocess
import tempfile
import unittest

PLUMB = os.environ.get("PLUMB_BIN", "plumb")
SOURCE_DIR = os.environ.get("PLUMB_SOURCE_DIR", os.path.join(os.path.dirname(__file__), "..", ".."))


def run(*args, stdin=None, check=False):
    """Runs plumb; returns (exit code, stdout text, stderr text)."""
    proc = subprocess.run([PLUMB, *args], input=stdin, capture_output=True, text=True)
    if check and proc.returncode != 0:
        raise AssertionError(f"plumb {' '.join(args)} exited {proc.returncode}: {proc.stderr}")
    return proc.returncode, proc.stdout, proc.stderr


def write(path, text, newline="\n"):
    with open(path, "w", newline="") as f:
        f.write(text.replace("\n", newline))


def read_rows(path_or_text, is_text=False):
    f = io.StringIO(path_or_text, newline="") if is_text else open(path_or_text, newline="")
    with f:
        return list(csv.reader(f))


def sigmoid(x):
    return 1.0 / (1.0 + math.exp(-x)) if x >= 0 else math.exp(x) / (1.0 + math.exp(x))


class Lcg:
    """A small seeded generator (Knuth's MMIX constants) so that test data do
    not depend on any library's random number stream."""

    def __init__(self, seed):
        self.state = seed & (2**64 - 1)

    def uniform(self):
        self.state = (6364136223846793005 * self.state + 1442695040888963407) & (2**64 - 1)
        return ((self.state >> 11) + 0.5) / 2.0**53


def simulated_holdout(n, seed=7, slope=1.8):
    """Rows (score, label): true log-odds z, an over-confident score
    sigmoid(slope * z), and a label drawn from sigmoid(z)."""
    g = Lcg(seed)
    rows = []
    for _ in range(n):
        z = 4.0 * g.uniform() - 2.5
        s = round(sigmoid(slope * z), 6)
        rows.append((s, 1 if g.uniform() < sigmoid(z) else 0))
    return rows


class PlumbCase(unittest.TestCase):
    def setUp(self):
        self._tmp = tempfile.TemporaryDirectory(prefix="plumb-cli-")
        self.dir = self._tmp.name

    def tearDown(self):
        self._tmp.cleanup()

    def path(self, name):
        return os.path.join(self.dir, name)

    def assert_refused(self, args, code, *fragments, stdin=None, output=None):
        """plumb refuses with exit `code`, one stderr line holding every
        fragment, and (when `output` is given) no file at that path."""
        rc, out, err = run(*args, stdin=stdin)
        self.assertEqual(rc, code, f"stderr: {err}")
        lines = [l for l in err.splitlines() if l.strip()]
        self.assertEqual(len(lines), 1, f"expected one line on stderr, got: {err!r}")
        for fragment in fragments:
            self.assertIn(fragment, lines[0])
        if output is not None:
            self.assertFalse(os.path.exists(output), f"{output} was left behind")
            leftovers = [f for f in os.listdir(os.path.dirname(output) or ".") if ".plumb-" in f]
            self.assertEqual(leftovers, [], "a temporary file was left behind")
        return lines[0]

    def load_json(self, path):
        with open(path) as f:
            return json.load(f)


COMMANDS = ("fit", "apply", "cross-fit", "report", "inspect", "adjust", "tally", "merge", "export", "drift")


def help_options(command):
    """The option spellings a command's --help lists ("--score", "-o", ...):
    each option stands at the start of its own line, indented two spaces,
    short and long names separated by ", "."""
    rc, out, err = run(command, "--help")
    if rc != 0:
        raise AssertionError(f"plumb {command} --help exited {rc}: {err}")
    options = set()
    for line in out.splitlines():
        m = re.match(r"^  (-\w|--[\w-]+)((?:, --?[\w-]+)*)(?: |$)", line)
        if m:
            options.add(m.group(1))
            options.update(n.strip() for n in m.group(2).split(",") if n.strip())
    return options
