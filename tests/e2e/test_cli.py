"""End-to-end tests: the loopaudit CLI as a user runs it.

Environment: LOOPAUDIT (the binary) and LOOPAUDIT_DEMO (data/demo), set by
CTest. Recordings are made with `loopaudit synth`; each check names its source.
"""
import csv
import math
import os
import shutil
import tempfile
import unittest

import numpy as np

from cli_common import DEMO, INPUT, NO_RESULT, OUTPUT, SETTINGS, USAGE, ExpectsFailure, load, run

# Check values with their sources (format: data/reference/README.md).
REFERENCE = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "data", "reference")

# Tolerances from the per-line standard deviations the tool reports: a bound
# of this many standard deviations is exceeded by chance with probability
# below 1e-4 for Gaussian errors (and the scenarios' seeds are fixed).
SIGMAS = 4.0




def reference_row(name, key):
    """The row of data/reference/<name> whose first column is `key`, numbers as floats."""
    with open(os.path.join(REFERENCE, name), newline="") as f:
        rows = list(csv.DictReader(line for line in f if line.strip() and not line.startswith("#")))
    first = next(iter(rows[0]))
    found = [r for r in rows if r[first] == key]
    if len(found) != 1:
        raise KeyError(f"data/reference/{name}: {len(found)} rows for {key}")
    return {k: (float(v) if v and k != first else v) for k, v in found[0].items()}


def nearest(freqs, f):
    return int(np.argmin(np.abs(np.log(np.asarray(freqs)) - math.log(f))))


def slope_per_decade(response, f, quantity):
    """d quantity / d log10 f of the truth response near f."""
    freq = np.asarray(response["freq_hz"])
    value = np.asarray(response["re"]) + 1j * np.asarray(response["im"])
    curve = 20 * np.log10(np.abs(value)) if quantity == "gain" else np.degrees(np.unwrap(np.angle(value)))
    k = min(max(nearest(freq, f), 1), len(freq) - 2)
    return (curve[k + 1] - curve[k - 1]) / (math.log10(freq[k + 1]) - math.log10(freq[k - 1]))


