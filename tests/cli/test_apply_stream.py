"""plumb apply on inputs of several blocks: quote-free lines take the bulk
path, lines with quotes the record-by-record path, and the output must be
the same bytes whichever path and however many threads.

The expected output is built here from the records' own text: each record's
bytes as written, the separator, and the isotonic map's value computed in
Python from the artifact's blocks by the rule docs/methods.md states
(constant on a block, linear between neighbouring blocks, held at the end
values outside them). Python's float() (correctly rounded, like strtod) is
the reference reading of every score."""
import json
import os
import tempfile
import unittest

from plumbtest import PlumbCase, run, simulated_holdout, write


def isotonic_value(params, s):
    lo, hi, value = params["block_score_lo"], params["block_score_hi"], params["block_value"]
    if s < lo[0]:
        return value[0]
    if s > hi[-1]:
        return value[-1]
    i = max(j for j in range(len(lo)) if lo[j] <= s)
    if s <= hi[i] or params["between_blocks"] != "linear":
        return value[i]
    t = (s - hi[i]) / (lo[i + 1] - hi[i])
    p = value[i] + t * (value[i + 1] - value[i])
    return min(max(p, value[i]), value[i + 1])


class ApplyStream(PlumbCase):
    @classmethod
    def setUpClass(cls):
        cls._fit_dir = tempfile.TemporaryDirectory(prefix="plumb-cli-")
        rows = simulated_holdout(3000, seed=5)
        train = os.path.join(cls._fit_dir.name, "train.csv")
        write(train, "score,late\n" + "".join(f"{s},{y}\n" for s, y in rows))
        cls.map_path = os.path.join(cls._fit_dir.name, "map.json")
        run("fit", "--map", "isotonic", "--score", "score", "--label", "late", train, "-o", cls.map_path, "-q",
            check=True)
        with open(cls.map_path) as f:
            cls.params = json.load(f)["parameters"]

    @classmethod
    def tearDownClass(cls):
        cls._fit_dir.cleanup()

    def records(self, n):
        """(raw text without line end, score text, line end) for n varied records."""
        score_texts = ["0.5", "5e-1", " 0.25", "+0.125", "1", "0", "-0", "0.1234567890123456789012", "0.000001",
                       "1.0", "0.99999999999999989"]
        out = []
        for i in range(n):
            u = ((i * 2654435761) % 1000003) / 1000003.0
            score = f"{u:.6f}" if i % 13 else score_texts[(i // 13) % len(score_texts)]
            if i % 1997 == 500:
                note = '"Depot ""North"", bay 4,\nsecond line"'  # quoted, with a separator and a line break
            elif i % 3001 == 7:
                note = '"plain quoted"'
            else:
                note = f"n{i % 17}"
            end = "\r\n" if i % 7 == 3 else "\n"
            out.append((f"P{i},{score},{note}", score, end))
        return out

    def build(self, recs, blank_every=0, last_end=None):
        """The input text and, when every score is valid, the expected output."""
        text, expected = "parcel,score,note\n", ["parcel,score,note,score_calibrated\n"]
        for i, (raw, score, end) in enumerate(recs):
            if i == len(recs) - 1 and last_end is not None:
                end = last_end
            text += raw + end
            try:
                value = float(score)
            except ValueError:
                expected = None  # a bad score: the test expects a refusal
            if expected is not None:
                expected.append(raw + "," + repr(isotonic_value(self.params, value)) + end)
            if blank_every and i % blank_every == blank_every - 1:
                text += "\n"
        return text, None if expected is None else "".join(expected)

    def check_same(self, out, expected):
        got_lines, want_lines = out.split("\n"), expected.split("\n")
        self.assertEqual(len(got_lines), len(want_lines))
        for g, w in zip(got_lines, want_lines):
            if g == w:
                continue
            # The probability's text may differ from Python's repr in form
            # (never in value): compare the rest as bytes and it as a double.
            g_head, g_p = g.rstrip("\r").rsplit(",", 1)
            w_head, w_p = w.rstrip("\r").rsplit(",", 1)
            self.assertEqual(g_head, w_head)
            self.assertEqual(float(g_p), float(w_p), g)
            self.assertEqual(g.endswith("\r"), w.endswith("\r"))

    def test_several_blocks_mixing_both_paths_on_one_to_three_threads(self):
        text, expected = self.build(self.records(160000), blank_every=5000)
        self.assertGreater(len(text), 3 << 20)  # several 1 MiB blocks
        write(self.path("in.csv"), text)
        outputs = []
        for threads in ("1", "2", "3"):
            rc, out, err = run("apply", self.map_path, self.path("in.csv"), "--threads", threads, "-o",
                               self.path(f"out{threads}.csv"))
            self.assertEqual(rc, 0, err)
            self.assertIn("160,000 rows", err)
            with open(self.path(f"out{threads}.csv"), newline="") as f:
                outputs.append(f.read())
        self.assertEqual(outputs[0], outputs[1])
        self.assertEqual(outputs[0], outputs[2])
        self.check_same(outputs[0], expected)

    def test_last_record_without_a_line_end_or_with_a_bare_carriage_return(self):
        for last_end in ("", "\r"):
            text, expected = self.build(self.records(50000), last_end=last_end)
            write(self.path("in.csv"), text)
            for threads in ("1", "2"):
                rc, _, err = run("apply", self.map_path, self.path("in.csv"), "--threads", threads, "-q", "-o",
                                 self.path("out.csv"))
                self.assertEqual(rc, 0, err)
                with open(self.path("out.csv"), newline="") as f:
                    out = f.read()
                self.assertEqual(out[-1] == "\r" if last_end == "\r" else out[-1] not in "\r\n", True)
                self.check_same(out, expected)

    def line_of(self, text, needle):
        return text[: text.index(needle)].count("\n") + 1

    def test_the_first_bad_record_in_input_order_is_reported_whatever_the_threads(self):
        recs = self.records(150000)
        # A bad score deep in the file (a later block), a ragged row after it,
        # and an unclosed quote (met by the reading thread) after both.
        recs[70001] = ("P70001,0.7x,n", "0.7x", "\n")
        recs[90001] = ("P90001,0.5", "0.5", "\n")
        recs[120001] = ('P120001,0.5,"never closed', "0.5", "\n")
        text, _ = self.build(recs)
        write(self.path("in.csv"), text)
        line = self.line_of(text, "P70001,")
        for threads in ("1", "2", "4"):
            msg = self.assert_refused(["apply", self.map_path, self.path("in.csv"), "--threads", threads, "-o",
                                       self.path("out.csv")], 3, output=self.path("out.csv"))
            self.assertIn(f"in.csv:{line}:2 (column 'score'): the score is not a decimal number", msg)
        # Without the bad score, the ragged row comes first.
        recs[70001] = ("P70001,0.7,n", "0.7", "\n")
        text, _ = self.build(recs)
        write(self.path("in.csv"), text)
        line = self.line_of(text, "P90001,")
        for threads in ("1", "2"):
            msg = self.assert_refused(["apply", self.map_path, self.path("in.csv"), "--threads", threads, "-o",
                                       self.path("out.csv")], 3, output=self.path("out.csv"))
            self.assertIn(f"in.csv:{line}: row has 2 fields but the header has 3", msg)

    def test_an_error_met_while_reading_waits_for_earlier_blocks(self):
        recs = self.records(150000)
        recs[40001] = ("P40001,2.5,n", "2.5", "\n")  # outside [0, 1], in a bulk block
        recs[40300] = ('P40300,0.5,"never closed', "0.5", "\n")  # a quoting error, met by the reader
        text, _ = self.build(recs)
        write(self.path("in.csv"), text)
        line = self.line_of(text, "P40001,")
        for threads in ("1", "2"):
            msg = self.assert_refused(["apply", self.map_path, self.path("in.csv"), "--threads", threads, "-o",
                                       self.path("out.csv")], 3, output=self.path("out.csv"))
            self.assertIn(f"in.csv:{line}:2 (column 'score'): the score lies outside [0, 1]", msg)

    def test_a_nul_byte_deep_in_the_file_is_located(self):
        recs = self.records(100000)
        recs[80001] = ("P80001,0.5,n\0x", "0.5", "\n")
        text, _ = self.build(recs)
        write(self.path("in.csv"), text)
        line = self.line_of(text, "P80001,")
        for threads in ("1", "2"):
            msg = self.assert_refused(["apply", self.map_path, self.path("in.csv"), "--threads", threads, "-o",
                                       self.path("out.csv")], 3, output=self.path("out.csv"))
            self.assertIn(f"in.csv:{line}:3: the input holds a NUL byte", msg)


if __name__ == "__main__":
    unittest.main()
