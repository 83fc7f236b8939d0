"""apply --digits N and --replace.

--digits N writes N significant digits as C's printf "%.Ng" does (C11
7.21.6.1; Python's "%.*g" follows the same rule and is the reference
here); without it the shortest text that reads back to the same double is
written. --replace writes the probability in place of the score field and
keeps every other byte of the record; the header keeps the column's name
unless --as gives one."""
import os
import unittest

from plumbtest import PlumbCase, read_rows, run, simulated_holdout, write

USAGE, INPUT = 2, 3


class ApplyDigitsReplace(PlumbCase):
    def setUp(self):
        super().setUp()
        rows = simulated_holdout(3000, seed=61)
        self.fit_csv = self.path("h.csv")
        write(self.fit_csv, "parcel,score,late\n" + "".join(f"P{i},{s},{y}\n" for i, (s, y) in enumerate(rows)))
        self.map = self.path("m.json")
        run("fit", "--map", "platt", "--score", "score", "--label", "late", self.fit_csv, "-o", self.map, "-q",
            check=True)
        self.iso = self.path("iso.json")
        run("fit", "--map", "isotonic", "--score", "score", "--label", "late", self.fit_csv, "-o", self.iso, "-q",
            check=True)

    def shortest(self, path, *extra):
        return [float(r[-1]) for r in read_rows(run("apply", self.map, path, "-q", *extra, check=True)[1], True)[1:]]

    def test_digits_gives_n_significant_digits_as_printf_g(self):
        plain = self.shortest(self.fit_csv)
        for digits in (1, 3, 6, 17):
            out = read_rows(run("apply", self.map, self.fit_csv, "--digits", str(digits), "-q", check=True)[1], True)
            self.assertEqual(out[0][-1], "score_calibrated")
            got = [r[-1] for r in out[1:]]
            self.assertEqual(got, ["%.*g" % (digits, p) for p in plain])
            if digits == 17:  # 17 significant digits identify every double (IEEE 754-2008, 5.12.2)
                self.assertEqual([float(t) for t in got], plain)
        self.assertTrue(any(len(t) > 8 for t in map(repr, plain)))  # the default really is longer

    def test_digits_out_of_range_is_refused(self):
        for bad in ("0", "18", "-1", "x"):
            rc, _, err = run("apply", self.map, self.fit_csv, "--digits", bad, "-q")
            self.assertEqual(rc, USAGE, err)
            self.assertIn("--digits", err)

    def test_replace_writes_the_probability_in_the_score_column(self):
        src = self.path("q.csv")
        # Quoted records go through apply's record path, the others through its block path.
        write(src, 'id,score,"note, free"\n1,0.25,a\n2,"0.75","say ""hi"""\n3,0.5,\n4,1e-3,"x,y"\n')
        want = [float(r[-1]) for r in read_rows(run("apply", self.map, src, "-q", check=True)[1], True)[1:]]
        out = run("apply", self.map, src, "--replace", "-q", check=True)[1]
        lines = out.split("\n")
        self.assertEqual(lines[0], 'id,score,"note, free"')  # the header as it was
        rows = read_rows(out, True)
        self.assertEqual([len(r) for r in rows], [3] * 5)
        self.assertEqual([float(r[1]) for r in rows[1:]], want)
        self.assertEqual([r[2] for r in rows[1:]], ["a", 'say "hi"', "", "x,y"])
        # Every byte outside the score field is kept: the quoted note stays quoted.
        self.assertTrue(lines[2].endswith(',"say ""hi"""'), lines[2])
        self.assertTrue(lines[2].startswith("2,0."), lines[2])
        # --as renames the column in place.
        out = run("apply", self.map, src, "--replace", "--as", "p late", "--digits", "3", "-q", check=True)[1]
        self.assertEqual(out.split("\n")[0], 'id,p late,"note, free"')
        self.assertEqual([r[1] for r in read_rows(out, True)[1:]], ["%.3g" % p for p in want])

    def test_replace_of_the_first_and_last_columns_and_a_missing_score(self):
        src = self.path("ends.csv")
        write(src, "score,id,s2\n0.2,a,0.9\n,b,\n0.6,c,0.1\n")
        out = run("apply", self.map, src, "--replace", "--missing", "empty", "-q", check=True)[1]
        rows = read_rows(out, True)
        self.assertEqual(rows[0], ["score", "id", "s2"])
        self.assertEqual(rows[2], ["", "b", ""])
        self.assertEqual(rows[1][1:], ["a", "0.9"])
        out = run("apply", self.map, src, "--score", "s2", "--replace", "--missing", "empty", "-q", check=True)[1]
        rows = read_rows(out, True)
        self.assertEqual([r[:2] for r in rows], [["score", "id"], ["0.2", "a"], ["", "b"], ["0.6", "c"]])
        self.assertEqual(rows[2][2], "")
        self.assertNotEqual(rows[1][2], "0.9")

    def test_replace_as_a_name_another_column_has_is_refused(self):
        src = self.path("n.csv")
        write(src, "id,score,note\n1,0.5,a\n")
        self.assert_refused(["apply", self.map, src, "--replace", "--as", "note", "-o", self.path("o.csv")], USAGE,
                            "note", "--as", output=self.path("o.csv"))
        # Its own name is no clash.
        self.assertEqual(run("apply", self.map, src, "--replace", "--as", "score", "-q", check=True)[1].split("\n")[0],
                         "id,score,note")

    def test_one_and_two_threads_write_the_same_bytes(self):
        # Several 1 MiB blocks, with quoted records among plain ones so both
        # parsing paths run, and an isotonic map so the text cache is hit.
        big = self.path("big.csv")
        rows = simulated_holdout(120000, seed=3)
        with open(big, "w") as f:
            f.write('id,score,"note"\n')
            for i, (s, _) in enumerate(rows):
                f.write(f'{i},"{s}","n ""{i}"""\n' if i % 5000 < 40 else f"{i},{s},plain text {i}\n")
        self.assertGreater(os.path.getsize(big), 3 << 20)
        for args in (["--digits", "4"], ["--replace"], ["--replace", "--digits", "2"], ["--digits", "17"]):
            outs = []
            for threads in ("1", "2"):
                out = self.path(f"o{threads}.csv")
                run("apply", self.iso, big, "--threads", threads, "-o", out, "-q", *args, check=True)
                with open(out, "rb") as f:
                    outs.append(f.read())
            self.assertEqual(outs[0], outs[1], args)
            self.assertEqual(outs[0].count(b"\n"), 120001)


if __name__ == "__main__":
    unittest.main()