class DemoScenarios(unittest.TestCase):
    """synth then analyze recovers the truth's margins within the noise."""

    @classmethod
    def setUpClass(cls):
        cls.folder = tempfile.mkdtemp(prefix="loopaudit_e2e_")
        cls.results = {}
        for name in ("buck_48v_12v", "servo_velocity"):
            run("synth", os.path.join(DEMO, name + ".toml"), "--out-dir", cls.folder)
            stem = os.path.join(cls.folder, name)
            run("analyze", stem + ".csv", "--json", stem + ".json", "--csv", stem + ".lines.csv",
                "--truth", stem + ".truth.json")
            cls.results[name] = (load(stem + ".json"), load(stem + ".truth.json"))

    @classmethod
    def tearDownClass(cls):
        shutil.rmtree(cls.folder, ignore_errors=True)

    def check_scenario(self, name):
        measured, truth = self.results[name]
        m, t = measured["summary"], truth["summary"]
        lines = measured["response"]
        # Gain crossover and phase margin: the crossing moves by the gain's
        # standard deviation over the slope of |L|; the phase by its own.
        k = nearest(lines["freq_hz"], t["gain_crossover_hz"])
        sigma_db, sigma_deg = lines["mag_sigma_db"][k], lines["phase_sigma_deg"][k]
        gain_slope = slope_per_decade(truth["response"], t["gain_crossover_hz"], "gain")
        phase_slope = slope_per_decade(truth["response"], t["gain_crossover_hz"], "phase")
        decades = SIGMAS * sigma_db / abs(gain_slope)
        self.assertLess(abs(math.log10(m["gain_crossover_hz"] / t["gain_crossover_hz"])), decades)
        self.assertLess(abs(m["phase_margin_deg"] - t["phase_margin_deg"]),
                        SIGMAS * math.hypot(sigma_deg, phase_slope * sigma_db / gain_slope))
        # Delay margin: relative errors of PM and of the crossover add.
        relative = (SIGMAS * math.hypot(sigma_deg, phase_slope * sigma_db / gain_slope) / m["phase_margin_deg"]
                    + (10 ** decades - 1))
        self.assertLess(abs(m["delay_margin_s"] / t["delay_margin_s"] - 1), relative)
        # Gain margin: the gain's own error plus the gain change over the shift
        # of the phase crossover.
        k = nearest(lines["freq_hz"], t["phase_crossover_hz"])
        sigma_db, sigma_deg = lines["mag_sigma_db"][k], lines["phase_sigma_deg"][k]
        gain_slope = slope_per_decade(truth["response"], t["phase_crossover_hz"], "gain")
        phase_slope = slope_per_decade(truth["response"], t["phase_crossover_hz"], "phase")
        self.assertLess(abs(m["gain_margin_db"] - t["gain_margin_db"]),
                        SIGMAS * math.hypot(sigma_db, gain_slope * sigma_deg / phase_slope))
        # Modulus margin: |1 + L| moves by about |L| times its relative error.
        k = nearest(lines["freq_hz"], t["modulus_freq_hz"])
        relative_sigma = lines["mag_sigma_db"][k] / (20 / math.log(10))
        value = complex(lines["re"][k], lines["im"][k])
        self.assertLess(abs(m["modulus_margin"] - t["modulus_margin"]), SIGMAS * abs(value) * relative_sigma)
        self.assertEqual(len(measured["gain_crossovers"]), len(truth["gain_crossovers"]))
        self.assertEqual(len(measured["phase_crossovers"]), len(truth["phase_crossovers"]))
        # The loop ran in the simulation, so it is stable, and the count must say so.
        self.assertEqual(measured["stability"]["verdict"], "stable", measured["stability"]["reason"])
        self.assertEqual(truth["stability"]["verdict"], "stable")
        disk = measured["disk"]["intervals"]["alpha"]
        self.assertLessEqual(disk["ci_low"], measured["disk"]["alpha"])
        self.assertLessEqual(measured["disk"]["alpha"], disk["ci_high"])

    def test_buck_margins_match_truth(self):
        self.check_scenario("buck_48v_12v")

    def test_servo_margins_match_truth(self):
        self.check_scenario("servo_velocity")

    def test_json_has_documented_keys(self):
        measured, _ = self.results["buck_48v_12v"]
        self.assertEqual(measured["schema_version"], 1)
        for key in ("gain_crossover_hz", "phase_margin_deg", "phase_crossover_hz", "gain_margin_db",
                    "delay_margin_s", "modulus_margin", "peak_sensitivity_db"):
            self.assertIn(key, measured["summary"])
        self.assertEqual(measured["method"]["formula"], "L = -Y/X")

    def test_response_csv_feeds_the_margins_command(self):
        # Round trip: the lines written by analyze give the same margins. The
        # table carries the lines' sigmas but not their replicates, so its
        # intervals are the first-order ones analyze keeps beside its
        # jackknife intervals, and its modulus margin the value before the
        # jackknife's bias correction.
        stem = os.path.join(self.folder, "servo_velocity")
        # The CSV holds every line; analyze read margins from the excited band only.
        band = self.results["servo_velocity"][0]["band"]
        run("table", stem + ".lines.csv", "--json", stem + ".again.json",
            "--band", f"{band['low_hz'] * (1 - 1e-9)!r}:{band['high_hz'] * (1 + 1e-9)!r}")
        again = load(stem + ".again.json")["summary"]
        first = dict(self.results["servo_velocity"][0]["summary"])
        intervals = first.pop("intervals")
        self.assertEqual(self.results["servo_velocity"][0]["uncertainty"]["method"], "jackknife")
        self.assertEqual(load(stem + ".again.json")["uncertainty"]["method"], "first-order")
        for key, interval in intervals.items():
            if interval is not None and "value_before_bias_correction" in interval:
                self.assertNotEqual(first[key], interval["value_before_bias_correction"], key)
                first[key] = interval["value_before_bias_correction"]
        self.assertEqual(again.pop("possible"), first.pop("possible"))
        self.assertEqual(again.pop("status"), first.pop("status"))
        for key, value in first.items():
            if value is None:
                self.assertIsNone(again[key], key)
            else:
                self.assertAlmostEqual(again[key], value, delta=1e-9 * max(1.0, abs(value)), msg=key)
        # The CSV carries each line's sigma (mag_sigma_db), so the intervals come back too.
        for key, interval in intervals.items():
            if interval is None:
                self.assertIsNone(again["intervals"][key], key)
                continue
            self.assertEqual(interval["method"], "jackknife", key)
            self.assertEqual(again["intervals"][key]["method"], "first-order", key)
            for end in ("ci_low", "ci_high"):
                self.assertAlmostEqual(again["intervals"][key][end], interval["first_order"][end],
                                       delta=1e-6 * max(1.0, abs(interval[end])), msg=key)

    def test_text_report_prints_truth_beside_measurement(self):
        stem = os.path.join(self.folder, "buck_48v_12v")
        out = run("analyze", stem + ".csv", "--truth", stem + ".truth.json").stdout
        self.assertIn("phase margin", out)
        self.assertIn("truth", out)


