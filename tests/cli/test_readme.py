"""The README's tour is run as written and its shown output compared, so the
documentation cannot drift from the binary.

Every indented code block of README.md that starts with a `$ ` line is part of
the tour. The tour's commands run in order, as one bash script, in a scratch
directory holding links to data/ and examples/ and with the built plumb first on PATH.
After each command, the lines shown below it in the README must appear in
its output (standard output and standard error together), in order:

- a shown line must equal the printed line, except that an ISO 8601 UTC
  time (a map's creation time) matches any such time;
- a shown line `...` (alone, or followed by a parenthesised remark) stands
  for any number of printed lines, so that a long output can be shortened;
- with no `...`, the shown lines are the whole output.

A command line ending in a backslash continues on the next line.
"""
import os
import re
import subprocess
import tempfile
import unittest

from plumbtest import PLUMB, SOURCE_DIR

TIME = re.compile(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ")
ELLIPSIS = re.compile(r"^\s*\.\.\.(\s+\(.*\))?\s*$")


def tour(readme_text):
    """The README's tour: a list of (command, shown lines), in order."""
    steps = []
    block = []

    def flush():
        lines = [line[4:] for line in block]
        while lines and not lines[-1].strip():
            lines.pop()
        if not lines or not lines[0].startswith("$ "):
            return
        i = 0
        while i < len(lines):
            assert lines[i].startswith("$ "), f"README block line is not a command: {lines[i]!r}"
            command = lines[i][2:]
            while command.endswith("\\"):
                i += 1
                command = command[:-1] + lines[i].strip()
            i += 1
            shown = []
            while i < len(lines) and not lines[i].startswith("$ "):
                shown.append(lines[i])
                i += 1
            steps.append((command, shown))

    previous_blank = True
    for line in readme_text.split("\n"):
        if line.startswith("    ") and (block or previous_blank):
            block.append(line)
        elif block and not line.strip():
            block.append("    ")
        else:
            if block:
                flush()
                block = []
        previous_blank = not line.strip()
    if block:
        flush()
    return steps


def matches(shown, printed):
    """Whether the printed lines fit the shown ones (see the module comment);
    returns (True, "") or (False, what differs)."""

    def norm(line):
        return TIME.sub("<time>", line.rstrip())

    def fit(s, p):
        if s == len(shown):
            return p == len(printed)
        if ELLIPSIS.match(shown[s]):
            return any(fit(s + 1, q) for q in range(p, len(printed) + 1))
        return p < len(printed) and norm(shown[s]) == norm(printed[p]) and fit(s + 1, p + 1)

    if fit(0, 0):
        return True, ""
    # Point at the first shown line that is not where it should be.
    p = 0
    for s, line in enumerate(shown):
        if ELLIPSIS.match(line):
            return False, f"after an ellipsis, shown line {s + 2} onwards was not found in order"
        if p >= len(printed):
            return False, f"shown line {s + 1} {line!r} is past the end of the output"
        if norm(line) != norm(printed[p]):
            return False, f"shown line {s + 1}:\n  shown   {line!r}\n  printed {printed[p]!r}"
        p += 1
    return False, f"the output has {len(printed) - p} more lines than shown: {printed[p:p + 3]!r}"


class Readme(unittest.TestCase):
    def test_parser_reads_the_tour(self):
        # The tour parser itself: commands, continuation lines, shown output.
        text = ("Intro\n\n    $ plumb a \\\n        --b\n    out 1\n\n    out 2\n    $ echo x\n\n"
                "Prose\n\n    not a command\n")
        self.assertEqual(tour(text), [("plumb a --b", ["out 1", "", "out 2"]), ("echo x", [])])

    def test_matcher(self):
        self.assertTrue(matches(["a", "b"], ["a", "b"])[0])
        self.assertFalse(matches(["a", "b"], ["a", "c"])[0])
        self.assertFalse(matches(["a"], ["a", "b"])[0])
        self.assertTrue(matches(["a", "...", "d"], ["a", "b", "c", "d"])[0])
        self.assertTrue(matches(["a", "...  (then more)", "d"], ["a", "d"])[0])
        self.assertTrue(matches(["created 2026-12-02T11:47:32Z"], ["created 2027-01-09T01:02:03Z"])[0])
        self.assertFalse(matches(["created 2026-12-02"], ["created 2027-01-09"])[0])

    def test_the_tour_prints_what_the_readme_shows(self):
        with open(os.path.join(SOURCE_DIR, "README.md")) as f:
            steps = tour(f.read())
        self.assertGreaterEqual(len(steps), 8, "the README's tour was not found")
        with tempfile.TemporaryDirectory() as scratch:
            for shared in ("data", "examples"):
                os.symlink(os.path.join(os.path.abspath(SOURCE_DIR), shared), os.path.join(scratch, shared))
            bindir = os.path.join(scratch, ".bin")
            os.mkdir(bindir)
            os.symlink(os.path.abspath(PLUMB), os.path.join(bindir, "plumb"))
            marker = "@@plumb-readme-step@@"
            script = ["exec 2>&1"]
            for command, _ in steps:
                # The marker keeps the exit status of the previous command for `echo $?`.
                script.append(f"__status=$?; echo '{marker}'; (exit $__status)")
                script.append(command)
            env = dict(os.environ, PATH=bindir + os.pathsep + os.environ.get("PATH", ""),
                       NO_COLOR="1", LC_ALL="C.UTF-8")
            proc = subprocess.run(["bash", "-c", "\n".join(script)], cwd=scratch, env=env,
                                  capture_output=True, text=True)
            outputs = proc.stdout.split(marker + "\n")[1:]
            self.assertEqual(len(outputs), len(steps), proc.stdout[-2000:])
            for (command, shown), printed in zip(steps, outputs):
                printed_lines = printed.split("\n")
                if printed_lines and printed_lines[-1] == "":
                    printed_lines.pop()
                while shown and not shown[-1].strip():
                    shown = shown[:-1]
                ok, why = matches(shown, printed_lines)
                with self.subTest(command=command):
                    self.assertTrue(ok, f"$ {command}\n{why}\n--- printed ---\n" + "\n".join(printed_lines[:60]))


if __name__ == "__main__":
    unittest.main()
