"""One name per concept across options, the report JSON, the artifact and
the cautions (issue 11 item 15): an option's value is the word the JSON
and artifact record, the older option spellings are still taken but not
shown in help, and a caution prints a p-value by the same rule as the text
report (4 decimals down to 1e-4, "%.1e" below, "<1e-300" at 0)."""
import json
import unittest
import re

from plumbtest import Lcg, PlumbCase, run, sigmoid, simulated_holdout, write


def p_value_rule(p):
    """The report's p-value rule as stated in docs/report-format.md and
    plumb/number_text.hpp, written out independently with C-like printf."""
    if p >= 1e-4:
        return f"{p:.4f}"
    if p > 0:
        return f"{p:.1e}"
    return "<1e-300"


class OneName(PlumbCase):
    def setUp(self):
        super().setUp()
        rows = simulated_holdout(3000)
        write(self.path("holdout.csv"),
              "risk,missed\n" + "".join(f"{s},{y}\n" for s, y in rows))

    def report_json(self, *args):
        out = self.path("r.json")
        run("report", "--score", "risk", "--label", "missed", "--bootstrap", "0", "-q", "--json", out,
            self.path("holdout.csv"), *args, check=True)
        with open(out) as f:
            return json.load(f)

    def test_the_binning_option_takes_the_json_words(self):
        for value in ("equal_width", "equal_mass"):
            doc = self.report_json("--binning", value)
            self.assertEqual(doc["options"]["binning"], value)
            self.assertEqual(doc["scores"][0]["reliability_table"]["binning"], value)

    def test_the_older_binning_words_still_work_and_are_not_shown(self):
        self.assertEqual(self.report_json("--binning", "mass")["options"]["binning"], "equal_mass")
        self.assertEqual(self.report_json("--binning", "width")["options"]["binning"], "equal_width")
        self.assertEqual(self.report_json()["options"]["binning"], "equal_width")
        _, out, _ = run("report", "--help", check=True)
        self.assertIn("one of: equal_width, equal_mass; default: equal_width", out)
        self.assertNotIn("width, mass", out)

    def test_a_bad_binning_names_the_json_words(self):
        self.assert_refused(["report", "--score", "risk", "--label", "missed", "--binning", "quantile",
                             self.path("holdout.csv")], 2, "--binning", "equal_width", "equal_mass")

    def test_text_and_markdown_name_the_binning_alike(self):
        md = self.path("r.md")
        _, text, _ = run("report", "--score", "risk", "--label", "missed", "--bootstrap", "0", "--markdown", md,
                         self.path("holdout.csv"), check=True)
        with open(md) as f:
            markdown = f.read()
        for name in ("equal-width", "equal-mass"):
            self.assertIn(f"ECE {name}, 10 bins", text)
            self.assertIn(f"ECE, {name}, 10 bins", markdown)
        self.assertIn("MCE equal-width", text)
        self.assertNotIn("ECE width", text)

    def fit(self, *extra):
        out = self.path("map.json")
        run("fit", "--map", "isotonic", "--score", "risk", "--label", "missed", self.path("holdout.csv"), "-o", out,
            *extra, check=True)
        with open(out) as f:
            return json.load(f)

    def test_the_artifact_records_the_option_name_and_value(self):
        for value in ("linear", "step"):
            art = self.fit("--between-blocks", value)
            self.assertEqual(art["fit"]["options"], {"between_blocks": value})
            self.assertEqual(art["parameters"]["between_blocks"], value)
            # The older spelling is still taken, to the same effect.
            old = self.fit("--between", value)
            self.assertEqual(old["parameters"], art["parameters"])
        self.assertEqual(self.fit()["fit"]["options"], {"between_blocks": "linear"})

    def test_help_names_between_blocks_alone(self):
        for command in ("fit", "cross-fit"):
            _, out, _ = run(command, "--help", check=True)
            self.assertIn("--between-blocks", out)
            self.assertIsNone(re.search(r"--between\b(?!-)", out), command)


class CautionPValues(PlumbCase):
    def test_a_segment_caution_prints_p_by_the_report_rule(self):
        # Segments with different offsets, one far off (flagged with a p below
        # 1e-4, scientific) and one a little off (a p between 1e-4 and 0.05,
        # 4 decimals: the case a 2-significant-digit format got wrong).
        g = Lcg(11)
        lines = ["risk,missed,depot"]
        for i in range(8000):
            seg = "abcd"[i % 4]
            z = 4.0 * g.uniform() - 2.0
            shift = {"a": 0.0, "b": 0.9, "c": 0.0, "d": 1.2}[seg]
            y = 1 if g.uniform() < sigmoid(z + shift) else 0
            lines.append(f"{round(sigmoid(z), 6)},{y},{seg}")
        write(self.path("s.csv"), "\n".join(lines) + "\n")
        out = self.path("r.json")
        run("report", "--score", "risk", "--label", "missed", "--by", "depot", "--bootstrap", "0", "-q",
            "--json", out, self.path("s.csv"), check=True)
        with open(out) as f:
            doc = json.load(f)
        flagged = [s for s in doc["scores"][0]["segments"] if s.get("flagged")]
        self.assertEqual(sorted(s["value"] for s in flagged), ["b", "d"])
        self.assertTrue(any(1e-4 <= s["p_adjusted"] < 0.05 for s in flagged), flagged)
        self.assertTrue(any(0 < s["p_adjusted"] < 1e-4 for s in flagged), flagged)
        for s in flagged:
            caution = next(c for c in doc["cautions"] if c.startswith(f"segment '{s['value']}' "))
            m = re.search(r"Holm-adjusted p ([^)]+)\)", caution)
            self.assertIsNotNone(m, caution)
            self.assertEqual(m.group(1), p_value_rule(s["p_adjusted"]), caution)
            self.assertIn(f"Spiegelhalter Z {s['spiegelhalter_z']:.2f},", caution)


class OlderBetweenRefused(PlumbCase):
    def setUp(self):
        super().setUp()
        write(self.path("h.csv"), "risk,missed\n0.2,0\n0.4,1\n0.6,1\n0.3,0\n")

    def test_a_bad_or_doubled_older_spelling_is_refused_naming_the_shown_option(self):
        base = ["fit", "--map", "isotonic", "--score", "risk", "--label", "missed", self.path("h.csv"),
                "-o", self.path("m.json")]
        self.assert_refused(base + ["--between", "stp"], 2, "--between-blocks", "'stp'", "linear or step",
                            output=self.path("m.json"))
        self.assert_refused(base + ["--between", "step", "--between-blocks", "linear"], 2, "--between-blocks",
                            "twice", output=self.path("m.json"))


if __name__ == "__main__":
    unittest.main()