class FrequencyDomainTables(unittest.TestCase):
    def setUp(self):
        self.folder = tempfile.mkdtemp(prefix="loopaudit_e2e_")

    def tearDown(self):
        shutil.rmtree(self.folder, ignore_errors=True)

    def table(self, loop, low, high, polar, name="table.csv"):
        omega = np.logspace(math.log10(low), math.log10(high), 2000)
        value = loop(1j * omega)
        path = os.path.join(self.folder, name)
        with open(path, "w") as f:
            if polar:
                f.write("freq_hz,mag_db,phase_deg\n")
                for w, v in zip(omega, value):
                    f.write(f"{w / (2 * math.pi)!r},{20 * math.log10(abs(v))!r},{math.degrees(np.angle(v))!r}\n")
            else:
                f.write("freq_hz,re,im\n")
                for w, v in zip(omega, value):
                    f.write(f"{w / (2 * math.pi)!r},{v.real!r},{v.imag!r}\n")
        return path

    def test_open_loop_unstable_pole_from_the_settings(self):
        # L = 2/(s - 1): the closed loop s + 1 is stable, with one open-loop RHP pole
        # (closed form). Without --rhp-poles the count contradicts itself and says so.
        path = self.table(lambda s: 2 / (s - 1), 0.001, 100, polar=False)
        out = os.path.join(self.folder, "m.json")
        run("table", path, "--json", out, "--rhp-poles", "1")
        stability = load(out)["stability"]
        self.assertEqual(stability["verdict"], "stable", stability["reason"])
        self.assertEqual(stability["encirclements"], -1)
        run("table", path, "--json", out)
        self.assertEqual(load(out)["stability"]["verdict"], "undecided")
        self.assertEqual(run("table", path, "--rhp-poles", "-1", check=False).returncode, USAGE)

    def test_third_order_loop_from_a_simulator_sweep(self):
        # K/(s(s+1)(s+2)), K = 1: phase crossover sqrt(2) rad/s, GM 20 log10 6 = 15.563025 dB;
        # gain crossover 0.4457479596 rad/s, PM 53.41078618 deg (data/reference/known_loops.csv).
        expected = reference_row("known_loops.csv", "1/(s(s+1)(s+2))")
        path = self.table(lambda s: 1 / (s * (s + 1) * (s + 2)), 0.01, 100, polar=True)
        out = os.path.join(self.folder, "m.json")
        run("table", path, "--json", out)
        s = load(out)["summary"]
        self.assertAlmostEqual(s["phase_crossover_hz"] * 2 * math.pi, expected["phase_crossover_rad_s"], delta=1e-5)
        self.assertAlmostEqual(s["gain_margin_db"], expected["gain_margin_db"], delta=1e-4)
        self.assertAlmostEqual(s["gain_crossover_hz"] * 2 * math.pi, expected["gain_crossover_rad_s"], delta=1e-5)
        self.assertAlmostEqual(s["phase_margin_deg"], expected["phase_margin_deg"], delta=1e-3)

    def test_series_injection_table_is_negated(self):
        # A table of the measured ratio Y/X = -L gives the margins of L.
        path = self.table(lambda s: -2 / (s * (s + 1) * (s + 2)), 0.01, 100, polar=False)
        out = os.path.join(self.folder, "m.json")
        run("table", path, "--convention", "series-injection", "--json", out)
        # 2/(s(s+1)(s+2)): GM 3 = 9.542425 dB, PM 32.61309705 deg (data/reference/known_loops.csv).
        expected = reference_row("known_loops.csv", "2/(s(s+1)(s+2))")
        s = load(out)["summary"]
        self.assertAlmostEqual(s["gain_margin_db"], expected["gain_margin_db"], delta=1e-4)
        self.assertAlmostEqual(s["phase_margin_deg"], expected["phase_margin_deg"], delta=1e-3)

    def test_no_crossover_in_band_is_null(self):
        path = self.table(lambda s: 1 / (s * (s + 1) * (s + 2)), 0.01, 0.1, polar=False)
        out = os.path.join(self.folder, "m.json")
        result = run("table", path, "--json", out)
        s = load(out)["summary"]
        self.assertIsNone(s["phase_margin_deg"])
        self.assertIsNone(s["gain_crossover_hz"])
        self.assertIn("none in band", result.stdout)


