"""Separators: with --sep auto a semicolon header is read like a comma or tab
one; a header holding more than one of them is refused, not guessed; a
missing column in a one-column header that holds a separator suggests
--sep; apply suggests --score when the map's column is not in the file."""
import json
import unittest

from plumbtest import PlumbCase, run, write

ROWS = [(0.12, 0), (0.35, 1), (0.2, 0), (0.8, 1), (0.55, 0), (0.66, 1), (0.3, 0), (0.9, 1), (0.45, 1), (0.05, 0)]


def table(sep):
    return "risk" + sep + "late\n" + "".join(f"{s}{sep}{y}\n" for s, y in ROWS)


class Separators(PlumbCase):
    def fit(self, name, *extra):
        out = self.path(name + ".map.json")
        run("fit", "--map", "platt", "--score", "risk", "--label", "late", "--no-timestamp", "-q", *extra,
            self.path(name), "-o", out, check=True)
        with open(out) as f:
            doc = json.load(f)
        return {k: doc[k] for k in ("kind", "input", "parameters", "fit")}

    def test_semicolon_header_is_detected(self):
        write(self.path("comma.csv"), table(","))
        write(self.path("semi.csv"), table(";"))
        self.assertEqual(self.fit("semi.csv"), self.fit("comma.csv"))
        rc, out, err = run("apply", self.path("comma.csv.map.json"), self.path("semi.csv"))
        self.assertEqual(rc, 0, err)
        lines = out.splitlines()
        self.assertEqual(lines[0], "risk;late;risk_calibrated")
        self.assertTrue(all(l.count(";") == 2 for l in lines), out)

    def test_a_quoted_separator_in_a_name_does_not_count(self):
        write(self.path("q.csv"), '"id;x",risk,late\n' + "".join(f"{i},{s},{y}\n" for i, (s, y) in enumerate(ROWS)))
        rc, out, err = run("report", "--score", "risk", "--label", "late", "--bootstrap", "0", "--ascii",
                           self.path("q.csv"))
        self.assertEqual(rc, 0, err)
        self.assertIn("risk", out)

    def test_a_header_with_two_separators_is_refused(self):
        write(self.path("both.csv"), "risk,late;depot\n0.2,1;a\n")
        line = self.assert_refused(["fit", "--map", "platt", "--score", "risk", "--label", "late", self.path("both.csv")],
                                   3, "both.csv:1:", "ambiguous", "--sep comma or --sep semicolon")
        self.assertIn("',' and ';'", line)
        # Named, it is read.
        rc, _, err = run("fit", "--map", "platt", "--score", "risk", "--label", "late;depot", "--sep", "comma",
                         self.path("both.csv"))
        self.assertNotIn("ambiguous", err)

    def test_one_column_holding_a_separator_suggests_sep(self):
        write(self.path("pipe.csv"), table("|"))
        self.assert_refused(["fit", "--map", "platt", "--score", "risk", "--label", "late", self.path("pipe.csv")],
                            3, "no score column", "--sep '|'")
        write(self.path("semi.csv"), table(";"))
        self.assert_refused(["report", "--score", "risk", "--label", "late", "--sep", "tab", self.path("semi.csv")],
                            3, "no score column", "--sep semicolon")
        write(self.path("tabs.csv"), table("\t"))
        self.assert_refused(["tally", "--score", "risk", "--label", "late", "--sep", ",", self.path("tabs.csv")],
                            3, "no score column", "--sep tab")
        # A one-column file without a separator in its name gets no such advice.
        write(self.path("one.csv"), "risk\n0.2\n")
        line = self.assert_refused(["fit", "--map", "platt", "--score", "p", "--label", "late", self.path("one.csv")],
                                   3, "no score column")
        self.assertNotIn("--sep", line)

    def test_apply_suggests_score_when_the_maps_column_is_missing(self):
        write(self.path("comma.csv"), table(","))
        self.fit("comma.csv")
        write(self.path("other.csv"), "p,late\n0.3,1\n")
        line = self.assert_refused(["apply", self.path("comma.csv.map.json"), self.path("other.csv")], 3,
                                   "no score column", "'risk'", "--score NAME")
        self.assertIn("'p', 'late'", line)
        rc, out, err = run("apply", "--score", "p", self.path("comma.csv.map.json"), self.path("other.csv"))
        self.assertEqual(rc, 0, err)
        self.assertEqual(out.splitlines()[0], "p,late,p_calibrated")


if __name__ == "__main__":
    unittest.main()
