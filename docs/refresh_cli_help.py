"""Rewrites the help blocks of docs/cli.md from the binary: under each
'## plumb COMMAND' heading, the first ``` block becomes the output of
'plumb COMMAND --help'. tests/cli/test_help.py checks that they agree.

    python3 docs/refresh_cli_help.py build/plumb
"""
import os
import re
import subprocess
import sys


def refreshed(text, plumb):
    def block(match):
        command = match.group(1)
        out = subprocess.run([plumb, command, "--help"], capture_output=True, text=True, check=True).stdout
        return match.group(0)[: match.start(2) - match.start(0)] + out.rstrip("\n") + "\n```"

    return re.sub(r"^## plumb ([\w-]+)\n(?:(?!```|## ).*\n)*```\n((?:(?!```).*\n)*?)```", block, text, flags=re.M)


if __name__ == "__main__":
    plumb = sys.argv[1] if len(sys.argv) > 1 else "plumb"
    path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "cli.md")
    with open(path) as f:
        text = f.read()
    with open(path, "w") as f:
        f.write(refreshed(text, plumb))
