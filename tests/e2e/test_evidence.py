"""End-to-end: no confident answer the data cannot support.

A conditionally stable loop measured with every excitation, an analysis left
with too few averages, margins outside the excited band, and an inverted
probe. Every recording is made here with `loopaudit synth` from a scenario
this file writes (invented values); the truth is the simulated loop's exact
margins (its truth file).
"""
import math
import os
import shutil
import tempfile
import unittest

import numpy as np

from cli_common import DEMO, INPUT, NO_RESULT, SETTINGS, USAGE, codes, load, run


# A loop whose phase dips below -180 deg between about 300 Hz and 1.16 kHz
# while |L| is well above 1 (a gain drop of 24.8 dB there destabilises it),
# crosses over at 7 kHz and crosses -180 deg again at 25.7 kHz (+13.3 dB).
CONDITIONAL = """
name = "{name}"
description = "conditionally stable loop, {kind} injection (test scenario, invented values)"
[recording]
sample_rate_hz = 200e3
duration_s = 1.0
seed = 11
[injection]
kind = "{kind}"
rms = 0.02
low_hz = 100
high_hz = 60e3
points = 60
dwell_s = 0.016
sweep_s = 1.0
period_samples = 16384
prbs_order = 12
[noise]
x_rms = 0.0005
y_rms = 0.0005
disturbance_rms = 0.002
disturbance_corner_hz = 500
[loop]
delay_samples = 1
[[loop.stage]]
name = "compensated plant"
gain = 2.6e6
integrators = 1
zeros = [{{ hz = 1000 }}, {{ hz = 2500 }}]
poles = [{{ hz = 200, q = 0.5 }}, {{ hz = 60e3 }}, {{ hz = 120e3 }}]
discretize = "bilinear"
"""
EXCITATIONS = ("noise", "multisine", "prbs", "stepped", "chirp")

# Widths beyond which an interval says nothing (src/analysis/margins.cpp,
# too_wide): no listed crossing may carry one.
MAX_PHASE_WIDTH_DEG, MAX_GAIN_WIDTH_DB, MAX_DECADES = 180.0, 40.0, 1.0





def inside(value, interval, slack=0.0):
    return interval["ci_low"] - slack <= value <= interval["ci_high"] + slack


def crossover_interval(result, gain_margin_db):
    """The gain margin interval of the listed phase crossover the summary took."""
    found = [c for c in result["phase_crossovers"] if c["gain_margin_db"] == gain_margin_db]
    return found[0]["intervals"]["gain_margin_db"]


class Meaningful:
    """Shared check: every listed crossing has an interval that means something."""

    def assert_meaningful(self, result):
        for c in result["gain_crossovers"]:
            i = c["intervals"]
            if i["freq_hz"]:
                self.assertLessEqual(math.log10(i["freq_hz"]["ci_high"] / i["freq_hz"]["ci_low"]), MAX_DECADES)
            if i["phase_margin_deg"]:
                width = i["phase_margin_deg"]["ci_high"] - i["phase_margin_deg"]["ci_low"]
                self.assertLessEqual(width, MAX_PHASE_WIDTH_DEG)
        for c in result["phase_crossovers"]:
            i = c["intervals"]
            if i["freq_hz"]:
                self.assertLessEqual(math.log10(i["freq_hz"]["ci_high"] / i["freq_hz"]["ci_low"]), MAX_DECADES)
            if i["gain_margin_db"]:
                self.assertLessEqual(i["gain_margin_db"]["ci_high"] - i["gain_margin_db"]["ci_low"], MAX_GAIN_WIDTH_DB)
        band = result["band"]
        for c in result["gain_crossovers"] + result["phase_crossovers"]:
            self.assertTrue(band["low_hz"] <= c["freq_hz"] <= band["high_hz"], c["freq_hz"])


