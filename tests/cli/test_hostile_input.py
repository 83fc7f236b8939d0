"""Hostile input for fit and apply: malformed CSV, odd numbers and labels,
and damaged or edited map artifacts. Each case either works or is refused
with its documented exit code (docs/cli.md), one stderr line naming what
went wrong, and no output file."""
import concurrent.futures
import hashlib
import json
import math
import os
import subprocess
import threading
import time
import unittest

from plumbtest import PLUMB, Lcg, PlumbCase, read_rows, run, simulated_holdout, write

USAGE, INPUT, ARTIFACT = 2, 3, 4


def canonical_hash(doc):
    """The integrity rule of docs/artifact-format.md (as in test_artifact.py)."""
    body = {k: v for k, v in doc.items() if k != "integrity_sha256"}
    text = json.dumps(body, sort_keys=True, separators=(",", ":"), ensure_ascii=False)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def run_bytes(*args):
    """Runs plumb and returns (exit code, stdout bytes, stderr bytes): for
    cases whose messages may quote bytes that are not UTF-8."""
    proc = subprocess.run([PLUMB, *args], capture_output=True)
    return proc.returncode, proc.stdout, proc.stderr


class HostileCsv(PlumbCase):
    """Each input is tried with `fit -o` and `apply -o`."""

    def setUp(self):
        super().setUp()
        rows = ["risk,missed"] + [f"{s},{y}" for s, y in simulated_holdout(400, seed=5)]
        write(self.path("good.csv"), "\n".join(rows) + "\n")
        self.map = self.path("iso.json")
        run("fit", "--map", "isotonic", "--score", "risk", "--label", "missed", self.path("good.csv"), "-o",
            self.map, "-q", check=True)
        self.out = self.path("out.csv")

    def put(self, data, name="in.csv"):
        path = self.path(name)
        with open(path, "wb") as f:
            f.write(data if isinstance(data, bytes) else data.encode("utf-8"))
        return path

    def fit_args(self, path, *extra):
        return ["fit", "--map", "platt", "--score", "risk", "--label", "missed", *extra, path, "-o", self.out, "-q"]

    def apply_args(self, path, *extra):
        return ["apply", self.map, path, "-o", self.out, "-q", *extra]

    def refused_by_both(self, data, code, *fragments):
        path = self.put(data)
        self.assert_refused(self.fit_args(path), code, *fragments, output=self.out)
        self.assert_refused(self.apply_args(path), code, *fragments, output=self.out)

    def apply_ok(self, path, *extra):
        rc, out, err = run(*self.apply_args(path, *extra))
        self.assertEqual(rc, 0, err)
        with open(self.out, "rb") as f:
            return f.read()

    def fit_ok(self, path, *extra):
        rc, out, err = run(*self.fit_args(path, *extra))
        self.assertEqual(rc, 0, err)
        doc = self.load_json(self.out)
        os.remove(self.out)
        return doc

    # --- file shape -------------------------------------------------------

    def test_empty_file(self):
        self.refused_by_both(b"", INPUT, "in.csv", "the file is empty")

    def test_only_a_byte_order_mark_is_an_empty_file(self):
        self.refused_by_both(b"\xef\xbb\xbf", INPUT, "in.csv", "the file is empty")

    def test_header_only(self):
        path = self.put("risk,missed\n")
        self.assert_refused(self.fit_args(path), INPUT, "in.csv", "no data rows", output=self.out)
        # apply has nothing to refuse: the header alone, with the new column.
        self.assertEqual(self.apply_ok(path), b"risk,missed,risk_calibrated\n")

    def test_byte_order_mark_before_the_header_is_dropped(self):
        path = self.put(b"\xef\xbb\xbfrisk,missed\n0.2,0\n0.3,1\n0.7,1\n0.8,0\n")
        doc = self.fit_ok(path)
        self.assertEqual(doc["input"]["score_column"], "risk")
        out = self.apply_ok(path)
        self.assertTrue(out.startswith(b"risk,missed,risk_calibrated\n"), out[:40])
        self.assertEqual(len(out.splitlines()), 5)

    def test_a_header_arriving_in_pieces_through_a_pipe(self):
        # A writer may flush the byte-order mark and the header in parts; the
        # mark and the tab separator must still be recognised.
        pieces = [b"\xef", b"\xbb\xbfrisk", b"\tmissed\n0.2\t1\n", b"0.8\t0\n"]
        for args in (["apply", self.map, "-", "-q"],
                     ["fit", "--map", "platt", "--score", "risk", "--label", "missed", "-", "-q"]):
            proc = subprocess.Popen([PLUMB, *args], stdin=subprocess.PIPE, stdout=subprocess.PIPE,
                                    stderr=subprocess.PIPE)
            try:
                for piece in pieces:
                    proc.stdin.write(piece)
                    proc.stdin.flush()
                    time.sleep(0.05)
                proc.stdin.close()
            except BrokenPipeError:
                pass  # plumb stopped reading; its exit status tells why
            out, err = proc.stdout.read(), proc.stderr.read()
            proc.stdout.close()
            proc.stderr.close()
            self.assertEqual(proc.wait(timeout=10), 0, err)
            if args[0] == "apply":
                self.assertTrue(out.startswith(b"risk\tmissed\trisk_calibrated\n0.2\t1\t"), out)
            else:
                self.assertEqual(json.loads(out)["input"]["score_column"], "risk")

    def test_crlf_line_ends_work_and_are_kept(self):
        text = "risk,missed\r\n0.2,0\r\n0.3,1\r\n0.7,1\r\n0.8,0\r\n"
        path = self.put(text)
        doc = self.fit_ok(path)
        self.assertEqual(doc["provenance"]["rows"], 4)
        out = self.apply_ok(path)
        lines = out.split(b"\r\n")
        self.assertEqual(lines[0], b"risk,missed,risk_calibrated")
        self.assertEqual(lines[-1], b"")
        self.assertEqual(len(lines), 6)
        self.assertNotIn(b"\r\r", out)
        for line in lines[1:-1]:
            self.assertNotIn(b"\n", line)
            p = float(line.split(b",")[-1])
            self.assertTrue(0.0 <= p <= 1.0)

    def test_quoted_fields_with_delimiters_quotes_and_line_breaks(self):
        text = ('risk,note,missed\n0.2,"a, b",0\n0.3,"two\nlines\n\nand a blank",1\n0.6,"say ""hi""",1\n'
                '0.8,"",0\n')
        path = self.put(text)
        doc = self.fit_ok(path)
        self.assertEqual(doc["provenance"]["rows"], 4)
        out = self.apply_ok(path).decode()
        rows = read_rows(out, is_text=True)
        self.assertEqual(rows[0], ["risk", "note", "missed", "risk_calibrated"])
        self.assertEqual([r[1] for r in rows[1:]], ["a, b", "two\nlines\n\nand a blank", 'say "hi"', ""])
        # Passed through byte for byte: the quoting is the input's own.
        self.assertIn('"two\nlines\n\nand a blank"', out)
        self.assertIn('"say ""hi"""', out)

    def test_quoted_fields_across_read_boundaries(self):
        # Many records with quotes, doubled quotes, separators and line breaks
        # inside fields, read once from a file and once from a pipe fed in
        # chunks of random sizes: the same output, and the fields Python's
        # csv module reads from the input.
        g = Lcg(17)
        parts = ["a", ",", '"', '""', "\n", "\r\n", " ", "x" * 40, "\u00e9"]

        def field():
            return "".join(parts[int(g.uniform() * len(parts))] for _ in range(int(g.uniform() * 10)))

        def encode(f):
            return '"' + f.replace('"', '""') + '"' if any(c in f for c in ',"\r\n') or g.uniform() < 0.2 else f

        for line_end in ("\n", "\r\n"):
            rows, lines = [], ["risk,note,other"]
            for _ in range(20000):
                row = [f"{g.uniform():.4f}", field(), field()]
                rows.append(row)
                lines.append(",".join([row[0], encode(row[1]), encode(row[2])]))
            data = (line_end.join(lines) + line_end).encode()
            path = self.put(data)
            from_file = self.apply_ok(path)
            proc = subprocess.Popen([PLUMB, "apply", self.map, "-", "-q"], stdin=subprocess.PIPE,
                                    stdout=subprocess.PIPE, stderr=subprocess.PIPE)

            def feed():
                i = 0
                while i < len(data):
                    k = 1 + int(g.uniform() * 70000)
                    proc.stdin.write(data[i:i + k])
                    proc.stdin.flush()
                    i += k
                proc.stdin.close()

            feeder = threading.Thread(target=feed)
            feeder.start()
            from_pipe = proc.stdout.read()
            err = proc.stderr.read()
            feeder.join()
            proc.stdout.close()
            proc.stderr.close()
            self.assertEqual(proc.wait(timeout=30), 0, err)
            self.assertEqual(from_pipe, from_file)
            parsed = read_rows(from_file.decode(), is_text=True)
            self.assertEqual(parsed[0], ["risk", "note", "other", "risk_calibrated"])
            self.assertEqual([r[:3] for r in parsed[1:]], rows)

    def test_a_bad_score_after_a_multi_line_field_is_located_on_its_physical_line(self):
        text = 'risk,note\n0.2,"a\nb\n\nc"\n0.5,x\nbad,z\n'
        self.assert_refused(self.apply_args(self.put(text)), INPUT, "in.csv:7:1", "(column 'risk')", "'bad'",
                            output=self.out)

    def test_a_missing_column_among_names_with_line_breaks_is_one_line(self):
        # A quoted header name may hold a line break; the list of names in
        # the message shows it escaped so that the message stays one line.
        path = self.put('"first\nname",risk,missed\nx,0.2,1\n')
        line = self.assert_refused(["apply", self.map, path, "--score", "nope", "-o", self.out], INPUT,
                                   "in.csv:1", "no score column", "'nope'", "'risk'", output=self.out)
        self.assertIn("'first\\x0aname'", line)

    def test_ragged_rows(self):
        self.refused_by_both("risk,missed\n0.2,1\n0.3\n", INPUT, "in.csv:3", "1 fields", "header has 2")
        self.refused_by_both("risk,missed\n0.2,1\n0.3,0,extra\n", INPUT, "in.csv:3", "3 fields", "header has 2")

    def test_unclosed_quote_is_located_where_it_opens(self):
        self.refused_by_both('risk,missed\n0.2,1\n0.3,"0\n0.4,1\n', INPUT, "in.csv:3:2", "not closed")

    def test_duplicated_column_name(self):
        self.refused_by_both("risk,missed,risk\n0.2,1,0.3\n", INPUT, "in.csv:1:3", "names a column twice", "'risk'")

    def test_nul_bytes(self):
        self.refused_by_both(b"risk,missed\n0.2,1\n0.3,0\x00\n", INPUT, "in.csv:3:2", "NUL byte")
        self.refused_by_both(b'risk,missed\n0.2,"1\x00"\n', INPUT, "in.csv:2:2", "NUL byte")
        self.refused_by_both(b"ri\x00sk,missed\n0.2,1\n", INPUT, "in.csv:1:1", "NUL byte")

    def test_a_ten_megabyte_line_is_passed_through(self):
        blob = "x" * (10 << 20)
        path = self.put(f"risk,blob\n0.3,{blob}\n0.9,short\n")
        out = self.apply_ok(path)
        lines = out.split(b"\n")
        self.assertEqual(len(lines), 4)
        first = lines[1].split(b",")
        self.assertEqual(first[0], b"0.3")
        self.assertEqual(first[1], blob.encode())
        self.assertTrue(0.0 <= float(first[2]) <= 1.0)
        self.assertEqual(lines[2].split(b",")[:2], [b"0.9", b"short"])

    def test_a_record_longer_than_64_mib_is_refused(self):
        path = self.put(b"risk,blob\n0.3,ok\n0.4," + b"y" * ((64 << 20) + 16) + b"\n")
        self.assert_refused(self.apply_args(path), INPUT, "in.csv:3", "longer than 64 MiB", output=self.out)

    # --- scores -----------------------------------------------------------

    def score_refused(self, value, *fragments):
        text = f"risk,missed\n0.2,1\n{value},0\n0.7,1\n"
        self.refused_by_both(text, INPUT, "in.csv:3:1", "(column 'risk')", *fragments)

    def test_scores_that_are_not_decimal_numbers(self):
        # NaN is one of the spellings of a missing value (docs/cli.md, Missing values).
        self.score_refused("nan", "score is missing", "'nan'")
        self.score_refused("-NaN", "score is missing", "'-NaN'")
        self.score_refused("inf", "not finite")
        self.score_refused("Infinity", "not finite")
        self.score_refused("1e400", "out of the range of a double")
        self.score_refused("0x1p-3", "not a decimal number", "'0x1p-3'")
        self.score_refused("0.5.1", "not a decimal number")
        self.score_refused("-", "not a decimal number")

    def test_an_empty_score(self):
        path = self.put("risk,missed\n0.2,1\n,0\n")
        self.assert_refused(self.fit_args(path), INPUT, "in.csv:3:1", "score is missing", "--missing skip",
                            output=self.out)
        self.assert_refused(self.apply_args(path), INPUT, "in.csv:3:1", "score is missing", "--missing empty",
                            output=self.out)

    def test_minus_zero_is_zero(self):
        path = self.put("risk,missed\n-0,0\n0,0\n0.4,1\n0.6,0\n0.9,1\n")
        doc = self.fit_ok(path)
        self.assertEqual(doc["provenance"]["score_min"], 0.0)
        rows = read_rows(self.apply_ok(path).decode(), is_text=True)
        self.assertEqual(rows[1][0], "-0")  # passed through as written
        self.assertEqual(float(rows[1][-1]), float(rows[2][-1]))

    def test_subnormal_probabilities_are_numbers(self):
        path = self.put("risk,missed\n1e-310,0\n4.9e-324,0\n0.5,1\n0.6,0\n0.9,1\n")
        doc = self.fit_ok(path)
        self.assertEqual(doc["provenance"]["score_min"], 4.9e-324)

    # --- labels -----------------------------------------------------------

    def label_refused(self, label, shown):
        path = self.put(f"risk,missed\n0.2,1\n0.3,{label}\n0.8,1\n")
        return self.assert_refused(self.fit_args(path), INPUT, "in.csv:3:2", "(column 'missed')",
                                   "neither positive nor negative", shown, "1/0 or true/false", output=self.out)

    def test_labels_that_are_neither_class(self):
        self.label_refused("yes", "got 'yes'")
        self.label_refused("2", "got '2'")
        # 1.0 and 0.0 are labels (float dumps write them); other spellings of 1 are not.
        self.label_refused("1.", "got '1.'")
        self.label_refused("01", "got '01'")
        self.label_refused("1e0", "got '1e0'")

    def test_labels_are_not_trimmed_and_the_message_shows_the_blank(self):
        # The reader keeps a field's bytes as they are: ' 1' is not '1', and
        # the quoted value in the message makes the blank visible.
        self.label_refused(" 1", "got ' 1'")
        self.label_refused("1 ", "got '1 '")
        # With --positive the exact text decides, so ' 1' is a negative.
        path = self.put("risk,missed\n0.2, 1\n0.3,1\n0.8,1\n0.9,0\n")
        doc = self.fit_ok(path, "--positive", "1")
        self.assertEqual(doc["provenance"]["positives"], 2.0)

    def test_true_and_false_in_any_letter_case(self):
        path = self.put("risk,missed\n0.2,FALSE\n0.3,True\n0.8,tRuE\n0.9,false\n")
        self.assertEqual(self.fit_ok(path)["provenance"]["positives"], 2.0)

    def test_a_label_that_is_not_utf8(self):
        path = self.put(b"risk,missed\n0.2,1\n0.3,\xff\xfe\x80\n0.8,0\n")
        rc, out, err = run_bytes(*self.fit_args(path))
        self.assertEqual(rc, INPUT, err)
        lines = [l for l in err.splitlines() if l.strip()]
        self.assertEqual(len(lines), 1, err)
        self.assertIn(b"in.csv:3:2", lines[0])
        self.assertIn(b"neither positive nor negative", lines[0])
        self.assertFalse(os.path.exists(self.out))

    # --- weights ----------------------------------------------------------

    def test_weights(self):
        path = self.put("risk,missed,w\n0.2,0,1\n0.3,1,0\n0.6,1,2.5\n0.7,0,1\n0.9,1,0.0\n")
        doc = self.fit_ok(path, "--weight", "w")
        self.assertEqual(doc["provenance"]["rows"], 5)
        self.assertEqual(doc["provenance"]["weight_total"], 4.5)
        self.assertEqual(doc["provenance"]["positives"], 2.5)
        for bad, fragment in (("-1", "negative"), ("-0.0001", "negative"), ("nan", "NaN"), ("", "empty"),
                              ("1e999", "out of the range"), ("heavy", "not a decimal number")):
            path = self.put(f"risk,missed,w\n0.2,0,1\n0.3,1,{bad}\n")
            self.assert_refused(self.fit_args(path, "--weight", "w"), INPUT, "in.csv:3:3", "(column 'w')",
                                fragment, "a finite number >= 0", output=self.out)


