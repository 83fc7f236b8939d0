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


if __name__ == "__main__":
    unittest.main()
