"""Faults that the fuzz targets in tests/fuzz found, seen from the command
line: each test fails on the code before its fix."""
import hashlib
import json
import unittest

from plumbtest import PlumbCase, run, simulated_holdout, write

ARTIFACT = 4


def canonical_hash(doc):
    """The integrity rule of docs/artifact-format.md: SHA-256 of the compact,
    key-sorted JSON of the document without its hash field."""
    body = {k: v for k, v in doc.items() if k != "integrity_sha256"}
    text = json.dumps(body, sort_keys=True, separators=(",", ":"), ensure_ascii=False)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


class ArtifactIterations(PlumbCase):
    """fit.iterations is kept as an int: 2^31 used to load as -2^31, which
    inspect showed and which plumb then wrote into artifacts it refused to
    read back (fuzz_artifact's round trip)."""

    def setUp(self):
        super().setUp()
        rows = ["risk,missed"] + [f"{s},{y}" for s, y in simulated_holdout(300, seed=5)]
        write(self.path("h.csv"), "\n".join(rows) + "\n")
        rc, out, err = run("fit", "--map", "platt", "--score", "risk", "--label", "missed", self.path("h.csv"), "-q")
        self.assertEqual(rc, 0, err)
        self.doc = json.loads(out)

    def with_iterations(self, n):
        doc = json.loads(json.dumps(self.doc))
        doc["fit"]["iterations"] = n
        doc["integrity_sha256"] = canonical_hash(doc)
        path = self.path(f"it{n}.json")
        write(path, json.dumps(doc, indent=1))
        return path

    def test_largest_int_count_is_read(self):
        rc, out, err = run("inspect", "--json", self.with_iterations(2**31 - 1))
        self.assertEqual(rc, 0, err)
        self.assertEqual(json.loads(out)["fit"]["iterations"], 2**31 - 1)

    def test_count_beyond_an_int_is_refused(self):
        for n in (2**31, 2**32 + 5, 2**63 - 1):
            self.assert_refused(["inspect", self.with_iterations(n)], ARTIFACT, "fit.iterations", "too large")


class SignedNumbers(PlumbCase):
    """A number is one optional sign, then digits: "+-2" used to be read as
    -2, because the reader dropped the '+' and std::from_chars took the '-'
    (fuzz_csv, checking parse_number against the documented grammar)."""

    INPUT = 3

    def setUp(self):
        super().setUp()
        rows = ["z,y"] + [f"{(s - 0.5) * 8:.6f},{y}" for s, y in simulated_holdout(300, seed=9)]
        write(self.path("logit.csv"), "\n".join(rows) + "\n")
        rc, out, err = run("fit", "--map", "platt", "--scale", "logit", "--score", "z", "--label", "y",
                           self.path("logit.csv"), "-q", "-o", self.path("map.json"))
        self.assertEqual(rc, 0, err)

    def test_plus_then_minus_is_refused_where_numbers_are_read(self):
        write(self.path("apply.csv"), "z\n1.5\n+-2\n")
        self.assert_refused(["apply", self.path("map.json"), self.path("apply.csv")], self.INPUT,
                            "apply.csv:3", "+-2", "not a decimal number")
        write(self.path("fit.csv"), "z,y\n1,1\n+-1,0\n-1,0\n")
        self.assert_refused(["fit", "--map", "platt", "--scale", "logit", "--score", "z", "--label", "y",
                             self.path("fit.csv")], self.INPUT, "fit.csv:3", "+-1")
        write(self.path("weights.csv"), "z,y,w\n1,1,1\n-1,0,+-0\n")
        self.assert_refused(["fit", "--map", "platt", "--scale", "logit", "--score", "z", "--label", "y",
                             "--weight", "w", self.path("weights.csv")], self.INPUT, "weights.csv:3", "+-0")

    def test_one_plus_sign_is_still_read(self):
        write(self.path("plus.csv"), "z\n+2\n2\n")
        rc, out, err = run("apply", self.path("map.json"), self.path("plus.csv"))
        self.assertEqual(rc, 0, err)
        rows = out.splitlines()
        self.assertEqual(rows[1].split(",")[1], rows[2].split(",")[1])


if __name__ == "__main__":
    unittest.main()