class HostileArtifacts(PlumbCase):
    def setUp(self):
        super().setUp()
        rows = ["risk,missed"] + [f"{s},{y}" for s, y in simulated_holdout(600, seed=9)]
        write(self.path("h.csv"), "\n".join(rows) + "\n")
        write(self.path("scores.csv"), "risk\n0.001\n0.2\n0.5\n0.8\n0.999\n")
        self.out = self.path("out.csv")

    def fit(self, kind, *extra):
        rc, out, err = run("fit", "--map", kind, "--score", "risk", "--label", "missed", "--no-timestamp",
                           self.path("h.csv"), "-q", *extra)
        self.assertEqual(rc, 0, err)
        return out

    def put(self, doc, rehash=True):
        if rehash:
            doc["integrity_sha256"] = canonical_hash(doc)
        path = self.path("edited.json")
        write(path, json.dumps(doc, indent=2, ensure_ascii=False))
        return path

    def refused(self, path, *fragments):
        return self.assert_refused(["apply", path, self.path("scores.csv"), "-o", self.out], ARTIFACT, *fragments,
                                   output=self.out)

    def test_truncated_at_every_byte(self):
        text = self.fit("temperature").encode()
        complete = text.rstrip(b"\n")

        def try_cut(cut):
            path, out = self.path(f"cut{cut}.json"), self.path(f"out{cut}.csv")
            with open(path, "wb") as f:
                f.write(text[:cut])
            rc, _, err = run_bytes("apply", path, self.path("scores.csv"), "-o", out, "-q")
            return cut, rc, err, os.path.exists(out)

        # Each cut is its own process; two at a time keep the test short.
        with concurrent.futures.ThreadPoolExecutor(max_workers=2) as pool:
            results = list(pool.map(try_cut, range(len(text))))
        outcomes = {}
        for cut, rc, err, wrote in results:
            lines = [l for l in err.splitlines() if l.strip()]
            if text[:cut] == complete:
                # Only the final newline is missing: still the whole document.
                self.assertEqual(rc, 0, err)
                self.assertTrue(wrote)
                continue
            self.assertEqual((rc, len(lines)), (ARTIFACT, 1), f"cut at byte {cut}: {err!r}")
            self.assertIn(f"cut{cut}.json".encode(), lines[0])
            self.assertFalse(wrote, f"cut at byte {cut} left an output")
            message = lines[0].decode()
            key = ("empty" if "is empty" in message else "ends early" if "ends early" in message
                   else "not valid JSON" if "not valid JSON" in message else "other")
            outcomes[key] = outcomes.get(key, 0) + 1
        # Every strict prefix of a JSON object is incomplete, never wrong JSON.
        self.assertEqual(outcomes.get("empty"), 1)
        self.assertEqual(outcomes.get("ends early"), len(text) - 2, outcomes)
        leftovers = [f for f in os.listdir(self.dir) if ".plumb-" in f]
        self.assertEqual(leftovers, [])

    def test_a_future_version(self):
        doc = json.loads(self.fit("platt"))
        doc["format_version"] = 7
        self.refused(self.put(doc), "edited.json", "format version 7", "newer plumb")

    def test_an_unknown_kind(self):
        doc = json.loads(self.fit("platt"))
        doc["kind"] = "spline"
        self.refused(self.put(doc), "edited.json", "unknown map kind", "'spline'")

    def test_non_monotone_knots(self):
        doc = json.loads(self.fit("isotonic"))
        values = doc["parameters"]["block_value"]
        self.assertGreater(len(values), 3)
        values[1], values[2] = values[2] + 0.01, values[1]
        self.refused(self.put(doc), "edited.json", "parameters.block_value[2]", "non-decreasing")

    def test_overlapping_blocks_and_a_value_above_one(self):
        doc = json.loads(self.fit("histogram"))
        doc["parameters"]["bin_score_lo"][1] = doc["parameters"]["bin_score_hi"][0]
        self.refused(self.put(doc), "parameters.bin_score_lo[1]", "previous bin")
        doc = json.loads(self.fit("histogram"))
        doc["parameters"]["bin_value"][0] = 1.5
        self.refused(self.put(doc), "parameters.bin_value[0]", "outside [0, 1]")

    def test_members_of_the_wrong_type(self):
        # docs/artifact-format.md: a member of the wrong type is refused, even
        # with a valid hash; weight_column and created_utc are a string or null.
        edits = ((("parameters", "temperature"), True, "parameters.temperature", "not a number"),
                 (("parameters", "temperature"), "1.5", "parameters.temperature", "not a number"),
                 (("parameters", "temperature"), -0.0, "parameters.temperature", "not positive"),
                 (("provenance", "rows"), 1.5, "provenance.rows", "not an integer"),
                 (("provenance", "rows"), -1, "provenance.rows", "negative"),
                 (("kind",), 5, "'kind'", "not a string"),
                 (("provenance", "created_utc"), 5, "provenance.created_utc", "neither a string nor null"),
                 (("provenance", "weight_column"), ["w"], "provenance.weight_column", "neither a string nor null"))
        for path, value, field, fragment in edits:
            doc = json.loads(self.fit("temperature"))
            target = doc
            for key in path[:-1]:
                target = target[key]
            target[path[-1]] = value
            self.refused(self.put(doc), "edited.json", field, fragment)
        # The documented alternatives load: an integer temperature, a weight column.
        doc = json.loads(self.fit("temperature"))
        doc["parameters"]["temperature"] = 2
        doc["provenance"]["weight_column"] = "w"
        rc, _, err = run("apply", self.put(doc), self.path("scores.csv"), "-q")
        self.assertEqual(rc, 0, err)

    def test_a_number_too_large_for_a_double(self):
        text = self.fit("platt")
        doc = json.loads(text)
        a = json.dumps(doc["parameters"]["a"])
        self.assertEqual(text.count(f'"a": {a}'), 1)
        write(self.path("huge.json"), text.replace(f'"a": {a}', '"a": 1e999'))
        self.refused(self.path("huge.json"), "huge.json", "too large for a double")

    def test_a_temperature_of_zero_and_negative_beta_coefficients(self):
        doc = json.loads(self.fit("temperature"))
        doc["parameters"]["temperature"] = 0.0
        self.refused(self.put(doc), "parameters.temperature", "not positive")
        doc = json.loads(self.fit("beta"))
        doc["parameters"]["a"] = -0.5
        self.refused(self.put(doc), "parameters.a", "negative")

    def test_huge_but_finite_parameters_still_give_probabilities(self):
        cases = (("platt", {"a": -1e308, "b": 1e308}), ("platt", {"a": 1e308, "b": -1e308}),
                 ("temperature", {"temperature": 5e-324}), ("temperature", {"temperature": 1e308}),
                 ("beta", {"a": 1e308, "b": 1e308, "c": -1e308}))
        for kind, params in cases:
            extra = ("--beta-form", "shared") if kind == "beta" else ()
            doc = json.loads(self.fit(kind, *extra))
            doc["parameters"].update(params)
            path = self.put(doc)
            rc, out, err = run("apply", path, self.path("scores.csv"), "-q")
            self.assertEqual(rc, 0, f"{kind} {params}: {err}")
            probabilities = [float(r[-1]) for r in read_rows(out, is_text=True)[1:]]
            self.assertEqual(len(probabilities), 5)
            for p in probabilities:
                self.assertTrue(math.isfinite(p) and 0.0 <= p <= 1.0, f"{kind} {params}: {p}")

    def test_deeply_nested_brackets(self):
        # A valid-looking artifact carrying a member nested 200,000 levels
        # deep: refused before anything walks it recursively.
        doc = json.loads(self.fit("temperature"))
        text = json.dumps(doc)[:-1] + ', "extra": ' + "[" * 200000 + "]" * 200000 + "}"
        write(self.path("deep.json"), text)
        self.refused(self.path("deep.json"), "deep.json", "more than 64 levels deep")
        write(self.path("open.json"), "[" * 1000000)
        self.refused(self.path("open.json"), "open.json", "levels deep")
        # Brackets inside strings do not count.
        doc["provenance"]["source"] = "[" * 100 + '\\"{'
        path = self.put(doc)
        rc, _, err = run("apply", path, self.path("scores.csv"), "-q")
        self.assertEqual(rc, 0, err)

    def test_not_an_artifact(self):
        write(self.path("other.json"), '{"format": "something-else", "format_version": 1}\n')
        self.refused(self.path("other.json"), "not a plumb map artifact")
        write(self.path("list.json"), "[1, 2, 3]\n")
        self.refused(self.path("list.json"), "not a plumb map artifact")
        with open(self.path("binary.json"), "wb") as f:
            f.write(b"\x00\x01\x02\xff")
        self.refused(self.path("binary.json"), "not valid JSON")


if __name__ == "__main__":
    unittest.main()