class ConditionallyStable(unittest.TestCase, Meaningful):
    """Each crossing of a group judged on its own evidence, and the summary
    never presents the gain increase margin as the loop's gain margin while
    a reduction margin may lie unresolved."""

    @classmethod
    def setUpClass(cls):
        cls.folder = tempfile.mkdtemp(prefix="loopaudit_evidence_")
        cls.results = {}
        for kind in EXCITATIONS:
            name = "conditional_" + kind
            scenario = os.path.join(cls.folder, name + ".toml")
            with open(scenario, "w") as f:
                f.write(CONDITIONAL.format(name=name, kind=kind))
            run("synth", scenario, "--out-dir", cls.folder)
            stem = os.path.join(cls.folder, name)
            run("analyze", stem + ".csv", "--json", stem + ".json")
            cls.results[kind] = (load(stem + ".json"), load(stem + ".truth.json"))

    @classmethod
    def tearDownClass(cls):
        shutil.rmtree(cls.folder, ignore_errors=True)

    def test_truth_is_conditionally_stable(self):
        # The scenario is what this class claims (from the simulated loop's exact margins).
        truth = self.results["noise"][1]
        limits = sorted(c["gain_margin_db"] for c in truth["phase_crossovers"])
        self.assertEqual(len(limits), 3)
        self.assertLess(limits[1], -20.0)
        self.assertGreater(limits[2], 10.0)

    def test_every_listed_phase_crossover_is_a_true_one(self):
        for kind, (result, truth) in self.results.items():
            with self.subTest(kind=kind):
                self.assert_meaningful(result)
                for c in result["phase_crossovers"]:
                    nearest = min(truth["phase_crossovers"],
                                  key=lambda t: abs(math.log10(t["freq_hz"] / c["freq_hz"])))
                    self.assertLess(abs(math.log10(nearest["freq_hz"] / c["freq_hz"])), 0.1, c)
                    # 1 dB of slack: the truth is the simulated loop, the interval the line noise's.
                    self.assertTrue(inside(nearest["gain_margin_db"], c["intervals"]["gain_margin_db"], 1.0), c)

    def test_the_reduction_margin_is_found_or_said_to_be_possible(self):
        for kind, (result, truth) in self.results.items():
            with self.subTest(kind=kind):
                true_reduction = truth["summary"]["gain_reduction_margin_db"]
                summary = result["summary"]
                measured = summary["gain_reduction_margin_db"]
                if measured is not None:
                    interval = crossover_interval(result, measured)
                    self.assertTrue(inside(true_reduction, interval, 1.5), (measured, interval, true_reduction))
                else:
                    possible = [p for p in summary["possible"] if p["key"] == "gain_reduction_margin_db"]
                    self.assertTrue(possible, "a reduction margin may lie unresolved and the summary must say so")
                    self.assertIn("margins.possible-margin", codes(result))

    def test_the_resolved_crossing_near_the_dip_end_is_listed(self):
        # The crossing at 1.16 kHz, where lines within a tenth of a decade sit
        # clearly on either side of -180 deg, is resolved with every excitation
        # that puts enough power there. The PRBS spreads its power up to the
        # Nyquist frequency, so at this level its lines below 1.1 kHz are too
        # noisy: the summary then says a reduction margin may lie there
        # (checked above).
        for kind, (result, truth) in self.results.items():
            if kind == "prbs":
                continue
            with self.subTest(kind=kind):
                found = [c for c in result["phase_crossovers"] if 900 < c["freq_hz"] < 1500]
                self.assertEqual(len(found), 1, [c["freq_hz"] for c in result["phase_crossovers"]])
                self.assertEqual(found[0]["limits"], "decrease")

    def test_the_table_shows_both_gain_margins(self):
        # The summary's gain margin is the smaller (+13 dB, an increase); the
        # reduction margin of a conditionally stable loop is shown under it.
        stem = os.path.join(self.folder, "conditional_noise")
        text = run("analyze", stem + ".csv", "--quiet").stdout
        rows = [line.split() for line in text.splitlines() if line.startswith("  reduction margin")]
        self.assertEqual(len(rows), 1, text)
        self.assertLess(float(rows[0][2]), -20.0)

    def test_the_increase_margin_matches_the_truth(self):
        for kind, (result, truth) in self.results.items():
            with self.subTest(kind=kind):
                summary = result["summary"]
                interval = crossover_interval(result, summary["gain_increase_margin_db"])
                self.assertTrue(inside(truth["summary"]["gain_increase_margin_db"], interval, 0.5))


