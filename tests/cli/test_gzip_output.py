"""Gzip output: an output name ending in .gz is written as gzip (RFC 1952),
on every command. Python's gzip module (zlib underneath, from the standard
library) and zcat read it back; the decompressed bytes must equal the plain
output byte for byte. RFC 1952 section 2.3.1 fixes the header read below:
ID1 = 31, ID2 = 139, CM = 8 (deflate), FLG, MTIME (4 bytes), XFL, OS."""
import gzip
import os
import shutil
import subprocess
import unittest

from plumbtest import PlumbCase, run, simulated_holdout, write

USAGE, INPUT, IO = 2, 3, 5


def gunzip(path):
    with gzip.open(path, "rb") as f:
        return f.read()


def raw(path):
    with open(path, "rb") as f:
        return f.read()


class GzipOutput(PlumbCase):
    def setUp(self):
        super().setUp()
        rows = simulated_holdout(30000, seed=47)
        self.csv = self.path("h.csv")
        write(self.csv, "parcel,score,late\n" + "".join(f"P{i},{s},{y}\n" for i, (s, y) in enumerate(rows)))
        self.map = self.path("m.json")
        run("fit", "--map", "isotonic", "--score", "score", "--label", "late", self.csv, "-o", self.map,
            "--no-timestamp", "-q", check=True)

    def test_apply_writes_gzip_that_reads_back_to_the_plain_output(self):
        run("apply", self.map, self.csv, "-o", self.path("plain.csv"), "-q", check=True)
        run("apply", self.map, self.csv, "-o", self.path("out.csv.gz"), "-q", check=True)
        packed = raw(self.path("out.csv.gz"))
        self.assertEqual(packed[:3], b"\x1f\x8b\x08")  # RFC 1952: gzip, deflate
        self.assertEqual(packed[4:8], b"\0\0\0\0")  # no modification time: the bytes alone decide
        self.assertEqual(packed[3] & 0x08, 0)  # FNAME unset: no file name stored
        self.assertLess(len(packed), os.path.getsize(self.path("plain.csv")))
        self.assertEqual(gunzip(self.path("out.csv.gz")), raw(self.path("plain.csv")))
        if shutil.which("zcat"):
            zcat = subprocess.run(["zcat", self.path("out.csv.gz")], capture_output=True, check=True)
            self.assertEqual(zcat.stdout, raw(self.path("plain.csv")))

    def test_apply_gzip_bytes_are_the_same_for_any_thread_count(self):
        for threads in ("1", "2", "3"):
            run("apply", self.map, self.csv, "-o", self.path(f"t{threads}.csv.gz"), "--threads", threads, "-q",
                check=True)
        self.assertEqual(raw(self.path("t1.csv.gz")), raw(self.path("t2.csv.gz")))
        self.assertEqual(raw(self.path("t1.csv.gz")), raw(self.path("t3.csv.gz")))

    def test_a_failed_apply_leaves_no_gzip_file_and_keeps_an_old_one(self):
        bad = self.path("bad.csv")
        with open(self.csv) as f:
            text = f.read()
        write(bad, text + "Pbad,oops,0\n")
        out = self.path("out.csv.gz")
        rc, _, err = run("apply", self.map, bad, "-o", out, "-q")
        self.assertEqual(rc, INPUT, err)
        self.assertFalse(os.path.exists(out))
        self.assertEqual([n for n in os.listdir(self.dir) if n.startswith(".")], [])
        with open(out, "wb") as f:
            f.write(b"previous")
        rc, _, err = run("apply", self.map, bad, "-o", out, "-q")
        self.assertEqual(rc, INPUT, err)
        self.assertEqual(raw(out), b"previous")

    def test_cross_fit_oof_and_json_are_gzip_when_named_so(self):
        common = ["cross-fit", "--score", "score", "--label", "late", "--map", "isotonic,platt", self.csv,
                  "--no-timestamp", "-q"]
        run(*common, "--oof", self.path("oof.csv"), "--json", self.path("e.json"), "-o", self.path("c.json"),
            check=True)
        run(*common, "--oof", self.path("oof.csv.gz"), "--json", self.path("e.json.gz"), "-o",
            self.path("c.json.gz"), check=True)
        self.assertEqual(gunzip(self.path("oof.csv.gz")), raw(self.path("oof.csv")))
        self.assertEqual(gunzip(self.path("e.json.gz")), raw(self.path("e.json")))
        self.assertEqual(gunzip(self.path("c.json.gz")), raw(self.path("c.json")))

    def test_a_gzip_map_artifact_and_tally_are_read_back_by_plumb(self):
        run("fit", "--map", "isotonic", "--score", "score", "--label", "late", self.csv, "-o",
            self.path("m.json.gz"), "--no-timestamp", "-q", check=True)
        self.assertEqual(gunzip(self.path("m.json.gz")), raw(self.map))
        self.assertEqual(run("apply", self.path("m.json.gz"), self.csv, "-q", check=True)[1],
                         run("apply", self.map, self.csv, "-q", check=True)[1])
        run("tally", "--score", "score", "--label", "late", self.csv, "-o", self.path("t.json.gz"), "-q",
            check=True)
        run("tally", "--score", "score", "--label", "late", self.csv, "-o", self.path("t.json"), "-q", check=True)
        self.assertEqual(gunzip(self.path("t.json.gz")), raw(self.path("t.json")))
        run("fit", "--map", "isotonic", "--tally", self.path("t.json.gz"), "-o", self.path("mt.json"),
            "--no-timestamp", "-q", check=True)
        run("fit", "--map", "isotonic", "--tally", self.path("t.json"), "-o", self.path("mt2.json"),
            "--no-timestamp", "-q", check=True)
        self.assertEqual(self.load_json(self.path("mt.json"))["parameters"],
                         self.load_json(self.path("mt2.json"))["parameters"])

    def test_standard_output_is_never_compressed(self):
        out = run("apply", self.map, self.csv, "-o", "-", "-q", check=True)[1]
        self.assertTrue(out.startswith("parcel,score,late,score_calibrated\n"))


if __name__ == "__main__":
    unittest.main()
