"""--help teaches: every option of every subcommand is documented in
docs/cli.md, the help names the maps and exit codes, and the help screens
and usage errors are plumb's own (headings, plain-word hints, one-line
usage errors that start with the command and name the fix)."""
import os
import re
import unittest

from plumbtest import COMMANDS, PLUMB, SOURCE_DIR, help_options, run

KINDS = ("isotonic", "centered_isotonic", "platt", "beta", "temperature", "histogram")
# fit --map also takes the multi-class kinds (with --scores); temperature is both.
FIT_KINDS = KINDS + ("vector", "dirichlet", "one_vs_rest")

# What the argument library prints when left to itself: its section
# headings, its type hints and its sentences. None may reach a user.
STOCK = [
    re.compile(p)
    for p in (
        r"POSITIONALS", r"Positionals:", r"OPTIONS", r"Options:", r"SUBCOMMANDS", r"Subcommands:", r"Usage:",
        r"\bTEXT\b", r"\bUINT\b", r"\bINT\b", r"\bFLOAT\b", r"\bBOOLEAN\b", r":\{", r"\{\w+(,\w+)+\}",
        r"in \[[-\d.e+]+ - [-\d.e+]+\]", r"Run with --help", r"The following arguments? (was|were) not expected",
        r"not in range", r"Could not convert", r"required \w+ missing", r"A subcommand is required",
        r"Print this help message and exit", r"Display program version", r"\bnot in \{", r"\bExcludes\b",
        r"\bNeeds\b", r"REQUIRED",
    )
]

# One wrong command line per command, and a few of each sort: a missing
# required value, an unknown option, a value outside its choices or range,
# a value that is not a number, an extra argument, an option without its value.
BAD_USAGE = [
    ("fit", ["fit", "x.csv"]),
    ("fit", ["fit", "--map", "sigmoid", "--score", "s", "--label", "y", "x.csv"]),
    ("fit", ["fit", "--map"]),
    ("fit", ["fit", "--map", "platt", "--bins", "0", "--score", "s", "--label", "y", "x.csv"]),
    ("fit", ["fit", "--map", "platt", "--scale", "odds", "--score", "s", "--label", "y", "x.csv"]),
    ("fit", ["fit", "--map", "platt", "--frobnicate"]),
    ("fit", ["fit", "--map", "platt", "--score", "s", "--label", "y", "--sep", "ab", "x.csv"]),
    ("apply", ["apply"]),
    ("apply", ["apply", "a.json", "b.csv", "c.csv"]),
    ("apply", ["apply", "--threads", "many", "a.json"]),
    ("apply", ["apply", "--bogus", "a.json"]),
    ("cross-fit", ["cross-fit", "--map", "sigmoid", "--score", "s", "--label", "y", "x.csv"]),
    ("cross-fit", ["cross-fit", "--folds", "1", "--score", "s", "--label", "y", "x.csv"]),
    ("cross-fit", ["cross-fit", "--final", "best", "--score", "s", "--label", "y", "x.csv"]),
    ("report", ["report", "--bins", "x", "--score", "s", "--label", "y", "x.csv"]),
    ("report", ["report", "--binning", "wide", "--score", "s", "--label", "y", "x.csv"]),
    ("report", ["report", "--confidence", "2", "--score", "s", "--label", "y", "x.csv"]),
    ("report", ["report", "--seed"]),
    ("inspect", ["inspect"]),
    ("inspect", ["inspect", "a.json", "b.json"]),
    ("tally", ["tally", "--logit-grid", "0", "--score", "s", "--label", "y", "x.csv"]),
    ("merge", ["merge"]),
    ("merge", ["merge", "-x", "a.json"]),
    ("export", ["export", "--sql", "mysql", "a.json"]),
    ("export", ["export", "a.json"]),
    ("export", ["export", "--sql", "sqlite"]),
]