class BadInput(ExpectsFailure, unittest.TestCase):
    """Each bad input: one clear message, a documented exit code, no output written."""

    def setUp(self):
        self.folder = tempfile.mkdtemp(prefix="loopaudit_e2e_")

    def tearDown(self):
        shutil.rmtree(self.folder, ignore_errors=True)

    def write(self, text, name="rec.csv"):
        path = os.path.join(self.folder, name)
        with open(path, "w") as f:
            f.write(text)
        return path

    def good_recording(self, rows=40960, columns="t,z,x,y"):
        rng = np.random.default_rng(1)
        z = rng.standard_normal(rows)
        lines = [columns]
        for n in range(rows):
            lines.append(f"{n * 1e-4:.6f},{z[n]:.6f},{0.5 * z[n]:.6f},{-0.5 * z[n]:.6f}")
        return "\n".join(lines) + "\n"

    def test_missing_file(self):
        self.expect(INPUT, "analyze", os.path.join(self.folder, "none.csv"), contains=("none.csv", "cannot open"))

    def test_unreadable_header(self):
        self.expect(INPUT, "analyze", self.write("1,2,3\n4,5,6\n"), contains=("line 1", "must name every column"))

    def test_missing_channel(self):
        path = self.write(self.good_recording(columns="t,inj,x,y"))
        self.expect(INPUT, "analyze", path, contains=("no channel named 'z'", "'inj'", "x-y"))

    def test_misnamed_channel_option(self):
        path = self.write(self.good_recording())
        self.expect(INPUT, "analyze", path, "--y", "vout", contains=("no channel named 'vout'",))

    def test_non_numeric_cell(self):
        text = self.good_recording().splitlines()
        text[7] = text[7].replace(text[7].split(",")[2], "1.2.3")
        self.expect(INPUT, "analyze", self.write("\n".join(text) + "\n"), contains=("line 8, column 3 ('x')", "1.2.3"))

    def test_nan_cell(self):
        text = self.good_recording().splitlines()
        text[9] = text[9].rsplit(",", 1)[0] + ",NaN"
        self.expect(INPUT, "analyze", self.write("\n".join(text) + "\n"), contains=("line 10, column 4", "finite"))

    def test_time_not_increasing(self):
        text = self.good_recording().splitlines()
        text[100], text[101] = text[101], text[100]
        self.expect(INPUT, "analyze", self.write("\n".join(text) + "\n"), contains=("line 101", "time"))

    def test_time_not_uniform(self):
        text = self.good_recording().splitlines()
        del text[2000:2010]
        self.expect(INPUT, "analyze", self.write("\n".join(text) + "\n"), contains=("line 2001", "not uniform"))

    def test_record_shorter_than_a_segment(self):
        self.expect(INPUT, "analyze", self.write(self.good_recording(rows=1000)),
                    contains=("1000 samples", "fewer than one segment of 4096"))

    def test_flat_reference(self):
        text = "t,z,x,y\n" + "".join(f"{n * 1e-4:.6f},1,{math.sin(n):.6f},{math.cos(n):.6f}\n" for n in range(5000))
        self.expect(NO_RESULT, "analyze", self.write(text), contains=("reference channel is flat",))

    def test_bad_setting(self):
        self.expect(SETTINGS, "analyze", self.write(self.good_recording()), "--window", "kaiser",
                    contains=("unknown window 'kaiser'",))
        self.expect(SETTINGS, "analyze", self.write(self.good_recording()), "--overlap", "0.99",
                    contains=("overlap",))

    def test_usage_error(self):
        result = run("analyze", check=False)
        self.assertEqual(result.returncode, USAGE)
        self.assertEqual(run("frobnicate", check=False).returncode, USAGE)

    def test_an_output_on_an_input_is_refused_and_the_input_kept(self):
        path = self.write(self.good_recording())
        with open(path, "rb") as f:
            before = f.read()
        link = os.path.join(self.folder, "link.csv")
        os.symlink(path, link)
        # By name, through a link (same device and inode), and into --out-dir under the input's own name.
        for args in (("--csv", path), ("--json", link), ("--json", os.path.join(self.folder, "rec.csv"),
                                                          "--out-dir", self.folder)):
            with self.subTest(args=args):
                result = run("analyze", path, *args, check=False)
                self.assertEqual(result.returncode, USAGE, result.stderr)
                self.assertIn("is the input", result.stderr)
                self.assertIn(path, result.stderr)
        with open(path, "rb") as f:
            self.assertEqual(f.read(), before)

    def test_two_outputs_on_one_path_are_refused(self):
        path = self.write(self.good_recording())
        same = os.path.join(self.folder, "a")
        result = run("analyze", path, "--json", same, "--csv", os.path.join(self.folder, ".", "a"), check=False)
        self.assertEqual(result.returncode, USAGE, result.stderr)
        self.assertIn("--json, --csv", result.stderr)
        self.assertIn("one file", result.stderr)
        self.assertFalse(os.path.exists(same))

    def test_segment_sizes_are_checked_before_allocating(self):
        path = self.write(self.good_recording())
        # A minus sign wrapped round to 1.8e19 and ended in an internal error (exit 1).
        result = run("analyze", path, "--segment", "-4096", check=False)
        self.assertEqual(result.returncode, USAGE, result.stderr)
        self.assertIn("not a whole number of samples", result.stderr)
        # Over the limit (2^22 samples): refused by name before gigabytes are taken.
        self.expect(SETTINGS, "analyze", path, "--segment", "20000000", contains=("'segment'", "8 to 4194304"))

    def test_unwritable_output(self):
        path = self.write(self.good_recording())
        self.expect(OUTPUT, "analyze", path, "--json", os.path.join(self.folder, "no", "such", "dir", "r.json"),
                    contains=("r.json", "cannot write"))

    def test_failed_run_keeps_the_old_output(self):
        out = self.write("previous results\n", name="r.json")
        self.expect(INPUT, "analyze", self.write("t,z\n"), "--json", out)
        with open(out) as f:
            self.assertEqual(f.read(), "previous results\n")
        self.assertEqual(sorted(os.listdir(self.folder)), ["r.json", "rec.csv"])

    def test_a_killed_run_leaves_no_file_behind(self):
        # A run killed while writing left NAME.tmp.PID files, one cut mid-row,
        # that no later run removed. Kill synth (it writes a 25 MB recording)
        # at moments spread over its run: whatever is left must be whole.
        import signal
        import subprocess
        import time
        from cli_common import BINARY
        scenario = os.path.join(DEMO, "buck_48v_12v.toml")
        for delay in (0.1, 0.3, 0.5, 0.7, 0.9):
            out = tempfile.mkdtemp(dir=self.folder)
            with self.subTest(delay=delay):
                child = subprocess.Popen([BINARY, "synth", scenario, "--out-dir", out], stdout=subprocess.DEVNULL)
                time.sleep(delay)
                child.send_signal(signal.SIGKILL)
                child.wait()
                names = os.listdir(out)
                self.assertFalse([n for n in names if ".tmp." in n], names)
                recording = os.path.join(out, "buck_48v_12v.csv")
                if os.path.exists(recording):
                    with open(recording, "rb") as f:
                        f.seek(-200, os.SEEK_END)
                        last = f.read().split(b"\n")[-2]
                    self.assertEqual(last.count(b","), 3)  # the last row whole
                    self.assertEqual(os.path.getsize(recording) > 20_000_000, True)

    def test_bad_scenario(self):
        path = self.write('name = "x"\n[recording]\nsample_rate_hz = -1\nduration_s = 1\n', name="s.toml")
        self.expect(SETTINGS, "synth", path, "--out-dir", self.folder, contains=("[injection]",))

    def test_whole_numbers_out_of_range(self):
        # Found by fuzzing: a huge seed once overflowed its conversion to an integer.
        with open(os.path.join(DEMO, "servo_velocity.toml")) as f:
            good = f.read()
        bad = good.replace("seed = 77", "seed = 1e300")
        self.assertNotEqual(bad, good)
        self.expect(SETTINGS, "synth", self.write(bad, name="s.toml"), "--out-dir", self.folder,
                    contains=("'seed' 1e+300 is out of range", "a whole number from 0"))
        self.expect(SETTINGS, "analyze", self.write(self.good_recording()), "--config",
                    self.write("[spectral]\nsegment = 2.5\n", name="c.toml"), contains=("'segment'",))

    def test_margin_settings_from_the_settings_file(self):
        settings = self.write("[margins]\nconfidence = 0.9\n[loop]\nopen_loop_rhp_poles = 2\n", name="c.toml")
        out = os.path.join(self.folder, "r.json")
        run("analyze", self.write(self.good_recording()), "--config", settings, "--json", out)
        result = load(out)
        self.assertEqual(result["confidence"], 0.9)
        self.assertEqual(result["stability"]["open_loop_rhp_poles"], 2)
        self.expect(SETTINGS, "analyze", self.write(self.good_recording()), "--config",
                    self.write("[margins]\nconfidence = 1.5\n", name="c.toml"), contains=("'confidence'",))

    def test_quiet_when_not_a_terminal(self):
        result = run("analyze", self.write(self.good_recording()))
        self.assertEqual(result.stderr, "")


