"""plumb report --html: the review page, loaded from disk in a real browser
(headless Chromium from Debian, which cmake/setup.sh installs for the
tests) with the network off. Checks: the browser logs no console message
(a control page with a deliberate console.error proves the check can fail),
a screenshot is not blank (the PNG decoded here with zlib and struct, its
distinct colours counted), and every headline figure in the DOM the browser
built (read back with --dump-dom, marked with data- attributes) equals the
JSON report's of the same run. Also: the page is self-contained (no script,
no address but the SVG namespace), its tables have header cells with scope,
its charts role="img" with a title and a description, and a failed run
leaves no page behind.

The network: the browser runs in a new network namespace (`unshare -n`, as
root; `unshare -rn` maps the user to root in a user namespace otherwise),
which has only a loopback device that is down, so no host can be reached
whatever the page asks. Where neither works (a container that forbids
namespaces), the browser's own flags refuse every host: every name resolves
to nothing and every connection goes to a proxy on a closed local port. The
flags are given in every case; the test says on stderr which guard ran."""
import html.parser
import json
import os
import shutil
import struct
import subprocess
import sys
import tempfile
import unittest
import zlib

from plumbtest import PlumbCase, run, simulated_holdout, write

# The JSON report's path of each figure the page marks (docs/report-format.md).
JSON_PATHS = {
    "rows": ("rows",),
    "observed_rate": ("observed_rate",),
    "mean_forecast": ("mean_forecast",),
    "calibration_in_the_large": ("calibration_in_the_large",),
    "ece": ("calibration_error", "equal_width", "ece"),
    "ece_mass": ("calibration_error", "equal_mass", "ece"),
    "l2_debiased": ("calibration_error", "equal_width", "l2_debiased"),
    "brier": ("brier",),
    "mcb": ("corp", "brier", "mcb"),
    "log_loss": ("log_loss",),
    "slope": ("calibration_regression", "slope"),
    "auc": ("auc",),
    "hosmer_lemeshow_p": ("hosmer_lemeshow", "p_value"),
    "spiegelhalter_p": ("spiegelhalter", "p_value"),
}

NETWORK_FLAGS = [
    "--host-resolver-rules=MAP * ~NOTFOUND",
    "--proxy-server=socks5://127.0.0.1:9",
    "--proxy-bypass-list=<-loopback>",
    "--disable-background-networking",
    "--disable-component-update",
    "--no-first-run",
    "--disable-extensions",
    "--disable-sync",
]


def network_guard():
    """The command prefix that takes the network away, if this machine allows one."""
    for prefix in (["unshare", "-n"], ["unshare", "-rn"]):
        if shutil.which(prefix[0]) and subprocess.run(prefix + ["true"], capture_output=True).returncode == 0:
            return prefix
    return []


def chromium(profile, *args):
    """Runs headless Chromium; returns (stdout bytes, console lines). As root
    Chromium refuses to start without --no-sandbox (its sandbox needs an
    unprivileged user), and tests/run.sh may run as root in CI."""
    binary = shutil.which("chromium") or shutil.which("chromium-browser")
    if binary is None:
        raise AssertionError("chromium is not installed: bash tests/run.sh installs it (cmake/setup.sh)")
    cmd = network_guard() + [binary, "--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars",
                             f"--user-data-dir={profile}", "--enable-logging=stderr", "--v=0",
                             *NETWORK_FLAGS, *args]
    proc = subprocess.run(cmd, capture_output=True, timeout=60)
    if proc.returncode != 0:
        raise AssertionError(f"chromium exited {proc.returncode}: {proc.stderr.decode(errors='replace')[-2000:]}")
    console = [l for l in proc.stderr.decode(errors="replace").splitlines() if ":CONSOLE" in l]
    return proc.stdout, console


