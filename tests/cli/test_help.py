"""--help teaches: every option of every subcommand is documented in
docs/cli.md, and the help names the maps and exit codes."""
import os
import re
import unittest

from plumbtest import SOURCE_DIR, run


class Help(unittest.TestCase):
    def test_every_option_is_in_the_reference(self):
        with open(os.path.join(SOURCE_DIR, "docs", "cli.md")) as f:
            reference = f.read()
        for command in ("fit", "apply", "cross-fit", "report", "inspect", "tally", "merge"):
            rc, out, err = run(command, "--help")
            self.assertEqual(rc, 0, err)
            options = set(re.findall(r"^\s+(?:-\w,)?(--[\w-]+)", out, re.M))
            self.assertTrue(options, out)
            for option in options:
                self.assertIn(option, reference, f"plumb {command} {option} is not in docs/cli.md")

    def test_top_level_help(self):
        rc, out, _ = run("--help")
        self.assertEqual(rc, 0)
        for word in ("fit", "apply", "cross-fit", "report", "inspect", "tally", "merge", "Exit codes"):
            self.assertIn(word, out)
        rc, out, _ = run("fit", "--help")
        for kind in ("isotonic", "platt", "beta", "temperature", "histogram"):
            self.assertIn(kind, out)
        rc, out, _ = run("--version")
        self.assertRegex(out.strip(), r"^plumb \d+\.\d+\.\d+$")


if __name__ == "__main__":
    unittest.main()