class EveryFormat(unittest.TestCase):
    """The same recording as text, raw binary, WAV and HDF5 gives the same margins."""

    @classmethod
    def setUpClass(cls):
        import h5py
        from scipy.io import wavfile
        cls.folder = tempfile.mkdtemp(prefix="loopaudit_e2e_")
        run("synth", os.path.join(DEMO, "servo_velocity.toml"), "--out-dir", cls.folder)
        text = os.path.join(cls.folder, "servo_velocity.csv")
        data = np.loadtxt(text, delimiter=",", skiprows=1)[:, 1:]  # z, x, y as the text reader parses them
        cls.paths = {"text": (text, None)}
        raw = os.path.join(cls.folder, "rec.bin")
        data.astype(">f8").tofile(raw)
        cls.paths["raw"] = (raw, cls.write(cls, "raw.toml", '[input]\nsample_type = "float64"\nbyte_order = "big"\n'
                                                        'sample_rate_hz = 8000\n'))
        wav = os.path.join(cls.folder, "rec.wav")
        wavfile.write(wav, 8000, data.astype(np.float32))
        cls.paths["wav"] = (wav, None)
        h5 = os.path.join(cls.folder, "rec.h5")
        with h5py.File(h5, "w") as f:
            f.create_dataset("bench/loop", data=data).attrs["sample_rate_hz"] = 8000.0
        cls.paths["hdf5"] = (h5, cls.write(cls, "h5.toml", '[input]\ndataset = "/bench/loop"\n'))
        cls.summaries = {}
        for kind, (path, settings) in cls.paths.items():
            out = os.path.join(cls.folder, kind + ".json")
            run("analyze", path, "--json", out, *(["--config", settings] if settings else []))
            cls.summaries[kind] = load(out)["summary"]

    @classmethod
    def tearDownClass(cls):
        shutil.rmtree(cls.folder, ignore_errors=True)

    def write(self, name, text):
        path = os.path.join(self.folder, name)
        with open(path, "w") as f:
            f.write(text)
        return path

    def test_binary_formats_agree_with_text(self):
        # raw float64 and HDF5 hold the very doubles the text reader parses: identical
        # results; WAV stores float32 (7 digits), which moves the margins by far less
        # than their noise (0.01 deg and 0.01 dB allowed).
        for kind, delta in [("raw", 1e-9), ("hdf5", 1e-9), ("wav", 0.01)]:
            for key in ("phase_margin_deg", "gain_margin_db", "modulus_margin"):
                self.assertAlmostEqual(self.summaries[kind][key], self.summaries["text"][key], delta=delta,
                                       msg=f"{kind} {key}")

    def test_layout_mismatches_are_reported(self):
        raw, settings = self.paths["raw"]
        cut = os.path.join(self.folder, "cut.bin")
        with open(raw, "rb") as f, open(cut, "wb") as g:
            g.write(f.read()[:-5])  # a file cut short inside a frame
        out = os.path.join(self.folder, "cut.json")
        run("analyze", cut, "--config", settings, "--json", out)
        self.assertIn("ingest.partial-frame", [d["code"] for d in load(out)["diagnostics"]])
        result = run("analyze", self.paths["wav"][0], "--channels", "a,b,c,d", check=False)
        self.assertEqual(result.returncode, SETTINGS)
        self.assertIn("4 channel names given but the file has 3 channels", result.stderr)
        result = run("analyze", raw, "--format", "raw", check=False)
        self.assertEqual(result.returncode, SETTINGS)
        self.assertIn("needs its sample rate", result.stderr)
        bad = self.write("bad_h5.toml", '[input]\ndataset = "/no/such"\n')
        result = run("analyze", self.paths["hdf5"][0], "--config", bad, check=False)
        self.assertEqual(result.returncode, INPUT)
        self.assertIn("no dataset '/no/such'", result.stderr)
        empty = self.write("empty.wav", "")
        self.assertEqual(run("analyze", empty, check=False).returncode, INPUT)
        typo = self.write("typo.toml", "[input]\nsampel_rate_hz = 8000\n")
        result = run("analyze", raw, "--config", typo, check=False)
        self.assertEqual(result.returncode, SETTINGS)
        self.assertIn("unknown key 'sampel_rate_hz'", result.stderr)


