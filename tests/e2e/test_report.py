"""The HTML report and the SVG plots as a user sees them, in a real browser.

Debian's chromium renders the report headless (installed by scripts/setup):
the page must load with no console message, every plot must be present with
a drawn curve, and each figure as the page shows it must hold the curve that
its SVG file shows when rendered alone (inline SVGs share one page, and so
one id space: a clip path of one plot must not cut another's curve). xmllint
(Debian's libxml2-utils) checks that every SVG file is well-formed XML.
Environment as for test_cli.py: LOOPAUDIT and LOOPAUDIT_DEMO.
"""
import base64
import html
import html.parser
import json
import os
import re
import shutil
import subprocess
import tempfile
import unittest

import numpy
from PIL import Image

BINARY = os.environ.get("LOOPAUDIT", "loopaudit")
DEMO = os.environ.get("LOOPAUDIT_DEMO", "../../data/demo")
PLOTS = ["bode", "nyquist-near", "nyquist-whole", "coherence", "sensitivity"]
MEASURED = ["bode-measured"]  # the ratio as measured, for recordings (series injection)
CURVE_RGB = (0x0B, 0x5D, 0x7A)  # the measured curve's colour in src/report/plots.cpp
CURVE_COLOUR_TOLERANCE = 40  # per channel: the solid curve and its antialiased edge, not the faint dots or the band
# Wide enough that the plots show at their own size (the page is 860 px at
# most), tall enough for the report and the figures with_checks adds.
WINDOW = (900, 12000)
# The figure in the page against its SVG alone: the same solid-curve pixels,
# up to antialiasing (a fractional position in the page, and text drawn in the
# curve's colour, rasterise a little differently inline and as an image: up
# to 2.5 % in count and 1.6 % lost were seen; the fault this catches loses 60 % and more).
CURVE_COUNT_TOLERANCE = 0.05
# A curve pixel of the SVG alone is lost when the page has none within NEAR_PX.
NEAR_PX = 2
MOST_LOST_PIXELS = 0.03
# Records where each figure lies, for the screenshot taken in the same run.
CHECKS_START = '<div id="loopaudit-checks">'  # where what with_checks adds begins
RECTS_SCRIPT = """<script>document.body.dataset.figureRects = JSON.stringify(Array.from(
  document.querySelectorAll("figure[id^=plot-] > svg, img[data-plot]"), e => {
    const r = e.getBoundingClientRect();
    return [e.dataset.plot || e.parentElement.id.slice(5), r.left + scrollX, r.top + scrollY, r.width, r.height];
  }));</script>"""


def run(*args):
    result = subprocess.run([BINARY, *map(str, args)], capture_output=True, text=True, timeout=300)
    if result.returncode != 0:
        raise AssertionError(f"loopaudit {' '.join(map(str, args))} failed ({result.returncode}):\n{result.stderr}")
    return result


def chromium(*args):
    """Runs headless chromium; returns (stdout, the console lines it logged)."""
    browser = shutil.which("chromium")
    if browser is None:
        raise AssertionError("chromium is not installed: run scripts/setup")
    with tempfile.TemporaryDirectory(prefix="loopaudit_browser_") as profile:
        result = subprocess.run(
            [browser, "--headless", "--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage",
             "--disable-background-networking", "--disable-extensions", "--no-first-run",
             "--hide-scrollbars", f"--user-data-dir={profile}", "--enable-logging=stderr", "--v=0", *args],
            capture_output=True, text=True, timeout=120)
    console = [line for line in result.stderr.splitlines() if ":CONSOLE" in line]
    return result.stdout, console


class Figures(html.parser.HTMLParser):
    """Counts, per <figure id="plot-NAME">, its <svg> and its drawn paths."""

    def __init__(self):
        super().__init__()
        self.figures = {}
        self.current = None
        self.external = []

    def handle_starttag(self, tag, attrs):
        attrs = dict(attrs)
        for key in ("src", "href"):
            if key in attrs:
                self.external.append((tag, attrs[key]))
        if tag == "link":
            self.external.append((tag, attrs.get("href")))
        if tag == "figure" and attrs.get("id", "").startswith("plot-"):
            self.current = attrs["id"][5:]
            self.figures[self.current] = {"svg": 0, "paths": 0}
        elif self.current and tag == "svg":
            self.figures[self.current]["svg"] += 1
        elif self.current and tag == "path" and attrs.get("d", "").count("L") >= 1:
            self.figures[self.current]["paths"] += 1

    def handle_endtag(self, tag):
        if tag == "figure":
            self.current = None


