"""End-to-end tests of the text on the terminal: the help, the summary's
intervals and the lists it shortens.

Environment: LOOPAUDIT (the binary) and LOOPAUDIT_DEMO (data/demo), set by
CTest.
"""
import json
import math
import os
import re
import subprocess
import tempfile
import unittest

BINARY = os.environ.get("LOOPAUDIT", "loopaudit")
DEMO = os.environ.get("LOOPAUDIT_DEMO", "../../data/demo")
VERBS = ("analyze", "inspect", "table", "synth")
PREFIX = {"G": 1e9, "M": 1e6, "k": 1e3, "": 1.0, "m": 1e-3, "u": 1e-6, "n": 1e-9}


def run(*args):
    result = subprocess.run([BINARY, *map(str, args)], capture_output=True, text=True, timeout=300)
    if result.returncode != 0:
        raise AssertionError(f"loopaudit {' '.join(map(str, args))} failed ({result.returncode}):\n{result.stderr}")
    return result.stdout


def option_lines(help_text):
    """(names and value, description) of each option line of a --help."""
    lines = []
    for line in help_text.splitlines():
        m = re.match(r"^  (-\S+(?: \S+)*?)\s{2,}(\S.*)$", line)
        if m:
            lines.append((m.group(1), m.group(2)))
    return lines


def quantity(text):
    """A printed number with its unit, as (value in base units, unit without its prefix)."""
    number, _, unit = text.strip().partition(" ")
    for base in ("Hz", "s"):
        if unit.endswith(base) and unit[: -len(base)] in PREFIX:
            return float(number) * PREFIX[unit[: -len(base)]], base
    return float(number), unit


class HelpTest(unittest.TestCase):
    def test_every_default_in_one_style(self):
        # One style: the default in brackets at the end of the description;
        # never CLI11's own "NAME=value" beside the option.
        for verb in VERBS:
            for names, description in option_lines(run(verb, "--help")):
                with self.subTest(verb=verb, option=names):
                    # A placeholder may hold "=" (--scale NAME=FACTOR); a default after it may not.
                    self.assertNotRegex(names, r"=(?![A-Z]+\b)")
                    self.assertEqual(description.count("["), description.count("]"))
        self.assertIn(("--convention NAME", "What the table holds: direct (L itself), series-injection (Y/X) or "
                       "closed-loop (T) [direct]"), option_lines(run("table", "--help")))
        self.assertIn(("--out-dir DIR", "Folder for NAME.csv and NAME.truth.json [.]"),
                      option_lines(run("synth", "--help")))