def png_pixels(data):
    """(width, height, rows of pixel tuples) of an 8-bit RGB or RGBA PNG
    (the PNG specification, ISO/IEC 15948: chunks, zlib, five filters)."""
    assert data[:8] == b"\x89PNG\r\n\x1a\n", "not a PNG"
    pos, idat, width = 8, b"", None
    while pos < len(data):
        length, kind = struct.unpack(">I4s", data[pos:pos + 8])
        body = data[pos + 8:pos + 8 + length]
        if kind == b"IHDR":
            width, height, depth, colour, _, _, interlace = struct.unpack(">IIBBBBB", body)
            assert depth == 8 and colour in (2, 6) and interlace == 0, (depth, colour, interlace)
            channels = 3 if colour == 2 else 4
        elif kind == b"IDAT":
            idat += body
        pos += 12 + length
    raw = zlib.decompress(idat)
    stride = width * channels
    rows, previous = [], bytearray(stride)
    for y in range(height):
        start = y * (stride + 1)
        kind, line = raw[start], bytearray(raw[start + 1:start + 1 + stride])
        for i in range(stride):
            a = line[i - channels] if i >= channels else 0
            b = previous[i]
            c = previous[i - channels] if i >= channels else 0
            if kind == 1:
                line[i] = (line[i] + a) & 255
            elif kind == 2:
                line[i] = (line[i] + b) & 255
            elif kind == 3:
                line[i] = (line[i] + (a + b) // 2) & 255
            elif kind == 4:
                p = a + b - c
                pa, pb, pc = abs(p - a), abs(p - b), abs(p - c)
                line[i] = (line[i] + (a if pa <= pb and pa <= pc else b if pb <= pc else c)) & 255
        rows.append([tuple(line[x * channels:x * channels + 3]) for x in range(width)])
        previous = line
    return width, height, rows


class PageParser(html.parser.HTMLParser):
    """The figures, tables, header cells and charts of a page."""

    def __init__(self):
        super().__init__()
        self.figures, self.tables, self.th, self.svgs, self.scripts, self.urls = [], 0, [], [], 0, []
        self.svg_stack, self.text_for = [], None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if "data-figure" in a:
            self.figures.append((int(a["data-column"]), a["data-figure"], a["data-value"]))
        if tag == "table":
            self.tables += 1
        if tag == "th":
            self.th.append(a.get("scope"))
        if tag == "script":
            self.scripts += 1
        for k, v in attrs:
            if v and ("://" in v) and v != "http://www.w3.org/2000/svg":
                self.urls.append(v)
        if tag == "svg":
            self.svgs.append({"role": a.get("role"), "labelledby": a.get("aria-labelledby", ""), "ids": {}})
        if tag in ("title", "desc") and self.svgs and "id" in a:
            self.svgs[-1]["ids"][a["id"]] = tag


class TestReviewPage(PlumbCase):
    def setUp(self):
        super().setUp()
        depots = ["Ambercliff", "Oxtide", "Varnholm"]
        rows = simulated_holdout(2400, seed=5)
        write(self.path("night.csv"),
              "risk,late,depot\n" + "".join(f"{s},{y},{depots[i % 3]}\n" for i, (s, y) in enumerate(rows)))
        run("fit", "--map", "platt", "--score", "risk", "--label", "late", self.path("night.csv"),
            "-o", self.path("late.map.json"), check=True)
        self.profile = tempfile.mkdtemp(prefix="plumb-chromium-")
        print(f"network guard: {' '.join(network_guard()) or 'chromium flags only'}", file=sys.stderr)

    def tearDown(self):
        shutil.rmtree(self.profile, ignore_errors=True)
        super().tearDown()

    def report(self, date, *extra):
        return run("report", "--map", self.path("late.map.json"), "--score", "risk", "--label", "late",
                   "--by", "depot", "--bootstrap", "30", "--history", self.path("h.jsonl"), "--history-date", date,
                   "--max", "ece=0.03", self.path("night.csv"), *extra)

    def test_page_in_a_browser_offline(self):
        for date in ("2026-11-01", "2026-11-02"):
            self.assertIn(self.report(date, "-q")[0], (0, 7))
        rc, _, err = self.report("2026-11-03", "-q", "--html", self.path("page.html"), "--json", self.path("r.json"))
        self.assertIn(rc, (0, 7), err)
        report = self.load_json(self.path("r.json"))
        with open(self.path("page.html"), encoding="utf-8") as f:
            source = f.read()
        static = PageParser()
        static.feed(source)
        self.assertEqual(static.scripts, 0)
        self.assertEqual(static.urls, [])
        self.assertNotIn("@import", source)
        self.assertNotIn("url(", source)
        self.assertIn("credit, insurance", source)

        url = "file://" + self.path("page.html")
        dom, console = chromium(self.profile, "--dump-dom", url)
        self.assertEqual(console, [], "the page made the browser log to its console")
        page = PageParser()
        page.feed(dom.decode("utf-8"))

        # Every headline figure of every column, against the JSON report.
        self.assertEqual(len(page.figures), len(JSON_PATHS) * len(report["scores"]))
        for column, figure, value in page.figures:
            expected = report["scores"][column]
            for key in JSON_PATHS[figure]:
                expected = expected[key]
            if expected is None:
                self.assertEqual(value, "null", figure)
            else:
                self.assertEqual(float(value), expected, f"{figure} of column {column}")

        # Tables: every header cell has its scope; charts: role="img" with a title and a description.
        self.assertGreaterEqual(page.tables, 6)  # headline x2, gates, bins x2, segments x2, trend...
        self.assertTrue(page.th and all(s in ("col", "row") for s in page.th), page.th)
        self.assertEqual(len(page.svgs), 2)  # the reliability chart and the trend
        for svg in page.svgs:
            self.assertEqual(svg["role"], "img")
            names = svg["labelledby"].split()
            self.assertEqual(sorted(svg["ids"].get(n) for n in names), ["desc", "title"])

        # A screenshot that is not blank.
        shot = self.path("shot.png")
        chromium(self.profile, f"--screenshot={shot}", "--window-size=1100,1600", url)
        with open(shot, "rb") as f:
            width, height, rows = png_pixels(f.read())
        self.assertEqual((width, height), (1100, 1600))
        colours, ink = set(), 0
        for r in rows[::4]:
            for px in r[::2]:
                colours.add(px)
                ink += sum(px) < 384
        self.assertGreater(len(colours), 50)
        self.assertGreater(ink, 500)

    def test_the_console_check_can_fail(self):
        write(self.path("control.html"),
              "<!DOCTYPE html><html><body><p>x</p><script>console.error('control')</script></body></html>\n")
        _, console = chromium(self.profile, "--dump-dom", "file://" + self.path("control.html"))
        self.assertTrue(any("control" in l for l in console), console)

    def test_a_failed_run_leaves_no_page(self):
        write(self.path("bad.csv"), "risk,late,depot\n0.2,1,A\n1.7,0,B\n")
        self.assert_refused(["report", "--score", "risk", "--label", "late", "--html", self.path("page.html"),
                             self.path("bad.csv")], 3, "bad.csv:3", output=self.path("page.html"))


if __name__ == "__main__":
    unittest.main()