def rendered_figures(page_html, path, window):
    """Renders a page (with RECTS_SCRIPT added) in one chromium run; returns
    ({plot name: RGB array of its figure as rendered}, the DOM, console lines)."""
    with open(path, "w") as f:
        f.write(page_html.replace("</body>", RECTS_SCRIPT + "</body>"))
    shot = path + ".png"
    dom, console = chromium("--dump-dom", "--window-size=%d,%d" % window, "--screenshot=" + shot, "file://" + path)
    rects = json.loads(html.unescape(re.search(r'data-figure-rects="([^"]*)"', dom).group(1)))
    with Image.open(shot) as image:
        pixels = numpy.asarray(image.convert("RGB"))
    figures = {}
    for name, x, y, width, height in rects:
        if y + height > pixels.shape[0] or x + width > pixels.shape[1]:
            raise AssertionError(f"{name} lies outside the {window} window: make it larger")
        figures[name] = pixels[round(y):round(y + height), round(x):round(x + width)]
    return figures, dom, console


def with_checks(page_html, svg_files):
    """The page with, after all it shows (its own layout untouched), two more sets of figures, so that one run
    renders all three: each SVG file as an image of its own ("alone/NAME": its own document, so its own ids),
    and the page's own figures again with the ids every plot used to share, "clip1" and on ("shared/NAME"):
    the fault the comparison must catch."""
    images = []
    for path in svg_files:
        with open(path, "rb") as f:
            data = base64.b64encode(f.read()).decode()
        name = os.path.basename(path)[:-4]
        images.append(f'<img data-plot="alone/{name}" style="display:block; margin-top:10px" '
                      f'src="data:image/svg+xml;base64,{data}">')
    shared = [f'<figure id="plot-shared/{name}">' + re.sub(r'(id="|url\(#)[a-z-]+-(clip\d+)', r"\1\2", svg) + "</figure>"
              for name, svg in re.findall(r'<figure id="plot-([a-z-]+)">\n(<svg.*?</svg>)', page_html, re.S)]
    return page_html.replace("</body>", CHECKS_START + "".join(images + shared) + "</div></body>")


def curve_mask(pixels):
    return numpy.all(numpy.abs(pixels.astype(int) - CURVE_RGB) <= CURVE_COLOUR_TOLERANCE, axis=2)


def aligned(shown, reference):
    """The two curve masks on a common size, the page's moved by the whole pixel (at most one each way) that matches best."""
    rows, columns = min(shown.shape[0], reference.shape[0]) - 2, min(shown.shape[1], reference.shape[1]) - 2
    ref = curve_mask(reference)[1:rows + 1, 1:columns + 1]
    got = curve_mask(shown)
    moves = [got[1 + dy:rows + 1 + dy, 1 + dx:columns + 1 + dx] for dy in (-1, 0, 1) for dx in (-1, 0, 1)]
    return ref, max(moves, key=lambda moved: int((moved & ref).sum()))


def grown(mask, reach):
    """The mask with every pixel within `reach` px (along each axis) of one of its pixels set."""
    padded = numpy.pad(mask, reach)
    out = numpy.zeros_like(mask)
    for dy in range(2 * reach + 1):
        for dx in range(2 * reach + 1):
            out |= padded[dy:dy + mask.shape[0], dx:dx + mask.shape[1]]
    return out


def curve_losses(in_page, alone):
    """Per plot, how the curve of the figure in the page falls short of the same SVG alone (plots that do not: left out)."""
    losses = {}
    for name, reference in alone.items():
        ref, got = aligned(in_page[name], reference)
        ref_count, got_count = int(ref.sum()), int(got.sum())
        lost = int((ref & ~grown(got, NEAR_PX)).sum()) / max(ref_count, 1)
        if abs(got_count - ref_count) > CURVE_COUNT_TOLERANCE * ref_count or lost > MOST_LOST_PIXELS:
            losses[name] = f"{got_count} curve pixels in the page, {ref_count} alone; {100 * lost:.1f} % of them lost"
    return losses


