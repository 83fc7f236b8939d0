"""What plumb fit says about the map it fitted: a histogram whose bin
frequencies dip between neighbours is "not monotone", one that falls as a
whole "decreases" (the sign of the weighted rank correlation of score and
bin frequency; Spearman with mid-ranks for ties); a map that gives exactly 0
or 1 is cautioned with what to do; kinds take their article."""
import unittest

from plumbtest import PlumbCase, run, write


def rows_file(path, groups):
    """groups: (score, positives, negatives) per distinct score."""
    lines = ["s,y"]
    for s, pos, neg in groups:
        lines += [f"{s},1"] * pos + [f"{s},0"] * neg
    write(path, "\n".join(lines) + "\n")


class FitCautions(PlumbCase):
    def fit(self, *args):
        rc, _, err = run("fit", "--score", "s", "--label", "y", "-o", self.path("m.json"), *args)
        self.assertEqual(rc, 0, err)
        return err

    def test_a_histogram_that_dips_between_bins_is_not_said_to_decrease(self):
        # Four bins of 100 rows, frequencies 0.10, 0.30, 0.25, 0.50: rising as a whole.
        rows_file(self.path("dip.csv"), [(0.1, 10, 90), (0.3, 30, 70), (0.5, 25, 75), (0.7, 50, 50)])
        err = self.fit("--map", "histogram", "--bins", "4", self.path("dip.csv"))
        self.assertNotIn("decreases", err)
        self.assertNotIn("oriented", err)
        self.assertIn("the fitted map is not monotone", err)
        self.assertIn("--bins", err)

    def test_a_histogram_that_falls_as_a_whole_is_said_to_decrease(self):
        # 0.60, 0.40, 0.45, 0.20: falling as a whole despite one rise.
        rows_file(self.path("fall.csv"), [(0.1, 60, 40), (0.3, 40, 60), (0.5, 45, 55), (0.7, 20, 80)])
        err = self.fit("--map", "histogram", "--bins", "4", self.path("fall.csv"))
        self.assertIn("the fitted map decreases", err)
        self.assertIn("oriented the other way", err)
        self.assertNotIn("the fitted map is not monotone", err)

    def test_a_platt_map_fitted_on_a_reversed_score_still_decreases(self):
        rows_file(self.path("rev.csv"), [(0.1, 60, 40), (0.3, 40, 60), (0.5, 45, 55), (0.7, 20, 80)])
        err = self.fit("--map", "platt", self.path("rev.csv"))
        self.assertIn("the fitted map decreases", err)

    def test_sixteen_bins_on_sixteen_rows_warn_of_probabilities_of_0_and_1(self):
        rows_file(self.path("s16.csv"), [((i + 0.5) / 16, 1 if i % 3 == 0 else 0, 0 if i % 3 == 0 else 1)
                                         for i in range(16)])
        err = self.fit("--map", "histogram", "--bins", "16", self.path("s16.csv"))
        self.assertIn("exactly 0 or 1", err)
        self.assertIn("infinite log loss", err)
        self.assertIn("fewer --bins", err)
        self.assertIn("--map platt or beta", err)
        self.assertIn("few for a histogram map", err)
        # The map really does give 0 and 1.
        values = self.load_json(self.path("m.json"))["parameters"]["bin_value"]
        self.assertIn(0.0, values)
        self.assertIn(1.0, values)
        # Two bins of 8 rows: frequencies 3/8, 3/8, no caution about 0 or 1.
        err = self.fit("--map", "histogram", "--bins", "2", self.path("s16.csv"))
        self.assertNotIn("exactly 0 or 1", err)

    def test_an_isotonic_map_with_ends_of_one_outcome_is_cautioned(self):
        rows_file(self.path("iso.csv"), [(0.1, 0, 5), (0.5, 2, 3), (0.9, 5, 0)])
        err = self.fit("--map", "isotonic", self.path("iso.csv"))
        self.assertIn("exactly 0 or 1", err)
        self.assertIn("--map platt or beta", err)
        # The article: "an isotonic map", never "a isotonic map".
        self.assertIn("few for an isotonic map", err)
        self.assertNotIn("a isotonic", err)
        err = self.fit("--map", "platt", self.path("iso.csv"))
        self.assertNotIn("exactly 0 or 1", err)


if __name__ == "__main__":
    unittest.main()