class Help(unittest.TestCase):
    def test_every_option_is_in_the_reference(self):
        with open(os.path.join(SOURCE_DIR, "docs", "cli.md")) as f:
            reference = f.read()
        for command in COMMANDS:
            options = {o for o in help_options(command) if o.startswith("--")}
            self.assertIn("--score" if command not in ("inspect", "merge") else "--help", options)
            for option in options:
                self.assertIn(option, reference, f"plumb {command} {option} is not in docs/cli.md")

    def test_reference_shows_the_help_as_printed(self):
        import importlib.util
        spec = importlib.util.spec_from_file_location("refresh", os.path.join(SOURCE_DIR, "docs", "refresh_cli_help.py"))
        refresh = importlib.util.module_from_spec(spec)
        spec.loader.exec_module(refresh)
        with open(os.path.join(SOURCE_DIR, "docs", "cli.md")) as f:
            reference = f.read()
        self.assertEqual(reference.count("```\nusage\n") + reference.count("\n\nusage\n  plumb"), len(COMMANDS))
        self.assertEqual(refresh.refreshed(reference, PLUMB), reference,
                         "docs/cli.md differs from --help: run python3 docs/refresh_cli_help.py build/plumb")

    def test_top_level_help(self):
        rc, out, _ = run("--help")
        self.assertEqual(rc, 0)
        for word in (*COMMANDS, "Exit codes"):
            self.assertIn(word, out)
        rc, out, _ = run("fit", "--help")
        for kind in KINDS:
            self.assertIn(kind, out)
        rc, out, _ = run("--version")
        self.assertRegex(out.strip(), r"^plumb \d+\.\d+\.\d+$")

    def test_bare_plumb_prints_the_help_and_exits_with_the_usage_code(self):
        rc, out, err = run()
        self.assertEqual(rc, 2)
        self.assertEqual(err, "")
        self.assertEqual(out, run("--help")[1])

    def test_help_is_ours(self):
        """No stock heading, type hint or sentence in any help screen; our
        headings are there; everything above the footer fits 80 columns."""
        for command in ("",) + COMMANDS:
            args = [command, "--help"] if command else ["--help"]
            rc, out, _ = run(*args)
            self.assertEqual(rc, 0)
            for pattern in STOCK:
                self.assertIsNone(pattern.search(out), f"plumb {command} --help shows {pattern.pattern!r}:\n{out}")
            self.assertIn("\nusage\n  plumb " + (command + " " if command else ""), "\n" + out)
            self.assertIn("\noptions\n", out)
            body = out.split("\noptions\n", 1)[1].split("\n\n", 1)[0]
            for line in body.splitlines():
                self.assertLessEqual(len(line), 80, f"plumb {command} --help: {line!r}")
                self.assertRegex(line, r"^(  -|      \S)", f"plumb {command} --help: {line!r}")

    def test_hints_in_plain_words(self):
        _, out, _ = run("report", "--help")
        self.assertIn("  --binning KIND\n", out)
        self.assertIn("one of: equal_width, equal_mass; default: equal_width", out)
        self.assertIn("a whole number from 1 to 10000; default: 10", out)
        self.assertIn("a number from 0.5 to 0.999; default: 0.95", out)
        self.assertIn("  --score COLUMN\n", out)
        _, out, _ = run("fit", "--help")
        # The list wraps at the help's width: compare with the spacing made plain.
        self.assertIn("one of: " + ", ".join(FIT_KINDS) + "; required", " ".join(out.split()))
        _, out, _ = run("apply", "--help")
        self.assertIn("\nusage\n  plumb apply [options] MAP [FILE]\n", out)

    def test_usage_errors_are_one_line_naming_the_command(self):
        for command, args in BAD_USAGE:
            rc, out, err = run(*args)
            self.assertEqual(rc, 2, f"plumb {' '.join(args)}: {err}")
            self.assertEqual(out, "")
            lines = err.splitlines()
            self.assertEqual(len(lines), 1, f"plumb {' '.join(args)}: {err!r}")
            self.assertTrue(lines[0].startswith(f"plumb {command}: "), lines[0])
            for pattern in STOCK:
                self.assertIsNone(pattern.search(lines[0]), f"plumb {' '.join(args)}: {lines[0]}")

    def test_usage_errors_say_what_to_give(self):
        _, _, err = run("fit", "x.csv")
        self.assertEqual(
            err.strip(),
            "plumb fit: --map is required: give --map KIND, one of: " + ", ".join(FIT_KINDS) + " (see plumb fit --help)")
        _, _, err = run("report", "--bins", "0", "--score", "s", "--label", "y", "x.csv")
        self.assertIn("plumb report: --bins got '0': expected a whole number from 1 to 10000", err)
        _, _, err = run("apply", "a.json", "b.csv", "c.csv")
        self.assertIn("plumb apply: unexpected argument 'c.csv': apply takes MAP [FILE]", err)
        _, _, err = run("apply", "--bogus", "a.json")
        self.assertIn("plumb apply: unknown option '--bogus'", err)

    def test_unknown_command_lists_the_commands(self):
        rc, out, err = run("calibrate", "x.csv")
        self.assertEqual(rc, 2)
        self.assertEqual(len(err.splitlines()), 1, err)
        self.assertIn("unknown command 'calibrate'", err)
        for command in COMMANDS:
            self.assertIn(command, err)
        rc, _, err = run("--frobnicate")
        self.assertEqual(rc, 2)
        self.assertIn("unknown option '--frobnicate'", err)
        self.assertIn(", ".join(COMMANDS), err)

    def test_an_unknown_map_kind_lists_the_kinds(self):
        for command in ("fit", "cross-fit"):
            rc, _, err = run(command, "--map", "sigmoid", "--score", "s", "--label", "y", "x.csv")
            self.assertEqual(rc, 2, err)
            self.assertTrue(err.startswith(f"plumb {command}: "), err)
            self.assertIn("sigmoid", err)
            self.assertIn(", ".join(KINDS), err)


if __name__ == "__main__":
    unittest.main()