class ReportInBrowser(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.folder = tempfile.mkdtemp(prefix="loopaudit_report_")
        run("synth", os.path.join(DEMO, "servo_velocity.toml"), "--out-dir", cls.folder)
        cls.out = os.path.join(cls.folder, "out")
        run("analyze", os.path.join(cls.folder, "servo_velocity.csv"), "--out-dir", cls.out)
        cls.report = os.path.join(cls.out, "servo_velocity.report.html")
        # One chromium run serves the DOM, console and pixel tests: the report followed by what with_checks adds.
        with open(cls.report) as f:
            page = f.read()
        folder = os.path.join(cls.out, "servo_velocity-plots")
        files = sorted(os.path.join(folder, f) for f in os.listdir(folder))
        cls.figures, dom, cls.console = rendered_figures(with_checks(page, files),
                                                         os.path.join(cls.folder, "checks.html"), WINDOW)
        cls.dom = dom[:dom.index(CHECKS_START)]  # the report's own DOM, as the browser built it

    @classmethod
    def tearDownClass(cls):
        shutil.rmtree(cls.folder, ignore_errors=True)

    def test_the_console_check_can_fail(self):
        # A page that logs an error must be caught, or the next test proves nothing.
        page = os.path.join(self.folder, "broken.html")
        with open(page, "w") as f:
            f.write('<html><body><script>console.error("deliberate")</script></body></html>')
        _, console = chromium("--dump-dom", "file://" + page)
        self.assertTrue(any("deliberate" in line for line in console), console)

    def test_report_loads_with_every_plot_drawn(self):
        dom = self.dom
        self.assertEqual(self.console, [])
        figures = Figures()
        figures.feed(dom)
        self.assertEqual(figures.external, [], "the report must not load anything from outside")
        self.assertEqual(sorted(figures.figures), sorted(PLOTS + MEASURED))
        for name, found in figures.figures.items():
            self.assertEqual(found["svg"], 1, name)
            self.assertGreater(found["paths"], 0, name + " has no drawn curve")
        self.assertIn("Cautions", dom)
        self.assertIn("not a certification", dom)

    def test_every_figure_in_the_page_shows_its_whole_curve(self):
        sets = {"": {}, "alone": {}, "shared": {}}
        for name, pixels in self.figures.items():
            kind, _, plot = name.rpartition("/")
            sets[kind][plot] = pixels
        in_page, alone, shared = sets[""], sets["alone"], sets["shared"]
        self.assertEqual(sorted(alone), sorted(PLOTS + MEASURED))
        self.assertEqual(sorted(in_page), sorted(alone))
        self.assertEqual(sorted(shared), sorted(alone))
        for name, pixels in alone.items():
            # Each plot draws some hundreds of pixels of solid curve (the near view the fewest, about 600).
            self.assertGreater(int(curve_mask(pixels).sum()), 300, name)
        self.assertEqual(curve_losses(in_page, alone), {})
        # The check can fail: with shared ids each later plot clips to the Bode plot's frames.
        losses = curve_losses(shared, alone)
        self.assertNotIn("bode", losses)  # the first to define the ids keeps its curve
        for name in ("nyquist-near", "nyquist-whole", "sensitivity"):
            self.assertIn(name, losses)

    def test_every_svg_is_well_formed_xml(self):
        folder = os.path.join(self.out, "servo_velocity-plots")
        files = sorted(os.listdir(folder))
        self.assertEqual(files, sorted(p + ".svg" for p in PLOTS + MEASURED))
        result = subprocess.run(["xmllint", "--noout", *[os.path.join(folder, f) for f in files]],
                                capture_output=True, text=True)
        self.assertEqual(result.returncode, 0, result.stderr)

    def test_awkward_tables_still_report(self):
        # A single line and a loop with no crossover in band: the report renders and says what is missing.
        cases = {"one.csv": "freq_hz,re,im\n100,0.5,-0.2\n",
                 "low.csv": "freq_hz,re,im\n10,0.5,-0.1\n100,0.2,-0.1\n1000,0.01,-0.02\n"}
        for name, text in cases.items():
            path = os.path.join(self.folder, name)
            with open(path, "w") as f:
                f.write(text)
            out = os.path.join(self.folder, "awkward")
            run("table", path, "--out-dir", out)
            report = os.path.join(out, name[:-4] + ".report.html")
            dom, console = chromium("--dump-dom", "file://" + report)
            self.assertEqual(console, [], name)
            self.assertIn("none in band", dom, name)
            figures = Figures()
            figures.feed(dom)
            self.assertEqual(sorted(figures.figures), sorted(PLOTS), name)
            plots = os.path.join(out, name[:-4] + "-plots")
            result = subprocess.run(["xmllint", "--noout", *[os.path.join(plots, p + ".svg") for p in PLOTS]],
                                    capture_output=True, text=True)
            self.assertEqual(result.returncode, 0, result.stderr)


if __name__ == "__main__":
    unittest.main()