class Excitations(unittest.TestCase):
    """The stepped-sine demo end to end, inspect, and forcing an excitation."""

    @classmethod
    def setUpClass(cls):
        cls.folder = tempfile.mkdtemp(prefix="loopaudit_e2e_")
        run("synth", os.path.join(DEMO, "servo_stepped.toml"), "--out-dir", cls.folder)
        run("synth", os.path.join(DEMO, "servo_velocity.toml"), "--out-dir", cls.folder)

    @classmethod
    def tearDownClass(cls):
        shutil.rmtree(cls.folder, ignore_errors=True)

    def test_stepped_demo_matches_truth(self):
        stem = os.path.join(self.folder, "servo_stepped")
        run("analyze", stem + ".csv", "--json", stem + ".json")
        measured, truth = load(stem + ".json"), load(stem + ".truth.json")
        self.assertEqual(measured["method"]["excitation"], "stepped")
        self.assertEqual(measured["method"]["excitation_found"]["dwells"], 30)  # the scenario's points
        # One line per dwell; per-line sigmas near the crossover are about 0.3 deg
        # here, so 4 sigma of the crossing fit stays within 1.5 deg and 0.3 dB.
        self.assertAlmostEqual(measured["summary"]["phase_margin_deg"], truth["summary"]["phase_margin_deg"], delta=1.5)
        self.assertAlmostEqual(measured["summary"]["gain_margin_db"], truth["summary"]["gain_margin_db"], delta=0.3)

    def test_inspect_reports_the_excitation(self):
        out = run("inspect", os.path.join(self.folder, "servo_stepped.csv")).stdout
        self.assertIn("stepped, 30 dwells", out)
        out = run("inspect", os.path.join(self.folder, "servo_velocity.csv")).stdout
        self.assertIn("excitation  broadband", out)

    def test_dwells_from_a_schedule_or_a_marker_channel(self):
        # The demo's schedule: 30 log-spaced frequencies from 20 Hz to 2 kHz, 0.4 s each.
        frequencies = [20 * 100 ** (i / 29) for i in range(30)]
        schedule = os.path.join(self.folder, "schedule.csv")
        with open(schedule, "w") as f:
            f.write("start_s,length_s,freq_hz\n")
            f.writelines(f"{0.4 * i!r},0.4,{fr!r}\n" for i, fr in enumerate(frequencies))
        rec = os.path.join(self.folder, "servo_stepped.csv")
        out = os.path.join(self.folder, "scheduled.json")
        run("analyze", rec, "--schedule", schedule, "--json", out)
        scheduled = load(out)
        self.assertEqual(scheduled["band"]["lines"], 30)
        self.assertEqual([d["code"] for d in scheduled["diagnostics"] if d["code"].startswith("excitation")], [])
        # The same dwells from a marker channel the generator would record beside the signals.
        data = np.loadtxt(rec, delimiter=",", skiprows=1)
        marker = np.array([frequencies[min(int(t / 0.4 + 1e-9), 29)] for t in data[:, 0]])
        marked = os.path.join(self.folder, "marked.csv")
        np.savetxt(marked, np.column_stack([data, marker]), delimiter=",", header="t,z,x,y,f_set", comments="",
                   fmt="%.10g")
        run("analyze", marked, "--marker", "f_set", "--json", out)
        self.assertEqual(load(out)["band"]["lines"], 30)
        self.assertAlmostEqual(load(out)["summary"]["phase_margin_deg"], scheduled["summary"]["phase_margin_deg"],
                               delta=0.05)
        # A schedule that does not belong to the recording is called out.
        wrong = os.path.join(self.folder, "wrong.csv")
        with open(wrong, "w") as f:
            f.write("freq_hz,start_s,length_s\n")
            f.writelines(f"{fr * 1.1!r},{0.4 * i!r},0.4\n" for i, fr in enumerate(frequencies))
        run("analyze", rec, "--schedule", wrong, "--json", out)
        self.assertIn("excitation.frequency-mismatch", [d["code"] for d in load(out)["diagnostics"]])

    def test_forcing_a_periodic_analysis_on_noise_says_what_is_missing(self):
        result = run("analyze", os.path.join(self.folder, "servo_velocity.csv"), "--excitation", "periodic", check=False)
        self.assertEqual(result.returncode, NO_RESULT)
        self.assertIn("no period found", result.stderr)