class SummaryTest(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.tmp = tempfile.TemporaryDirectory()
        run("synth", os.path.join(DEMO, "servo_stepped.toml"), "--out-dir", cls.tmp.name)
        stem = os.path.join(cls.tmp.name, "servo_stepped")
        cls.text = run("analyze", stem + ".csv", "--truth", stem + ".truth.json", "--json", stem + ".json")
        with open(stem + ".json") as f:
            cls.result = json.load(f)
        with open(stem + ".truth.json") as f:
            cls.truth = json.load(f)
        # The noise demo of the same loop: its delay margin interval spans 1 ms.
        run("synth", os.path.join(DEMO, "servo_velocity.toml"), "--out-dir", cls.tmp.name)
        stem = os.path.join(cls.tmp.name, "servo_velocity")
        cls.noise_text = run("analyze", stem + ".csv", "--truth", stem + ".truth.json")

    @classmethod
    def tearDownClass(cls):
        cls.tmp.cleanup()

    def rows(self):
        table = self.text.split("  summary ")[1].split("\n\n")[0].splitlines()[1:]
        pattern = re.compile(r"^  (.+?)\s{2,}(\S+ \S+)\s+(\S+ \S+) to (\S+ \S+)\s+(\S+ \S+)$")
        return [m.groups() for m in map(pattern.match, table) if m]

    def test_stepped_demo_rows_show_whether_the_truth_is_inside(self):
        rows = {label: rest for label, *rest in self.rows()}
        self.assertIn("gain crossover", rows)
        keys = {"gain crossover": "gain_crossover_hz", "phase margin": "phase_margin_deg",
                "delay margin": "delay_margin_s", "phase crossover": "phase_crossover_hz",
                "gain margin": "gain_margin_db", "modulus margin": "modulus_margin"}
        for label, key in keys.items():
            if label not in rows or self.result["summary"]["intervals"].get(key) is None:
                continue
            with self.subTest(row=label):
                _, low_text, high_text, truth_text = rows[label]
                if key == "modulus_margin":
                    low, high, truth = float(low_text), float(high_text), float(truth_text)
                    units = set()
                else:
                    (low, u1), (high, u2), (truth, u3) = map(quantity, (low_text, high_text, truth_text))
                    units = {u1, u2, u3}
                    # One unit, prefix and all, for both ends and the truth.
                    self.assertEqual(len({low_text.split()[1], high_text.split()[1], truth_text.split()[1]}), 1)
                ci = self.result["summary"]["intervals"][key]
                exact = self.truth["summary"][key]
                inside = ci["ci_low"] <= exact <= ci["ci_high"]
                # As printed, the truth lies inside the interval exactly when it does.
                self.assertEqual(low <= truth <= high, inside, f"{rows[label]} {units}")

    def test_no_interval_mixes_units(self):
        intervals = []
        for text in (self.text, self.noise_text):
            table = text.split("  summary ")[1].split("\n\n")[0].splitlines()[1:]
            intervals += [line for line in text.splitlines() if " %: " in line] + table
        self.assertGreater(len(intervals), 14)
        for line in intervals:
            for a, b in re.findall(r"\d (\S+) to [+-]?[\d.]+ (\S+)", line):
                if a.endswith(("Hz", "s")) and b.endswith(("Hz", "s")):
                    self.assertEqual(a, b, line)


class LongListTest(unittest.TestCase):
    """A table whose gain ripples across 0 dB 60 times, and phase across -180 deg 30 times."""

    @classmethod
    def setUpClass(cls):
        cls.tmp = tempfile.TemporaryDirectory()
        cls.table = os.path.join(cls.tmp.name, "ripple.csv")
        with open(cls.table, "w") as f:
            f.write("freq_hz,mag_db,phase_deg\n")
            for k in range(3000):
                u = 1.0 + 3.0 * k / 2999.0  # log10 f from 1 to 4
                f.write(f"{10 ** u:.6f},{3.0 * math.sin(2 * math.pi * 10.0 * u):.6f},"
                        f"{-180.0 + 20.0 * math.sin(2 * math.pi * 5.0 * u + 0.3):.6f}\n")

    @classmethod
    def tearDownClass(cls):
        cls.tmp.cleanup()

    def test_long_lists_are_shortened_and_name_the_json(self):
        json_path = os.path.join(self.tmp.name, "ripple.json")
        text = run("table", self.table, "--json", json_path)
        with open(json_path) as f:
            result = json.load(f)
        gains, phases = len(result["gain_crossovers"]), len(result["phase_crossovers"])
        self.assertGreater(gains, 20)
        self.assertGreater(phases, 20)
        m = re.search(r"(\d+) of (\d+) gain crossovers shown; all are in (\S+) under \"gain_crossovers\"", text)
        self.assertIsNotNone(m, text)
        self.assertEqual((int(m.group(2)), m.group(3)), (gains, json_path))
        listed = len(re.findall(r" deg   delay margin ", text))
        self.assertEqual(listed, int(m.group(1)))
        self.assertLess(listed, 12)
        self.assertIn(f"of {phases} phase crossovers shown; all are in {json_path} under \"phase_crossovers\"", text)
        # Without a JSON file, the option that writes one.
        self.assertIn(f"of {gains} gain crossovers shown; --json FILE writes them all", run("table", self.table))


class WeakRecordingTest(unittest.TestCase):
    """The servo demo with an injection of 0.3 rad/s instead of 5, for 4 s: many findings."""

    def test_findings_are_shortened_and_speak_of_one_crossing_in_the_singular(self):
        with tempfile.TemporaryDirectory() as tmp:
            with open(os.path.join(DEMO, "servo_velocity.toml")) as f:
                scenario = f.read()
            scenario = re.sub(r"^rms = 5.0 .*$", "rms = 0.3", scenario, flags=re.M)
            scenario = scenario.replace('name = "servo_velocity"', 'name = "weak"').replace("duration_s = 20", "duration_s = 4")
            path = os.path.join(tmp, "weak.toml")
            with open(path, "w") as f:
                f.write(scenario)
            run("synth", path, "--out-dir", tmp)
            json_path = os.path.join(tmp, "weak.json")
            text = run("analyze", os.path.join(tmp, "weak.csv"), "--json", json_path)
            with open(json_path) as f:
                findings = json.load(f)["diagnostics"]
        lines = [line for line in text.split("\n  findings\n")[1].splitlines() if line.startswith("    ")]
        self.assertGreater(len(findings), 10)
        self.assertEqual(len(lines), 11)  # ten findings and the line that counts the rest
        self.assertRegex(lines[-1], rf"^    \.\.\. {len(findings) - 10} more \(.+\); all are in {re.escape(json_path)} "
                                    r"under \"diagnostics\"$")
        # One crossing, one noise crossing: singular (the run holds both).
        messages = [d["message"] for d in findings]
        singular = [m for m in messages if re.search(r"\b1 (gain|phase) crossing |\(1 noise crossing", m)]
        self.assertTrue(singular, messages)
        for m in singular:
            self.assertNotRegex(m, r"\b1 (gain|phase) crossing .* are not listed|\(1 noise crossings\)")


if __name__ == "__main__":
    unittest.main()
