"""Gzip input: recognised by its first two bytes (RFC 1952, section 2.3.1:
ID1 = 31, ID2 = 139) whatever the file is called, decompressed as it is
read, and refused cleanly when truncated or corrupt. Python's gzip module
(zlib underneath, from the standard library) writes the compressed files."""
import gzip
import hashlib
import os
import subprocess
import unittest

from plumbtest import PLUMB, PlumbCase, run, simulated_holdout, write


class GzipInput(PlumbCase):
    def setUp(self):
        super().setUp()
        rows = simulated_holdout(4000, seed=31)
        self.text = "parcel,score,late\n" + "".join(f"P{i},{s},{y}\n" for i, (s, y) in enumerate(rows))
        write(self.path("plain.csv"), self.text)
        with gzip.open(self.path("packed.csv.gz"), "wb") as f:
            f.write(self.text.encode())
        run("fit", "--map", "isotonic", "--score", "score", "--label", "late", self.path("plain.csv"),
            "-o", self.path("map.json"), "-q", check=True)
        self.plain_out = run("apply", self.path("map.json"), self.path("plain.csv"), "-q", check=True)[1]

    def test_apply_reads_gzip_by_its_bytes_from_a_file_and_from_a_pipe(self):
        self.assertEqual(run("apply", self.path("map.json"), self.path("packed.csv.gz"), "-q")[1], self.plain_out)
        # Named without .gz: recognised by the magic bytes.
        os.rename(self.path("packed.csv.gz"), self.path("packed.data"))
        self.assertEqual(run("apply", self.path("map.json"), self.path("packed.data"), "-q")[1], self.plain_out)
        with open(self.path("packed.data"), "rb") as f:
            proc = subprocess.run([PLUMB, "apply", self.path("map.json"), "-", "-q"], stdin=f, capture_output=True)
        self.assertEqual(proc.returncode, 0, proc.stderr)
        self.assertEqual(proc.stdout.decode(), self.plain_out)

    def test_concatenated_members_read_as_one_stream(self):
        # RFC 1952 section 2.2: a gzip file is a series of members; `cat a.gz b.gz` is valid.
        head, tail = self.text[: len(self.text) // 2], self.text[len(self.text) // 2 :]
        with open(self.path("two.csv.gz"), "wb") as f:
            f.write(gzip.compress(head.encode()) + gzip.compress(tail.encode()))
        self.assertEqual(run("apply", self.path("map.json"), self.path("two.csv.gz"), "-q")[1], self.plain_out)

    def test_fit_on_gzip_equals_fit_on_plain_and_hashes_the_stored_bytes(self):
        run("fit", "--map", "platt", "--score", "score", "--label", "late", self.path("plain.csv"),
            "-o", self.path("a.json"), "-q", "--no-timestamp", check=True)
        run("fit", "--map", "platt", "--score", "score", "--label", "late", self.path("packed.csv.gz"),
            "-o", self.path("b.json"), "-q", "--no-timestamp", check=True)
        a, b = self.load_json(self.path("a.json")), self.load_json(self.path("b.json"))
        self.assertEqual(a["parameters"], b["parameters"])
        with open(self.path("packed.csv.gz"), "rb") as f:
            self.assertEqual(b["provenance"]["source_sha256"], hashlib.sha256(f.read()).hexdigest())

    def test_a_tsv_gz_file_is_read_as_tab_separated(self):
        with gzip.open(self.path("rows.tsv.gz"), "wt") as f:
            f.write(self.text.replace(",", "\t"))
        out = run("apply", self.path("map.json"), self.path("rows.tsv.gz"), "-q", check=True)[1]
        self.assertEqual(out.splitlines()[0], "parcel\tscore\tlate\tscore_calibrated")

    def test_truncated_gzip_is_refused_with_no_output(self):
        with open(self.path("packed.csv.gz"), "rb") as f:
            data = f.read()
        for cut in (len(data) // 2, len(data) - 4):
            with open(self.path("cut.csv.gz"), "wb") as f:
                f.write(data[:cut])
            self.assert_refused(["apply", self.path("map.json"), self.path("cut.csv.gz"), "-o", self.path("out.csv")],
                                3, "cut.csv.gz: the gzip data ends before its end marker (is the file truncated?)",
                                output=self.path("out.csv"))

    def test_corrupt_gzip_and_trailing_bytes_are_refused(self):
        with open(self.path("packed.csv.gz"), "rb") as f:
            data = bytearray(f.read())
        bad = bytearray(data)
        for i in range(20, 60):
            bad[i] ^= 0x55
        with open(self.path("bad.csv.gz"), "wb") as f:
            f.write(bad)
        self.assert_refused(["apply", self.path("map.json"), self.path("bad.csv.gz"), "-o", self.path("out.csv")],
                            3, "bad.csv.gz: the gzip data is corrupt", output=self.path("out.csv"))
        with open(self.path("tail.csv.gz"), "wb") as f:
            f.write(bytes(data) + b"not gzip")
        self.assert_refused(["apply", self.path("map.json"), self.path("tail.csv.gz"), "-o", self.path("out.csv")],
                            3, "tail.csv.gz: bytes that are not gzip data follow the end of the gzip data",
                            output=self.path("out.csv"))


if __name__ == "__main__":
    unittest.main()
