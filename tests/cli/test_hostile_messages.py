"""The hostile inputs of the hardening issue, each with the exact line plumb
prints on stderr, its exit code (docs/cli.md) and no output file. Other
tests (test_hostile_input.py, test_refusals.py, test_artifact.py) check the
same cases by fragments and cover the inputs that are accepted (BOM, CRLF,
quoted fields, a 10 MB line, "-0", zero weights)."""
import json
import os
import re
import unittest

from plumbtest import PlumbCase, run, write
from test_hostile_input import run_bytes

INPUT, ARTIFACT, FIT = 3, 4, 6
LABELS = "expected 1/0 or true/false (or name the positive value with --positive)"


class ExactMessages(PlumbCase):
    def setUp(self):
        super().setUp()
        write(self.path("good.csv"), "risk,missed\n0.2,1\n0.7,0\n0.4,1\n0.9,1\n")
        self.map = self.path("m.json")
        rc, _, err = run("fit", "--map", "platt", "--score", "risk", "--label", "missed", "--no-timestamp", "-q",
                         self.path("good.csv"), "-o", self.map)
        self.assertEqual(rc, 0, err)
        self.out = self.path("out")

    def refused(self, args, code, line):
        rc, _, err = run_bytes(*args)
        self.assertEqual(rc, code, err)
        self.assertEqual(err.decode("utf-8"), "plumb: " + line + "\n")  # strict: stderr is valid UTF-8
        self.assertFalse(os.path.exists(self.out), f"{self.out} was left behind")
        self.assertEqual([f for f in os.listdir(self.dir) if ".plumb-" in f], [])

    def fit_refused(self, data, code, line, *extra):
        with open(self.path("in.csv"), "wb") as f:
            f.write(data)
        self.refused(["fit", "--map", "platt", "--score", "risk", "--label", "missed", *extra, self.path("in.csv"),
                      "-o", self.out, "-q"], code, self.path("in.csv") + line)

    def apply_refused(self, data, code, line):
        with open(self.path("in.csv"), "wb") as f:
            f.write(data)
        self.refused(["apply", self.map, self.path("in.csv"), "-o", self.out, "-q"], code,
                     self.path("in.csv") + line)

    def test_file_shape(self):
        empty = ": the file is empty; expected a header row naming the columns"
        for data in (b"", b"\xef\xbb\xbf"):
            self.fit_refused(data, INPUT, empty)
            self.apply_refused(data, INPUT, empty)
        self.fit_refused(b"risk,missed\n", INPUT,
                         ": the file has a header but no data rows; expected at least one labelled row")
        ragged = ":3: row has 1 fields but the header has 2; expected the same number of fields as the header"
        self.fit_refused(b"risk,missed\n0.2,1\n0.3\n", INPUT, ragged)
        self.apply_refused(b"risk,missed\n0.2,1\n0.3\n", INPUT, ragged)
        twice = ":1:3: the header names a column twice: got 'risk'; expected distinct column names"
        self.fit_refused(b"risk,missed,risk\n0.2,1,0.3\n", INPUT, twice)
        self.apply_refused(b"risk,missed,risk\n0.2,1,0.3\n", INPUT, twice)
        nul = ":2:2: the input holds a NUL byte; expected text (is this a binary file?)"
        self.fit_refused(b"risk,missed\n0.3,0\x00\n", INPUT, nul)
        self.apply_refused(b"risk,missed\n0.3,0\x00\n", INPUT, nul)

    def test_scores(self):
        cases = (("inf", "is not finite"),
                 ("1e400", "is out of the range of a double"), ("0x1p-3", "is not a decimal number"))
        for value, what in cases:
            data = f"risk,missed\n0.2,1\n{value},0\n0.7,1\n".encode()
            tail = f": got '{value}'; expected a decimal number in [0, 1]"
            self.fit_refused(data, INPUT, f":3:1 (column 'risk'): the score {what}{tail}")
            self.apply_refused(data, INPUT,
                               f":3:1 (column 'risk'): the score {what} (the map was fitted on the probability "
                               f"scale){tail}")
        for value, shown in (("", ""), ("nan", ": got 'nan'"), ("NA", ": got 'NA'")):
            data = f"risk,missed\n0.2,1\n{value},0\n0.7,1\n".encode()
            self.fit_refused(data, INPUT, f":3:1 (column 'risk'): the score is missing{shown}; expected a score (or "
                                          "--missing skip to leave the row out)")
            self.apply_refused(data, INPUT, f":3:1 (column 'risk'): the score is missing{shown}; expected a score "
                                            "(or --missing skip to leave the row out, or --missing empty to write an "
                                            "empty probability)")

    def test_labels(self):
        for label in (" 1", "yes", "2"):
            self.fit_refused(f"risk,missed\n0.2,1\n0.3,{label}\n0.8,0\n".encode(), INPUT,
                             f":3:2 (column 'missed'): the label is neither positive nor negative: got '{label}'; "
                             + LABELS)

    def test_a_label_that_is_not_utf8(self):
        # Bytes that are not UTF-8 (RFC 3629) are shown escaped, so the
        # message is valid UTF-8 text; well-formed UTF-8 is shown as it is.
        self.fit_refused(b"risk,missed\n0.3,\xff\xfe\n", INPUT,
                         ":2:2 (column 'missed'): the label is neither positive nor negative: got '\\xff\\xfe'; "
                         + LABELS)
        self.fit_refused("risk,missed\n0.3,spät\n".encode(), INPUT,
                         ":2:2 (column 'missed'): the label is neither positive nor negative: got 'spät'; " + LABELS)
        # A truncated sequence and an overlong form are not UTF-8 either.
        self.fit_refused(b"risk,missed\n0.3,a\xc3\n", INPUT,
                         ":2:2 (column 'missed'): the label is neither positive nor negative: got 'a\\xc3'; " + LABELS)
        self.fit_refused(b"risk,missed\n0.3,\xc0\xaf\n", INPUT,
                         ":2:2 (column 'missed'): the label is neither positive nor negative: got '\\xc0\\xaf'; "
                         + LABELS)

    def test_weights(self):
        self.fit_refused(b"risk,missed,w\n0.2,0,1\n0.3,1,-1\n", INPUT,
                         ":3:3 (column 'w'): the weight is negative: got '-1'; expected a finite number >= 0",
                         "--weight", "w")
        # Zero weights are allowed, but rows of zero weight take no part.
        self.fit_refused(b"risk,missed,w\n0.2,0,0\n0.3,1,0\n", FIT, ": no rows of positive weight to fit",
                         "--weight", "w")

    def artifact_refused(self, path, line):
        write(self.path("s.csv"), "risk\n0.5\n")
        self.refused(["apply", path, self.path("s.csv"), "-o", self.out, "-q"], ARTIFACT, path + line)

    def test_artifacts(self):
        with open(self.map) as f:
            text = f.read()
        doc = json.loads(text)
        write(self.path("cut.json"), text[:len(text) // 2])
        rc, _, err = run("apply", self.path("cut.json"), self.path("good.csv"), "-o", self.out, "-q")
        self.assertEqual(rc, ARTIFACT, err)
        self.assertRegex(err, r"^plumb: " + re.escape(self.path("cut.json")) +
                         r":\d+:\d+: the map artifact ends early \(truncated\?\); expected a complete JSON "
                         r"document written by plumb fit\n$")
        self.assertFalse(os.path.exists(self.out))
        # A literal NaN is not JSON: the parser stops at it, line and column.
        nan = re.sub(r'"a": [^,]*,', '"a": NaN,', text)
        row = next(i for i, l in enumerate(nan.splitlines(), 1) if '"a": NaN' in l)
        col = nan.splitlines()[row - 1].index("NaN") + 1  # 1-based, at the N
        write(self.path("nan.json"), nan)
        self.artifact_refused(self.path("nan.json"), f":{row}:{col}: the map artifact is not valid JSON; expected a "
                                                     "complete JSON document written by plumb fit")
        self.assertIn("platt", doc["kind"])


if __name__ == "__main__":
    unittest.main()