class ReferenceFromDifference(unittest.TestCase):
    def test_injection_computed_as_x_minus_y(self):
        # Without probe noise, z = x - y exactly (DESIGN.md, series injection),
        # so the two ways give the same margins to rounding of the printed samples.
        folder = tempfile.mkdtemp(prefix="loopaudit_e2e_")
        try:
            scenario = os.path.join(folder, "quiet.toml")
            with open(os.path.join(DEMO, "servo_velocity.toml")) as f:
                text = f.read().replace("x_rms = 0.1", "x_rms = 0.0").replace("y_rms = 0.1", "y_rms = 0.0")
            with open(scenario, "w") as f:
                f.write(text)
            run("synth", scenario, "--out-dir", folder)
            rec = os.path.join(folder, "servo_velocity.csv")
            run("analyze", rec, "--json", os.path.join(folder, "a.json"))
            run("analyze", rec, "--z", "x-y", "--json", os.path.join(folder, "b.json"))
            a = load(os.path.join(folder, "a.json"))["summary"]
            b = load(os.path.join(folder, "b.json"))["summary"]
            self.assertAlmostEqual(a["phase_margin_deg"], b["phase_margin_deg"], delta=0.01)
            self.assertAlmostEqual(a["gain_margin_db"], b["gain_margin_db"], delta=0.01)
        finally:
            shutil.rmtree(folder, ignore_errors=True)


if __name__ == "__main__":
    unittest.main(verbosity=2)
