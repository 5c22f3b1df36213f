"""The HTML report and the SVG plots as a user sees them, in a real browser.

Debian's chromium renders the report headless (installed by scripts/setup):
the page must load with no console message, every plot must be present with
a drawn curve, and the screenshot must show the curve's colour. xmllint
(Debian's libxml2-utils) checks that every SVG file is well-formed XML.
Environment as for test_cli.py: LOOPAUDIT and LOOPAUDIT_DEMO.
"""
import html.parser
import os
import shutil
import subprocess
import tempfile
import unittest

from PIL import Image

BINARY = os.environ.get("LOOPAUDIT", "loopaudit")
DEMO = os.environ.get("LOOPAUDIT_DEMO", "../../data/demo")
PLOTS = ["bode", "nyquist-near", "nyquist-whole", "coherence", "sensitivity"]
MEASURED = ["bode-measured"]  # the ratio as measured, for recordings (series injection)
CURVE_RGB = (0x0B, 0x5D, 0x7A)  # the measured curve's colour in src/report/plots.cpp


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


class ReportInBrowser(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.folder = tempfile.mkdtemp(prefix="loopaudit_report_")
        run("synth", os.path.join(DEMO, "servo_velocity.toml"), "--out-dir", cls.folder)
        cls.out = os.path.join(cls.folder, "out")
        run("analyze", os.path.join(cls.folder, "servo_velocity.csv"), "--out-dir", cls.out)
        cls.report = os.path.join(cls.out, "servo_velocity.report.html")

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
        dom, console = chromium("--dump-dom", "file://" + self.report)
        self.assertEqual(console, [])
        figures = Figures()
        figures.feed(dom)
        self.assertEqual(figures.external, [], "the report must not load anything from outside")
        self.assertEqual(sorted(figures.figures), sorted(PLOTS + MEASURED))
        for name, found in figures.figures.items():
            self.assertEqual(found["svg"], 1, name)
            self.assertGreater(found["paths"], 0, name + " has no drawn curve")
        self.assertIn("Cautions", dom)
        self.assertIn("not a certification", dom)

    def test_screenshot_shows_the_curves(self):
        shot = os.path.join(self.folder, "report.png")
        chromium("--window-size=900,5200", "--screenshot=" + shot, "file://" + self.report)
        with Image.open(shot) as image:
            pixels = image.convert("RGB")
            width, height = pixels.size
            self.assertEqual((width, height), (900, 5200))
            curve = sum(1 for p in pixels.getdata()
                        if all(abs(a - b) <= 12 for a, b in zip(p, CURVE_RGB)))
        # Six plots of several hundred pixels of curve each.
        self.assertGreater(curve, 2000)

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
