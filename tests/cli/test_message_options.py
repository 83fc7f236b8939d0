"""Every hint names an option that exists on the command that prints it.

The test reads the C++ sources, takes every string literal that spells an
option (--name), attributes it to the commands whose code paths can print it
(the table below), and checks that the option appears in that command's
--help. A literal that names another command ("see plumb fit --help",
"plumb fit --map KIND --tally FILE") is checked against that command
instead, from the mention to the end of its clause."""
import os
import re
import unittest

from plumbtest import COMMANDS, SOURCE_DIR, PlumbCase, help_options, run, write

READERS = ("fit", "apply", "cross-fit", "report", "tally", "adjust", "drift")  # commands that read CSV rows
LABELLED = ("fit", "cross-fit", "report", "tally", "drift")           # commands that read labelled rows

# Which commands can print the messages of each source file. A file whose
# functions reach different commands is split by function ("FILE::function",
# the name of a top-level definition); "" is the top-level app (plumb --help).
REACH = {
    "src/cli/main.cpp": ("",),
    "src/cli/help.cpp": ("",) + COMMANDS,  # the formatter: "see plumb COMMAND --help"
    "src/cli/fit.cpp": ("fit",),
    "src/cli/apply.cpp": ("apply",),
    "src/cli/cross_fit.cpp": ("cross-fit",),
    "src/cli/report.cpp": ("report",),
    "src/cli/inspect.cpp": ("inspect",),
    "src/cli/tally.cpp": ("tally",),
    "src/cli/merge.cpp": ("merge",),
    "src/cli/adjust.cpp": ("adjust",),
    "src/cli/export.cpp": ("export",),
    "src/cli/drift.cpp": ("drift",),
    "src/io/score_cells.cpp": ("drift",),
    "src/io/drift_render.cpp": ("drift",),
    "src/core/drift.cpp": ("drift",),
    "src/cli/common.cpp::parse_gate": ("report", "drift"),
    "src/cli/common.cpp::bound_option": ("report", "drift"),
    "src/cli/common.cpp::failed_gates_line": ("report", "drift"),
    "src/io/sql_export.cpp": ("export",),
    "include/plumb/io/sql_export.hpp": ("export",),
    "src/cli/common.cpp::add_separator_option": READERS,
    "src/cli/common.cpp::add_quiet_option": READERS,
    "src/cli/common.cpp::add_input_options": ("fit", "cross-fit", "tally"),
    "src/cli/common.cpp::add_map_options": ("fit", "cross-fit"),
    "src/cli/common.cpp::between_given": ("fit", "cross-fit"),
    "src/cli/common.cpp::parse_separator": READERS,
    "src/cli/common.cpp::parse_scale_option": ("fit", "cross-fit", "tally"),
    "src/cli/common.cpp::scale_option_hint": ("fit", "cross-fit", "tally"),
    "src/cli/common.cpp::label_rule": LABELLED,
    "src/cli/common.cpp::add_label_value_options": LABELLED,
    "src/cli/common.cpp::add_missing_option": READERS,
    "src/io/labelled_input.cpp::read_labelled": LABELLED,
    "src/io/labelled_input.cpp::score_problem": READERS,
    "src/io/csv.cpp": READERS,
    "src/io/csv_errors.hpp": READERS,
    "src/io/apply_stream.cpp": ("apply",),
    "include/plumb/io/apply_stream.hpp": ("apply",),
    "src/io/report_text.cpp": ("report",),
    "src/io/class_report_text.cpp": ("report",),
    "src/io/text_trend.cpp": ("report",),
    "src/io/report_svg.cpp": ("report",),
    "src/io/report_html.cpp": ("report",),
    # The history's refusals name --torn-history: every command that appends
    # to a history (report, drift) must offer it.
    "src/io/history.cpp": ("report", "drift"),
    "include/plumb/io/history.hpp": ("report", "drift"),
    "src/cli/common.cpp::read_history_option": ("report", "drift"),
    "src/cli/common.cpp::add_history_options": ("report", "drift"),
    "src/cli/common.cpp::append_history_option": ("report", "drift"),
    "src/core/report.cpp": ("report",),
    "src/core/cross_fit.cpp": ("cross-fit",),
    "src/core/folds.cpp": ("cross-fit",),
    "src/core/map_registry.cpp": ("fit", "cross-fit"),
    "src/core/maps/fold_average_map.cpp": ("fit", "cross-fit"),
    "src/core/maps/venn_abers_map.cpp": ("fit", "cross-fit"),
    # Multi-class (--scores): the reader and maps reach fit and cross-fit, the
    # stream apply; the kinds' help lines are fit's alone.
    "src/cli/common.cpp::add_class_options": ("fit", "cross-fit", "report"),
    "src/cli/common.cpp::parse_class_scale_option": ("fit", "cross-fit", "report"),
    "src/cli/common.cpp::class_columns": ("fit", "cross-fit"),
    "src/io/class_input.cpp": ("fit", "cross-fit", "report"),
    "include/plumb/io/class_input.hpp": ("fit", "cross-fit", "report"),
    "src/io/class_apply_stream.cpp": ("apply",),
    "include/plumb/io/class_apply_stream.hpp": ("apply",),
    "src/core/class_cross_fit.cpp": ("cross-fit",),
    "src/core/class_map.cpp::load_scaling": ("fit",),
    "src/core/class_map.cpp::fit_class_map": ("fit", "cross-fit"),
    "src/core/maps/one_vs_rest_map.cpp": ("fit", "cross-fit"),
    "src/core/class_report.cpp": ("report",),
}

# Older spellings still taken but hidden from help: the literal that declares
# one (the whole literal is the name) is no message; any other mention is.
HIDDEN_DECLARATIONS = {("src/cli/common.cpp", "add_map_options", "--between")}