# A type-0 loop whose gain rises above 1 between its two crossovers (24.0 Hz
# and 382 Hz in its truth file; at most +4.9 dB) and stays clear of -1
# (phase crossover at 1.18 kHz, +12.1 dB), measured with an injection so
# weak against the sensor noise on x that every line has coherence below
# 0.05 and most a relative uncertainty above 0.5.
LOW_GAIN = """
name = "low_gain"
description = "low-gain type-0 loop, weak injection (test scenario, invented values)"
[recording]
sample_rate_hz = 8000
duration_s = 20
seed = 5
[injection]
kind = "noise"
rms = 0.05
[noise]
x_rms = 1.0
y_rms = 0.005
[loop]
delay_samples = 1
[[loop.stage]]
name = "band-pass"
gain = 0.2
zeros = [{ hz = 4 }]
poles = [{ hz = 35 }, { hz = 300 }, { hz = 1000 }]
discretize = "bilinear"
"""


class UnresolvedIsNotAbsent(unittest.TestCase):
    """Crossovers the lines are too noisy to place are unresolved, not
    "none in band", and the verdict does not call the loop stable."""

    @classmethod
    def setUpClass(cls):
        cls.folder = tempfile.mkdtemp(prefix="loopaudit_evidence_")
        scenario = os.path.join(cls.folder, "low_gain.toml")
        with open(scenario, "w") as f:
            f.write(LOW_GAIN)
        run("synth", scenario, "--out-dir", cls.folder)
        cls.stem = os.path.join(cls.folder, "low_gain")
        cls.text = run("analyze", cls.stem + ".csv", "--json", cls.stem + ".json", "--report",
                       cls.stem + ".html", "--quiet").stdout
        cls.result, cls.truth = load(cls.stem + ".json"), load(cls.stem + ".truth.json")

    @classmethod
    def tearDownClass(cls):
        shutil.rmtree(cls.folder, ignore_errors=True)

    def test_truth_has_two_gain_crossovers(self):
        self.assertEqual(len(self.truth["gain_crossovers"]), 2)
        coherence = self.result["response"]["coherence"]
        self.assertLess(max(coherence), 0.1)

    def test_summary_says_unresolved(self):
        self.assertEqual(self.result["gain_crossovers"], [])
        summary = self.result["summary"]
        self.assertIsNone(summary["gain_crossover_hz"])
        for key in ("gain_crossover_hz", "phase_margin_deg", "delay_margin_s", "phase_crossover_hz", "gain_margin_db"):
            self.assertEqual(summary["status"][key], "unresolved", key)
        self.assertEqual(summary["status"]["modulus_margin"], "measured")
        self.assertIn("margins.unresolved-crossings", codes(self.result))

    def test_verdict_is_undecided(self):
        stability = self.result["stability"]
        self.assertEqual(stability["verdict"], "undecided")
        self.assertIsNone(stability["closed_loop_rhp_poles"])

    def test_table_and_report_say_unresolved(self):
        rows = {line[2:20].strip(): line[20:].split() for line in self.text.splitlines() if line.startswith("  ")}
        self.assertEqual(rows["gain crossover"][0], "unresolved", self.text)
        self.assertEqual(rows["phase margin"][0], "unresolved", self.text)
        self.assertNotIn("none in band", self.text)
        with open(self.stem + ".html") as f:
            self.assertNotIn("none in band", f.read())

    def test_the_demos_keep_their_verdict(self):
        # Noisy lines where |L| is far from 1 (the top of the servo's band)
        # leave the verdict and the summary as they were.
        run("synth", os.path.join(DEMO, "servo_velocity.toml"), "--out-dir", self.folder)
        out = os.path.join(self.folder, "servo.json")
        run("analyze", os.path.join(self.folder, "servo_velocity.csv"), "--json", out)
        result = load(out)
        self.assertEqual(result["stability"]["verdict"], "stable")
        self.assertTrue(all(v == "measured" for k, v in result["summary"]["status"].items()
                            if k != "gain_reduction_margin_db"), result["summary"]["status"])
        self.assertEqual(result["summary"]["status"]["gain_reduction_margin_db"], "none-in-band")


