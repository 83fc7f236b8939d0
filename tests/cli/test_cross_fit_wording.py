"""What cross-fit and inspect say: the "chosen:" sentence in each of its
cases (a simpler map within one standard error of the best, the best with
simpler ones further off, the best that is also the simplest, a single
candidate), the small-data caution for isotonic, and inspect's parameter
table reading each range lo before hi."""
import unittest

from plumbtest import PlumbCase, run, write
from test_cross_fit import sigmoid_distortion, simulate, staircase


class Chosen(PlumbCase):
    def cross_fit(self, rows, *args, weight=None):
        lines = ["risk,missed" + (",w" if weight else "")]
        lines += [f"{s},{y}" + (f",{weight}" if weight else "") for s, y, _, _ in rows]
        write(self.path("h.csv"), "\n".join(lines) + "\n")
        ev = self.path("ev.json")
        rc, _, err = run("cross-fit", "--score", "risk", "--label", "missed", "--json", ev, "-o",
                         self.path("m.json"), self.path("h.csv"), *(["--weight", "w"] if weight else []), *args)
        self.assertEqual(rc, 0, err)
        evidence = self.load_json(ev)
        return evidence, {c["kind"]: c for c in evidence["candidates"]}, err

    def chosen_line(self, err):
        lines = [l for l in err.splitlines() if l.startswith("  chosen: ")]
        self.assertEqual(len(lines), 1, err)
        return lines[0]

    def test_a_simpler_map_within_one_standard_error(self):
        ev, c, err = self.cross_fit(simulate(3000, 1, sigmoid_distortion), "--map", "platt,beta")
        self.assertEqual(ev["chosen"], "platt")
        self.assertLess(c["beta"]["log_loss"], c["platt"]["log_loss"])  # the case this test is about
        d, se = c["platt"]["log_loss_minus_best"], c["platt"]["log_loss_minus_best_se"]
        sentence = (f"chosen: platt. beta has the lowest out-of-fold log loss; platt is simpler and within one "
                    f"standard error of it ({d:+.6f}, se {se:.6f}).")
        self.assertEqual(self.chosen_line(err), "  " + sentence)
        rc, out, err = run("inspect", self.path("m.json"))
        self.assertEqual(rc, 0, err)
        self.assertIn("  chosen         " + sentence[len("chosen: "):] + "\n", out)

    def test_the_best_with_simpler_maps_further_off(self):
        ev, c, err = self.cross_fit(simulate(500, 2, staircase), "--map", "platt,histogram")
        self.assertEqual(ev["chosen"], "histogram")
        self.assertGreater(c["platt"]["log_loss_minus_best"], c["platt"]["log_loss_minus_best_se"])
        self.assertEqual(self.chosen_line(err),
                         f"  chosen: histogram. histogram has the lowest out-of-fold log loss "
                         f"({c['histogram']['log_loss']:.6f}); no simpler candidate comes within one standard "
                         f"error of it.")

    def test_the_best_that_is_also_the_simplest(self):
        ev, c, err = self.cross_fit(simulate(400, 1, sigmoid_distortion), "--map", "platt,beta")
        self.assertEqual(ev["chosen"], "platt")
        self.assertLessEqual(c["platt"]["log_loss"], c["beta"]["log_loss"])
        self.assertEqual(self.chosen_line(err),
                         f"  chosen: platt. platt has the lowest out-of-fold log loss ({c['platt']['log_loss']:.6f}) "
                         f"and is the simplest candidate.")

    def test_a_single_candidate(self):
        _, c, err = self.cross_fit(simulate(400, 1, sigmoid_distortion), "--map", "beta")
        self.assertEqual(self.chosen_line(err),
                         f"  chosen: beta. beta is the only candidate (out-of-fold log loss "
                         f"{c['beta']['log_loss']:.6f}).")

    def test_isotonic_on_little_weight_is_cautioned(self):
        # 20,000 rows of weight 0.04: 800 in all, below the 1,000 of common practice.
        ev, _, err = self.cross_fit(simulate(20000, 8, staircase), "--map", "isotonic,platt", weight="0.04")
        self.assertEqual(ev["chosen"], "isotonic")
        self.assertIn("plumb cross-fit: caution: isotonic was chosen on a total weight of only 800; a nonparametric "
                      "map usually needs about 1,000 rows or more (common practice), and its out-of-fold lead may "
                      "not hold on new rows.\n", err)
        _, _, err = self.cross_fit(simulate(20000, 8, staircase), "--map", "isotonic,platt")
        self.assertNotIn("caution", err)


class InspectParameters(PlumbCase):
    def test_ranges_read_lo_then_hi(self):
        g_rows = simulate(600, 4, staircase)
        write(self.path("h.csv"), "\n".join(["risk,missed"] + [f"{s},{y}" for s, y, _, _ in g_rows]) + "\n")
        for kind, prefix in (("isotonic", "block"), ("histogram", "bin")):
            art = self.path(kind + ".json")
            run("fit", "-q", "--map", kind, "--score", "risk", "--label", "missed", self.path("h.csv"), "-o", art,
                check=True)
            rc, out, err = run("inspect", art)
            self.assertEqual(rc, 0, err)
            header = next(l for l in out.splitlines() if l.strip().startswith("#"))
            self.assertEqual(header.split(), ["#", prefix + "_score_lo", prefix + "_score_hi", prefix + "_value",
                                              prefix + "_weight"])
            # Each shown row's lo is at most its hi: the columns are not swapped.
            rows = [l.split() for l in out.split(header)[1].splitlines() if l.strip() and l.split()[0].isdigit()]
            self.assertTrue(rows)
            for r in rows:
                self.assertLessEqual(float(r[1]), float(r[2]))
            # The artifact's bytes keep their sorted keys.
            with open(art) as f:
                text = f.read()
            self.assertLess(text.index(f'"{prefix}_score_hi"'), text.index(f'"{prefix}_score_lo"'))


if __name__ == "__main__":
    unittest.main()