OPTION = re.compile(r"(?<![\w-])(--[a-z][a-z0-9-]*)")
MENTION = re.compile(r"\bplumb (" + "|".join(re.escape(c) for c in COMMANDS) + r")\b")


def literals_by_function(text):
    """(function, literal) for every string literal outside comments; the
    function is the last top-level definition line (column 0, ending in '{')
    before it, by its name."""
    out = []
    function = ""
    i, n = 0, len(text)
    line_start = True
    last_end = None
    while i < n:
        c = text[i]
        if line_start and c not in " \t\n#}/":
            end = text.find("\n", i)
            line = text[i:end if end >= 0 else n]
            m = re.match(r"[\w:<>,&* ]*?([\w:~]+)\s*\(", line)
            if m and not line.startswith(("namespace", "struct", "class", "using", "enum")):
                function = m.group(1).split("::")[-1]
        line_start = False
        if text.startswith("//", i):
            i = text.find("\n", i)
            i = n if i < 0 else i
            continue
        if text.startswith("/*", i):
            i = text.find("*/", i + 2) + 2
            continue
        if c == "'":
            i += 3 if text[i + 1] != "\\" else 4
            continue
        if c == '"':
            j = i + 1
            value = []
            while j < n and text[j] != '"':
                if text[j] == "\\":
                    j += 1
                    value.append({"n": "\n", "t": "\t"}.get(text[j], text[j]))
                else:
                    value.append(text[j])
                j += 1
            # Adjacent literals are one string to the compiler.
            if out and last_end is not None and text[last_end:i].strip() == "":
                out[-1] = (out[-1][0], out[-1][1] + "".join(value))
            else:
                out.append((function, "".join(value)))
            i = j + 1
            last_end = i
            continue
        if c == "\n":
            line_start = True
        i += 1
    return out


def reach_of(path, function):
    return REACH.get(f"{path}::{function}", REACH.get(path))


class MessageOptions(unittest.TestCase):
    def test_every_option_in_a_message_exists_on_its_command(self):
        helps = {"": help_options_top()}
        for c in COMMANDS:
            helps[c] = help_options(c)
        problems = []
        for root in ("src", "include"):
            for directory, _, files in os.walk(os.path.join(SOURCE_DIR, root)):
                for name in sorted(files):
                    if not name.endswith((".cpp", ".hpp")):
                        continue
                    full = os.path.join(directory, name)
                    path = os.path.relpath(full, SOURCE_DIR).replace(os.sep, "/")
                    with open(full, encoding="utf-8") as f:
                        text = f.read()
                    for function, literal in literals_by_function(text):
                        if (path, function, literal) in HIDDEN_DECLARATIONS:
                            continue
                        mentions = list(MENTION.finditer(literal))
                        for m in OPTION.finditer(literal):
                            # A mention reaches to the end of its clause.
                            before = [x for x in mentions if x.end() <= m.start()
                                      and not re.search(r"[;,.](\s|$)|[()\n]", literal[x.end():m.start()])]
                            if before:
                                commands = (before[-1].group(1),)
                            else:
                                commands = reach_of(path, function)
                                if commands is None:
                                    problems.append(f"{path} ({function}): '{literal}' names {m.group(1)}, "
                                                    "but the file is not in the table of this test")
                                    continue
                            for c in commands:
                                if m.group(1) not in helps[c]:
                                    problems.append(f"{path} ({function}): '{literal}' names {m.group(1)}, "
                                                    f"which 'plumb {c}' does not have")
        self.assertEqual(problems, [], "\n".join(problems))

    def test_the_source_reader_finds_literals_and_functions(self):
        found = literals_by_function('int f(int a) {\n  // "--no"\n  g("x --yes", \'"\');\n}\n'
                                     'void h(int a,\n       int b) {\n  k("--z"\n    " and --w");\n}\n')
        self.assertEqual(found, [("f", "x --yes"), ("h", "--z and --w")])


class OutOfRangeHint(PlumbCase):
    """A probability score outside [0, 1]: the advice names options of the
    command that refused it (report and apply have no --scale)."""

    def test_each_command_advises_with_its_own_options(self):
        write(self.path("ok.csv"), "s,y\n0.2,1\n0.6,0\n0.4,1\n0.7,0\n")
        write(self.path("bad.csv"), "s,y\n0.2,1\n1.5,0\n")
        run("fit", "--map", "platt", "--score", "s", "--label", "y", self.path("ok.csv"), "-o", self.path("m.json"),
            check=True)
        rc, _, err = run("report", "--score", "s", "--label", "y", self.path("bad.csv"))
        self.assertEqual(rc, 3, err)
        self.assertNotIn("give --scale", err)
        self.assertIn("report them through --map with a map fitted by plumb fit --scale logit", err)
        rc, _, err = run("apply", self.path("m.json"), self.path("bad.csv"))
        self.assertEqual(rc, 3, err)
        self.assertNotIn("give --scale", err)
        self.assertIn("use a map fitted with plumb fit --scale logit or --scale margin", err)
        for command in ("fit", "tally"):
            extra = ["--map", "platt"] if command == "fit" else []
            rc, _, err = run(command, *extra, "--score", "s", "--label", "y", self.path("bad.csv"))
            self.assertEqual(rc, 3, err)
            self.assertIn("give --scale logit or --scale margin", err)


def help_options_top():
    from plumbtest import run
    rc, out, err = run("--help")
    if rc != 0:
        raise AssertionError(err)
    return set(re.findall(r"^  (?:-\w, )?(--[\w-]+)", out, re.M))


if __name__ == "__main__":
    unittest.main()