class OnTheMargin(unittest.TestCase):
    """A table through -1 within rounding is undecided, said to sit on the margin."""

    @classmethod
    def setUpClass(cls):
        cls.folder = tempfile.mkdtemp(prefix="loopaudit_evidence_")

    @classmethod
    def tearDownClass(cls):
        shutil.rmtree(cls.folder, ignore_errors=True)

    def table(self, name, values, freqs):
        path = os.path.join(self.folder, name + ".csv")
        with open(path, "w") as f:
            f.write("freq_hz,re,im\n")
            for fr, v in zip(freqs, values):
                f.write(f"{fr!r},{v.real!r},{v.imag!r}\n")
        out = os.path.join(self.folder, name + ".json")
        run("table", path, "--json", out)
        return load(out)

    def test_through_minus_one_is_undecided(self):
        # K/(s(s+1)(s+2)) with K = 6 passes through -1 at sqrt 2 rad/s
        # (Routh-Hurwitz: stable for K < 6, two right-half-plane poles above).
        # One line sits at sqrt 2 rad/s; the table is scaled so that it holds
        # exactly -1, then multiplied by 1 - 1e-10 and 1 + 1e-10.
        omega = math.sqrt(2.0) * 10.0 ** (np.arange(-150, 151) / 100.0)
        s = 1j * omega
        loop = 6.0 / (s * (s + 1.0) * (s + 2.0))
        loop = loop * (-1.0 / loop[150])
        loop[150] = -1.0
        freqs = omega / (2.0 * math.pi)
        for name, factor in (("exact", 1.0), ("below", 1.0 - 1e-10), ("above", 1.0 + 1e-10)):
            with self.subTest(name=name):
                result = self.table(name, loop * factor, freqs)
                self.assertEqual(result["stability"]["verdict"], "undecided")
                self.assertIn("sits on the stability margin", result["stability"]["reason"])
                self.assertIn("margins.on-margin", codes(result))
        for name, factor, verdict in (("stable", 0.5, "stable"), ("unstable", 2.0, "unstable")):
            with self.subTest(name=name):
                result = self.table(name, loop * factor, freqs)
                self.assertEqual(result["stability"]["verdict"], verdict)
                self.assertNotIn("margins.on-margin", codes(result))


class WeakData(unittest.TestCase, Meaningful):
    """Too few averages: refused with the way out; few: no meaningless crossing."""

    @classmethod
    def setUpClass(cls):
        cls.folder = tempfile.mkdtemp(prefix="loopaudit_evidence_")
        run("synth", os.path.join(DEMO, "servo_velocity.toml"), "--out-dir", cls.folder)
        cls.recording = os.path.join(cls.folder, "servo_velocity.csv")

    @classmethod
    def tearDownClass(cls):
        shutil.rmtree(cls.folder, ignore_errors=True)

    def test_two_averages_are_refused_with_the_fix(self):
        # 160000 samples in 65536-sample segments at 50 % overlap: 3 segments, 2.9 effective averages.
        result = run("analyze", self.recording, "--segment", "65536", check=False)
        self.assertEqual(result.returncode, NO_RESULT, result.stderr)
        self.assertIn("2.9 effective averages", result.stderr)
        self.assertIn("--segment", result.stderr)
        self.assertIn("longer record", result.stderr)
        self.assertEqual(result.stderr.count("\n"), 1, result.stderr)

    def test_few_averages_warn_and_list_only_meaningful_crossings(self):
        # 8 segments, 7.6 effective averages: above the refusal, below the warning level.
        out = os.path.join(self.folder, "few.json")
        run("analyze", self.recording, "--segment", "32768", "--json", out)
        result = load(out)
        self.assertIn("spectral.few-averages", codes(result))
        self.assert_meaningful(result)
        self.assertLessEqual(len(result["gain_crossovers"]), 3)

    def test_margins_come_from_the_excited_band(self):
        # The detector finds the servo's noise from 7.81 Hz (8 kHz / 1024)
        # upward; the long segments give lines from 0.12 Hz.
        out = os.path.join(self.folder, "band.json")
        run("analyze", self.recording, "--segment", "32768", "--json", out)
        result = load(out)
        excited = result["method"]["excitation_found"]
        self.assertGreaterEqual(result["band"]["low_hz"], excited["low_hz"])
        for c in result["phase_crossovers"] + result["gain_crossovers"]:
            self.assertGreaterEqual(c["freq_hz"], excited["low_hz"])
        self.assertIn("margins.band", codes(result))

    def test_band_option_restricts_the_lines(self):
        out = os.path.join(self.folder, "given.json")
        run("analyze", self.recording, "--band", "100:400", "--json", out)
        result = load(out)
        self.assertGreaterEqual(result["band"]["low_hz"], 100.0)
        self.assertLessEqual(result["band"]["high_hz"], 400.0)
        self.assertEqual(result["phase_crossovers"], [])  # the truth's is at 525 Hz
        self.assertEqual(len(result["gain_crossovers"]), 1)  # the truth's at 149 Hz
        note = [d for d in result["diagnostics"] if d["code"] == "margins.band"]
        self.assertIn("--band 100:400", note[0]["message"])

    def test_bad_band_is_a_usage_error(self):
        for band in ("400:100", "100", "a:b", "0:10"):
            with self.subTest(band=band):
                result = run("analyze", self.recording, "--band", band, check=False)
                self.assertEqual(result.returncode, USAGE, result.stderr)
                self.assertIn("LOW:HIGH", result.stderr)

    def test_band_takes_k_and_m(self):
        out = os.path.join(self.folder, "k.json")
        run("analyze", self.recording, "--band", "0.1k:0.4k", "--json", out)
        self.assertGreaterEqual(load(out)["band"]["low_hz"], 100.0)

    def test_segment_longer_than_the_record_names_one_that_fits(self):
        result = run("analyze", self.recording, "--segment", "262144", check=False)
        self.assertEqual(result.returncode, INPUT, result.stderr)
        # 160000 samples: 16384-sample segments at 50 % overlap give 18, the longest power of two giving 16 or more.
        self.assertIn("--segment 16384", result.stderr)

    def test_one_channel_in_two_roles_is_refused(self):
        # z = x would make the reference method the biased two-channel estimate without a word.
        result = run("analyze", self.recording, "--z", "x", check=False)
        self.assertEqual(result.returncode, SETTINGS, result.stderr)
        self.assertIn("the same channel 'x'", result.stderr)

    def test_band_holding_no_lines_says_so(self):
        result = run("analyze", self.recording, "--band", "4500:5000", check=False)
        self.assertEqual(result.returncode, NO_RESULT, result.stderr)
        self.assertIn("widen the band", result.stderr)


