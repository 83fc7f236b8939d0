"""Map artifacts: deterministic bytes, integrity, versions and validation
on load (docs/artifact-format.md)."""
import hashlib
import json
import os
import unittest

import jsonschema  # Debian python3-jsonschema, installed by tests/run.sh

from plumbtest import SOURCE_DIR, PlumbCase, run, simulated_holdout, write

ARTIFACT = 4


def canonical_hash(doc):
    """The integrity rule as docs/artifact-format.md states it: SHA-256 of the
    compact, key-sorted JSON of the document without its hash field."""
    body = {k: v for k, v in doc.items() if k != "integrity_sha256"}
    text = json.dumps(body, sort_keys=True, separators=(",", ":"), ensure_ascii=False)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


class Artifacts(PlumbCase):
    def setUp(self):
        super().setUp()
        rows = ["risk,missed"] + [f"{s},{y}" for s, y in simulated_holdout(1500, seed=11)]
        write(self.path("h.csv"), "\n".join(rows) + "\n")

    def fit(self, kind, *extra):
        rc, out, err = run("fit", "--map", kind, "--score", "risk", "--label", "missed", self.path("h.csv"), *extra)
        self.assertEqual(rc, 0, err)
        return out

    def write_doc(self, doc, name="edited.json", rehash=True):
        if rehash:
            doc["integrity_sha256"] = canonical_hash(doc)
        write(self.path(name), json.dumps(doc, indent=1))
        return self.path(name)

    def test_no_timestamp_is_byte_identical_and_timestamp_is_the_only_difference(self):
        for kind in ("isotonic", "centered_isotonic", "platt", "beta", "temperature", "histogram"):
            a, b = self.fit(kind, "--no-timestamp"), self.fit(kind, "--no-timestamp")
            self.assertEqual(a, b)
            stamped = json.loads(self.fit(kind))
            plain = json.loads(a)
            self.assertRegex(stamped["provenance"]["created_utc"], r"^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ$")
            self.assertIsNone(plain["provenance"]["created_utc"])
            stamped["provenance"]["created_utc"] = None
            del stamped["integrity_sha256"], plain["integrity_sha256"]
            self.assertEqual(stamped, plain)

    def test_every_kind_matches_the_published_schema(self):
        with open(os.path.join(SOURCE_DIR, "docs", "artifact.schema.json")) as f:
            schema = json.load(f)
        jsonschema.Draft202012Validator.check_schema(schema)
        validator = jsonschema.Draft202012Validator(schema)
        write(self.path("w.csv"), "risk,missed,w\n0.1,0,1\n0.4,1,2\n0.3,0,0.5\n0.8,1,1\n")
        for kind in ("isotonic", "centered_isotonic", "platt", "beta", "temperature", "histogram"):
            for extra in ((), ("--no-timestamp",)):
                doc = json.loads(self.fit(kind, *extra))
                errors = [e.message for e in validator.iter_errors(doc)]
                self.assertEqual(errors, [], kind)
            rc, out, err = run("fit", "--map", kind, "--score", "risk", "--label", "missed", "--weight", "w",
                               self.path("w.csv"), "-q")
            self.assertEqual(rc, 0, err)
            self.assertEqual([e.message for e in validator.iter_errors(json.loads(out))], [], kind)
        doc = json.loads(self.fit("centered_isotonic", "--increase", "strict"))
        self.assertEqual([e.message for e in validator.iter_errors(doc)], [], "centered_isotonic, strict")
        doc = json.loads(self.fit("platt"))
        doc["kind"] = "spline"
        self.assertTrue(list(validator.iter_errors(doc)), "the schema accepts an unknown kind")

    def test_centered_isotonic_applies_the_documented_formula(self):
        # docs/artifact-format.md: the line through the points, held beyond
        # the end points; strict: (1 - tilt) line + tilt (1 + tanh((s - m) / h)) / 2.
        import math
        for increase in ("weak", "strict"):
            rc, out, err = run("fit", "-q", "--map", "centered_isotonic", "--increase", increase, "--score", "risk",
                               "--label", "missed", self.path("h.csv"), "-o", self.path("c.json"))
            self.assertEqual(rc, 0, err)
            p = self.load_json(self.path("c.json"))["parameters"]
            xs, ys = p["point_score"], p["point_value"]
            lo, hi, tilt = p["fitted_score_lo"], p["fitted_score_hi"], p["tilt"]
            self.assertEqual(tilt, 0 if increase == "weak" else 1e-6)
            m, h = (lo + hi) / 2, ((hi - lo) / 2 or 1.0)

            def expected(s):
                if s <= xs[0]:
                    c = ys[0]
                elif s >= xs[-1]:
                    c = ys[-1]
                else:
                    i = max(k for k in range(len(xs)) if xs[k] <= s)
                    c = ys[i] + (s - xs[i]) / (xs[i + 1] - xs[i]) * (ys[i + 1] - ys[i])
                return (1 - tilt) * c + tilt * (1 + math.tanh((s - m) / h)) / 2

            grid = [k / 200 for k in range(201)]
            write(self.path("grid.csv"), "risk\n" + "\n".join(repr(s) for s in grid) + "\n")
            rc, out, err = run("apply", "-q", self.path("c.json"), self.path("grid.csv"))
            self.assertEqual(rc, 0, err)
            got = [float(line.split(",")[-1]) for line in out.splitlines()[1:]]
            for s, g in zip(grid, got):
                self.assertAlmostEqual(g, expected(s), delta=1e-12, msg=f"{increase} at {s}")
            if increase == "strict":
                self.assertTrue(all(a < b for a, b in zip(got, got[1:])), "strictly increasing")

    def test_integrity_hash_follows_the_documented_rule(self):
        for kind in ("isotonic", "platt"):
            doc = json.loads(self.fit(kind))
            self.assertEqual(doc["integrity_sha256"], canonical_hash(doc))

    def test_provenance(self):
        doc = json.loads(self.fit("platt"))
        with open(self.path("h.csv"), "rb") as f:
            digest = hashlib.sha256(f.read()).hexdigest()
        p = doc["provenance"]
        self.assertEqual(p["source_sha256"], digest)
        self.assertEqual(p["rows"], 1500)
        self.assertEqual(p["positives"], sum(y for _, y in simulated_holdout(1500, seed=11)))
        self.assertEqual(doc["format"], "plumb-map")
        self.assertEqual(doc["input"], {"score_column": "risk", "scale": "probability"})

    def test_this_version_loads_what_it_writes(self):
        for kind in ("isotonic", "platt", "beta", "temperature", "histogram"):
            path = self.write_doc(json.loads(self.fit(kind)), rehash=False)
            rc, out, err = run("inspect", path)
            self.assertEqual(rc, 0, err)
            self.assertIn(kind, out)
            rc, out, err = run("inspect", "--json", path)
            self.assertEqual(json.loads(out), json.loads(open(path).read()))

    def test_future_and_unknown_versions_are_refused(self):
        doc = json.loads(self.fit("platt"))
        doc["format_version"] = 99
        self.assert_refused(["inspect", self.write_doc(doc)], ARTIFACT, "format version 99", "newer plumb")
        # Version 4 is the multi-class feature's: a binary map there lacks its classes.
        doc["format_version"] = 4
        self.assert_refused(["inspect", self.write_doc(doc)], ARTIFACT, "field 'classes' is missing")
        doc["format_version"] = 0
        self.assert_refused(["inspect", self.write_doc(doc)], ARTIFACT, "unknown format version 0")

    def test_tampering_is_detected(self):
        doc = json.loads(self.fit("platt"))
        doc["parameters"]["a"] = doc["parameters"]["a"] * 1.01
        path = self.write_doc(doc, rehash=False)
        self.assert_refused(["apply", path, self.path("h.csv")], ARTIFACT, "integrity hash")

    def test_truncation_is_detected(self):
        text = self.fit("isotonic")
        for cut in (1, len(text) // 3, len(text) - 3):
            write(self.path("cut.json"), text[:cut])
            self.assert_refused(["inspect", self.path("cut.json")], ARTIFACT, "cut.json")
        write(self.path("empty.json"), "")
        self.assert_refused(["inspect", self.path("empty.json")], ARTIFACT, "empty")

    def test_invalid_content_is_refused_even_with_a_valid_hash(self):
        iso = json.loads(self.fit("isotonic"))
        values = iso["parameters"]["block_value"]
        self.assertGreater(len(values), 2)
        values[1], values[2] = values[2] + 0.2, values[1]  # non-monotone knots
        self.assert_refused(["inspect", self.write_doc(iso)], ARTIFACT, "block_value[2]", "non-decreasing")

        platt = json.loads(self.fit("platt"))
        del platt["parameters"]["b"]
        self.assert_refused(["inspect", self.write_doc(platt)], ARTIFACT, "parameters.b")

        platt = json.loads(self.fit("platt"))
        del platt["provenance"]["rows"]
        self.assert_refused(["inspect", self.write_doc(platt)], ARTIFACT, "provenance.rows")

        platt = json.loads(self.fit("platt"))
        platt["parameters"]["a"] = "-1.0"
        self.assert_refused(["inspect", self.write_doc(platt)], ARTIFACT, "parameters.a")

        # JSON has no NaN; a number too large for a double is what a tampered file can hold.
        text = self.fit("temperature")
        doc = json.loads(text)
        key = next(iter(doc["parameters"]))
        raw = text.replace(json.dumps(doc["parameters"][key]), "1e999", 1)
        write(self.path("huge.json"), raw)
        self.assert_refused(["inspect", self.path("huge.json")], ARTIFACT, "huge.json")

        other = {"format": "something-else", "format_version": 1}
        self.assert_refused(["inspect", self.write_doc(other, rehash=False)], ARTIFACT, "not a plumb map artifact")


if __name__ == "__main__":
    unittest.main()
