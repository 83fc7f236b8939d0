"""plumb report end to end: JSON against its schema, gates and their exit
code, bootstrap determinism, maps applied on the fly, segments against R
(Spiegelhalter 1986 by its formula with stats::pnorm, Holm 1979 by
stats::p.adjust), the SVG as XML, and the text within 80 columns."""
import csv
import json
import os
import subprocess
import unittest
import xml.etree.ElementTree as ET

import jsonschema  # Debian python3-jsonschema, installed by tests/run.sh

from plumbtest import SOURCE_DIR, Lcg, PlumbCase, read_rows, run, sigmoid, write

THRESHOLD = 7


def scored_rows(n, seed=5):
    """An over-confident raw score, segments with different offsets (one far
    off), and labels from the true curve."""
    g = Lcg(seed)
    rows = []
    for i in range(n):
        seg = "abcdefgh"[i % 8]
        z = 4.0 * g.uniform() - 2.5
        shift = 0.9 if seg == "c" else 0.0
        y = 1 if g.uniform() < sigmoid(z + shift) else 0
        rows.append((round(sigmoid(1.8 * z), 6), y, seg))
    return rows


class Report(PlumbCase):
    def setUp(self):
        super().setUp()
        self.rows = scored_rows(6000)
        lines = ["id,risk,missed,depot"] + [f"{i},{s},{y},{d}" for i, (s, y, d) in enumerate(self.rows)]
        lines += [f"x{i},0.5,{i % 2},tiny" for i in range(20)]  # a segment below --min-segment
        write(self.path("scored.csv"), "\n".join(lines) + "\n")
        with open(os.path.join(SOURCE_DIR, "docs", "report.schema.json")) as f:
            self.validator = jsonschema.Draft202012Validator(json.load(f))

    def report(self, *args, code=0):
        rc, out, err = run("report", "--label", "missed", self.path("scored.csv"), *args)
        self.assertEqual(rc, code, err)
        return out, err

    def json_report(self, *args, code=0):
        path = self.path("r.json")
        self.report("--json", path, "-q", *args, code=code)
        with open(path) as f:
            doc = json.load(f)
        self.assertEqual([e.message for e in self.validator.iter_errors(doc)], [])
        return doc

    def test_json_validates_and_counts_rows(self):
        doc = self.json_report("--score", "risk", "--by", "depot", "--bootstrap", "50")
        s = doc["scores"][0]
        self.assertEqual(s["rows"], 6020)
        self.assertEqual(s["positives"], sum(y for _, y, _ in self.rows) + 10)
        self.assertEqual(len(s["reliability_table"]["bins"]), 10)
        self.assertEqual(sum(b["rows"] for b in s["reliability_table"]["bins"]), 6020)
        # The far-off segment comes first and is flagged; the tiny one is last with no figures.
        self.assertEqual(s["segments"][0]["value"], "c")
        self.assertTrue(s["segments"][0]["flagged"])
        self.assertEqual(s["segments"][-1]["value"], "tiny")
        self.assertTrue(s["segments"][-1]["too_few_rows"])
        self.assertNotIn("ece", s["segments"][-1])
        self.assertTrue(any(c.startswith("segment 'c' (observed rate ") and " is miscalibrated in risk (" in c
                            for c in doc["cautions"]), doc["cautions"])
        self.assertLessEqual(s["bootstrap"]["ece"]["lo"], s["bootstrap"]["ece"]["hi"])

    def test_bootstrap_same_seed_same_intervals(self):
        a = self.json_report("--score", "risk", "--bootstrap", "40", "--seed", "9")
        b = self.json_report("--score", "risk", "--bootstrap", "40", "--seed", "9")
        c = self.json_report("--score", "risk", "--bootstrap", "40", "--seed", "10")
        self.assertEqual(a["scores"][0]["bootstrap"], b["scores"][0]["bootstrap"])
        self.assertNotEqual(a["scores"][0]["bootstrap"], c["scores"][0]["bootstrap"])
        one = self.json_report("--score", "risk", "--bootstrap", "40", "--seed", "9", "--threads", "1")
        two = self.json_report("--score", "risk", "--bootstrap", "40", "--seed", "9", "--threads", "2")
        self.assertEqual(one, two)  # every number, the band included
        self.assertEqual(one["scores"][0]["bootstrap"], a["scores"][0]["bootstrap"])
        none = self.json_report("--score", "risk", "--bootstrap", "0")
        self.assertIsNone(none["scores"][0]["bootstrap"])
        self.assertNotIn("band", none["scores"][0]["reliability_table"]["bins"][0])

    def test_rows_counted_while_read_give_the_figures_of_sorted_rows(self):
        # One unweighted --score without --by is counted into cells while the
        # rows are read; with --by the rows are sorted into cells after the
        # read. Both must give the column the same figures, intervals and
        # band, number for number (ties at 0.5 and at 0 included; a forecast
        # written -0 keeps the sorted path, as the counted cells hold +0).
        for extra in ([], ["-0,0,tiny", "0,1,tiny", "-0,1,tiny"]):
            if extra:
                with open(self.path("scored.csv"), "a") as f:
                    f.write("\n".join(f"z{i},{line}" for i, line in enumerate(extra)) + "\n")
            for args in (["--bootstrap", "40", "--seed", "3"],
                         ["--binning", "equal_mass", "--bins", "7", "--groups", "9", "--bootstrap", "30"]):
                counted = self.json_report("--score", "risk", *args)["scores"][0]
                sorted_rows = self.json_report("--score", "risk", "--by", "depot", *args)["scores"][0]
                self.assertEqual(counted.pop("segments"), [])
                sorted_rows.pop("segments")
                self.assertEqual(counted, sorted_rows, (extra, args))

    def test_gates_fail_exactly_when_crossed(self):
        base = self.json_report("--score", "risk", "--bootstrap", "0")
        ece = base["scores"][0]["calibration_error"]["equal_width"]["ece"]
        mcb = base["scores"][0]["corp"]["brier"]["mcb"]
        passed = self.json_report("--score", "risk", "--bootstrap", "0", "--max", f"ece={ece * 1.001}",
                                  "--max", f"mcb={mcb * 1.001}")
        self.assertFalse(passed["any_gate_exceeded"])
        failed = self.json_report("--score", "risk", "--bootstrap", "0", "--max", f"ece={ece * 1.001}",
                                  "--max", f"mcb={mcb * 0.999}", code=THRESHOLD)
        self.assertTrue(failed["any_gate_exceeded"])
        self.assertEqual([g["exceeded"] for g in failed["gates"]], [False, True])
        # The refusal says which gate, and every output was still written.
        svg = self.path("g.svg")
        rc, out, err = run("report", "--label", "missed", "--score", "risk", "--bootstrap", "0", "--max",
                           f"risk:mcb={mcb * 0.5}", "--svg", svg, self.path("scored.csv"))
        self.assertEqual(rc, THRESHOLD)
        self.assertIn("mcb", err)
        self.assertTrue(os.path.exists(svg))
        self.assertTrue(out.strip())
        rc, _, err = run("report", "--label", "missed", "--score", "risk", "--max", "sharpness=1",
                         self.path("scored.csv"))
        self.assertEqual(rc, 2)
        self.assertIn("sharpness", err)

    def test_map_on_the_fly_equals_applying_first(self):
        fit_rows = ["risk,missed"] + [f"{s},{y}" for s, y, _ in self.rows[:3000]]
        write(self.path("fit.csv"), "\n".join(fit_rows) + "\n")
        art = self.path("late.map.json")
        run("fit", "--map", "platt", "--score", "risk", "--label", "missed", self.path("fit.csv"), "-o", art,
            check=True)
        applied = self.path("applied.csv")
        run("apply", art, self.path("scored.csv"), "-o", applied, "--as", "risk_cal", check=True)
        on_the_fly = self.json_report("--score", "risk", "--map", art, "--bootstrap", "0")
        rc, _, err = run("report", "--label", "missed", "--score", "risk", "--score", "risk_cal", "--bootstrap", "0",
                         "--json", self.path("r2.json"), "-q", applied)
        self.assertEqual(rc, 0, err)
        with open(self.path("r2.json")) as f:
            first = json.load(f)
        # Format 2: the source column, the map in its own member, and the
        # display name the text and the gates use.
        self.assertEqual(on_the_fly["format_version"], 2)
        self.assertEqual(on_the_fly["scores"][1]["column"], "risk")
        self.assertEqual(on_the_fly["scores"][1]["map"], {"file": art, "kind": "platt"})
        self.assertEqual(on_the_fly["scores"][1]["name"], "risk via late.map.json")
        self.assertEqual(on_the_fly["scores"][0]["column"], "risk")
        self.assertIsNone(on_the_fly["scores"][0]["map"])
        for key in ("brier", "log_loss", "auc"):
            self.assertAlmostEqual(on_the_fly["scores"][1][key], first["scores"][1][key], delta=1e-15)
        # Recalibration kept the ranking (Platt is strictly increasing here).
        self.assertAlmostEqual(on_the_fly["scores"][1]["auc"], on_the_fly["scores"][0]["auc"], delta=1e-12)
        self.assertLess(on_the_fly["scores"][1]["corp"]["log_loss"]["mcb"],
                        on_the_fly["scores"][0]["corp"]["log_loss"]["mcb"])

    def test_segments_match_r(self):
        doc = self.json_report("--score", "risk", "--by", "depot", "--bootstrap", "0")
        r_out = self.path("r_segments.csv")
        script = (
            # Spiegelhalter (1986): z = sum (y - p)(1 - 2p) / sqrt(sum (1 - 2p)^2 p (1 - p)),
            # two-sided p from stats::pnorm; Holm (1979) by stats::p.adjust.
            f"d <- read.csv('{self.path('scored.csv')}', colClasses = c(depot = 'character'));"
            "s <- split(d, d$depot); s <- s[sapply(s, nrow) >= 100];"
            "z <- sapply(s, function(g) with(g, sum((missed - risk) * (1 - 2 * risk)) /"
            "  sqrt(sum((1 - 2 * risk)^2 * risk * (1 - risk)))));"
            "p <- 2 * pnorm(-abs(z));"
            f"write.csv(data.frame(depot = names(s), z = z, p = p, holm = p.adjust(p, 'holm')), '{r_out}',"
            " row.names = FALSE)")
        subprocess.run(["Rscript", "--vanilla", "-e", script], check=True, capture_output=True)
        with open(r_out) as f:
            ref = {r["depot"]: r for r in csv.DictReader(f)}
        ours = {g["value"]: g for g in doc["scores"][0]["segments"] if not g["too_few_rows"]}
        self.assertEqual(set(ours), set(ref))
        for depot, g in ours.items():
            self.assertAlmostEqual(g["spiegelhalter_z"], float(ref[depot]["z"]), delta=1e-9)
            self.assertAlmostEqual(g["p_value"], float(ref[depot]["p"]), delta=1e-9)
            self.assertAlmostEqual(g["p_adjusted"], float(ref[depot]["holm"]), delta=1e-9)
            self.assertEqual(g["flagged"], float(ref[depot]["holm"]) < 0.05)

    def test_svg_is_xml_with_one_diagram_per_column(self):
        svg = self.path("r.svg")
        self.report("--score", "risk", "--score", "2", "--svg", svg, "-q")
        root = ET.parse(svg).getroot()
        self.assertTrue(root.tag.endswith("svg"))
        text = "".join(root.itertext())
        self.assertEqual(text.count("forecast probability"), 2)
        self.assertEqual(text.count("observed frequency"), 2)

    def test_markdown_is_written(self):
        md = self.path("r.md")
        self.report("--score", "risk", "--by", "depot", "--markdown", md, "-q")
        with open(md) as f:
            text = f.read()
        self.assertIn("|", text)
        self.assertIn("too few rows", text)

    def test_text_fits_80_columns_in_unicode_and_ascii(self):
        for extra in ((), ("--ascii",)):
            out, _ = self.report("--score", "risk", "--score", "risk", "--by", "depot", "--max", "ece=0.5", *extra)
            self.assertIn("forecast probability", out)
            self.assertNotIn("\x1b", out)  # not a terminal: no colour
            for line in out.splitlines():
                self.assertLessEqual(len(line), 80, line)
            if extra:
                self.assertTrue(out.isascii())

    def test_no_line_of_the_text_is_a_title_between_rules(self):
        # Our section titles are "\u258c title" (Unicode) or "[title]" (ASCII),
        # never a title between two runs of box dashes or hyphens.
        import re
        old_rule = re.compile(r"^\s*(\u2500\u2500|--) .*\S (\u2500|-){3,}\s*$")
        for extra in ((), ("--ascii",)):
            out, _ = self.report("--score", "risk", "--by", "depot", "--max", "ece=0.5", *extra)
            for line in out.splitlines():
                self.assertIsNone(old_rule.match(line), line)
            titles = [l for l in out.splitlines() if l.startswith("[" if extra else "\u258c ")]
            self.assertIn("[headline figures]" if extra else "\u258c headline figures", titles)
            self.assertTrue(any("segments by depot" in t for t in titles), titles)

    def test_many_segments_are_capped_in_text_and_markdown_and_kept_in_json(self):
        # 300 segments: 'big' and 'off' with enough rows, 'off' far off
        # (flagged), and 298 one-row segments that have too few rows.
        g = Lcg(11)
        lines = ["risk,missed,shop"]
        for i in range(4000):
            z = 4.0 * g.uniform() - 2.0
            shop = "off" if i % 2 else "big"
            shift = 1.5 if shop == "off" else 0.0
            lines.append(f"{round(sigmoid(z), 6)},{1 if g.uniform() < sigmoid(z + shift) else 0},{shop}")
        for i in range(298):
            lines.append(f"0.5,{i % 2},s{i:03d}")
        write(self.path("many.csv"), "\n".join(lines) + "\n")
        md = self.path("many.md")
        js = self.path("many.json")
        rc, out, err = run("report", "--label", "missed", "--score", "risk", "--score", "risk", "--by", "shop",
                           "--bootstrap", "0", "--markdown", md, "--json", js, self.path("many.csv"))
        self.assertEqual(rc, 0, err)
        with open(js) as f:
            doc = json.load(f)
        self.assertEqual([e.message for e in self.validator.iter_errors(doc)], [])
        self.assertEqual(len(doc["scores"][0]["segments"]), 300)  # JSON keeps all
        flagged = [s["value"] for s in doc["scores"][0]["segments"] if s.get("flagged")]
        self.assertIn("off", flagged)
        # Text: at most 20 segment rows per column (the default cap), the
        # flagged one among them, and the count of those left out.
        too_few = [l for l in out.splitlines() if "too few rows" in l]
        self.assertLessEqual(len(too_few), 2 * 20)
        self.assertEqual(out.count("280 smaller segments not shown"), 2)
        self.assertEqual(sum(1 for l in out.splitlines() if l.lstrip().startswith("! off")), 2)
        with open(md) as f:
            text = f.read()
        self.assertLessEqual(text.count("too few rows"), 2 * 20)
        self.assertEqual(text.count("280 smaller segments not shown"), 2)
        # One caution per flagged segment, naming both columns.
        cautions = [c for c in doc["cautions"] if "segment 'off'" in c]
        self.assertEqual(len(cautions), 1, doc["cautions"])
        self.assertEqual(cautions[0].count("risk ("), 2)

    def test_refusals(self):
        rc, _, err = run("report", "--label", "missed", self.path("scored.csv"))
        self.assertEqual(rc, 2)
        self.assertIn("--score", err)
        rc, _, err = run("report", "--label", "missed", "--score", "id", self.path("scored.csv"))
        self.assertEqual(rc, 3)
        self.assertIn("column 'id'", err)


if __name__ == "__main__":
    unittest.main()