class InvertedProbe(unittest.TestCase):
    """y negated, the most common bench mistake: warned, and the verdict says why."""

    @classmethod
    def setUpClass(cls):
        cls.folder = tempfile.mkdtemp(prefix="loopaudit_evidence_")
        run("synth", os.path.join(DEMO, "servo_velocity.toml"), "--out-dir", cls.folder)
        good = os.path.join(cls.folder, "servo_velocity.csv")
        data = np.loadtxt(good, delimiter=",", skiprows=1)
        data[:, 3] = -data[:, 3]
        cls.inverted = os.path.join(cls.folder, "inverted.csv")
        np.savetxt(cls.inverted, data, delimiter=",", header="t,z,x,y", comments="", fmt="%.9g")
        cls.good = good

    @classmethod
    def tearDownClass(cls):
        shutil.rmtree(cls.folder, ignore_errors=True)

    def analyze(self, path):
        out = path + ".json"
        run("analyze", path, "--json", out)
        return load(out)

    def test_inverted_probe_is_flagged(self):
        result = self.analyze(self.inverted)
        self.assertIn("loop.sign-suspect", codes(result))
        self.assertEqual(result["stability"]["verdict"], "unstable")
        self.assertIn("sign check", result["stability"]["reason"])
        self.assertTrue(any("doubts" in a for a in result["stability"]["assumptions"]))

    def test_a_table_read_with_the_wrong_convention_is_flagged(self):
        # The servo's L has two integrators at the bottom of the band: read as
        # Y/X (series injection) it becomes -L, with a phase near 0 deg there.
        lines = os.path.join(self.folder, "servo.lines.csv")
        run("analyze", self.good, "--csv", lines, "--quiet")
        wrong = os.path.join(self.folder, "wrong.json")
        run("table", lines, "--convention", "series-injection", "--json", wrong)
        self.assertIn("loop.sign-suspect", codes(load(wrong)))
        right = os.path.join(self.folder, "right.json")
        run("table", lines, "--json", right)
        self.assertNotIn("loop.sign-suspect", codes(load(right)))

    def test_right_probe_is_not_flagged(self):
        result = self.analyze(self.good)
        self.assertNotIn("loop.sign-suspect", codes(result))
        self.assertEqual(result["stability"]["verdict"], "stable")


if __name__ == "__main__":
    unittest.main()
