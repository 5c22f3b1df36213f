"""Every number and size is bounded where it enters, with its valid range in
the message; sizes are checked before memory is taken; values whose spectra
double precision cannot hold are refused for what they are."""
import os
import unittest

import numpy as np

from cli_common import DEMO, INPUT, NO_RESULT, SETTINGS, USAGE, ExpectsFailure, TempFolder, run, run_measured


class Bounds(TempFolder, ExpectsFailure, unittest.TestCase):

    @classmethod
    def setUpClass(cls):
        super().setUpClass()
        cls.recording = cls.noise_recording("rec.csv", rows=40960)

    @classmethod
    def noise_recording(cls, name, rows, scale=1.0):
        """Noise injection into L = 1 (x = z / 2, y = -z / 2, a little noise on both), x and y times scale."""
        rng = np.random.default_rng(1)
        z = rng.standard_normal(rows)
        data = np.column_stack([np.arange(rows) * 1e-4, z, scale * (0.5 * z + 1e-3 * rng.standard_normal(rows)),
                                scale * (-0.5 * z + 1e-3 * rng.standard_normal(rows))])
        path = os.path.join(cls.folder, name)
        np.savetxt(path, data, delimiter=",", header="t,z,x,y", comments="", fmt="%.9g")
        return path

    def settings(self, text):
        path = os.path.join(self.folder, "settings.toml")
        with open(path, "w") as f:
            f.write(text)
        return path

    def test_sample_rate_is_bounded(self):
        # 1e200 and 1e-200 ran and printed frequencies of 1e+191 GHz with no margin found.
        for rate in ("1e200", "1e-200", "inf", "nan", "0"):
            with self.subTest(rate=rate):
                self.expect(SETTINGS, "analyze", self.recording, "--sample-rate", rate,
                            contains=("'sample_rate_hz'", "1e-06 Hz to 1e+12 Hz"))
        self.expect(SETTINGS, "analyze", self.recording, "--config",
                    self.settings("[input]\nsample_rate_hz = 1e200\n"), contains=("'sample_rate_hz'", "1e+12 Hz"))

    def test_a_time_column_giving_an_absurd_rate_is_refused(self):
        rows = 4096
        data = np.column_stack([np.arange(rows) * 1e-200, np.random.default_rng(2).standard_normal((rows, 3))])
        path = os.path.join(self.folder, "fast.csv")
        np.savetxt(path, data, delimiter=",", header="t,z,x,y", comments="", fmt="%.9g")
        self.expect(3, "analyze", path, contains=("sample rate of 1e+200 Hz", "1e+12 Hz", "--sample-rate"))

    def test_a_value_just_outside_a_limit_prints_as_itself(self):
        # 0.9999999 was printed as "overlap 1".
        self.expect(SETTINGS, "analyze", self.recording, "--config", self.settings("[spectral]\noverlap = 0.9999999\n"),
                    contains=("'overlap' 0.9999999 is out of range", "0 to 0.9"))

    def test_a_whole_number_too_large_for_a_double_is_out_of_range_not_a_non_number(self):
        # "segment = 9223372036854775807" said "'segment' must be a number".
        result = self.expect(SETTINGS, "analyze", self.recording, "--config",
                             self.settings("[spectral]\nsegment = 9223372036854775807\n"), contains=("'segment'",))
        self.assertIn("out of range", result.stderr)
        self.assertNotIn("must be a number", result.stderr)

    def test_injection_floor_is_a_settings_error(self):
        # -10 exited 5 (no result) instead of 4.
        self.expect(SETTINGS, "analyze", self.recording, "--config",
                    self.settings("[spectral]\ninjection_floor_db = -10\n"),
                    contains=("'injection_floor_db' -10 is out of range", "positive number of dB"))
        for text in ("injection_floor_db = nan", "injection_floor_db = inf"):
            with self.subTest(text=text):
                self.expect(SETTINGS, "analyze", self.recording, "--config", self.settings("[spectral]\n" + text + "\n"),
                            contains=("'injection_floor_db'",))
        for value in ("nan", "inf", "-3"):
            self.expect(SETTINGS, "analyze", self.recording, "--injection-floor", value,
                        contains=("'injection_floor_db'",))

    def test_a_negative_count_is_not_wrapped_round(self):
        # --skip-rows -1 became 18446744073709551615 lines to skip.
        result = run("analyze", self.recording, "--skip-rows", "-1", check=False)
        self.assertEqual(result.returncode, USAGE, result.stderr)
        self.assertIn("'-1' is not a whole number of lines", result.stderr)
        self.assertNotIn("18446744073709551615", result.stderr)

    def test_period_is_bounded_before_allocating(self):
        # --period 10^12 ended in "out of memory" (exit 1).
        for args in (("--excitation", "periodic", "--period", "1000000000000"),
                     ("--config", self.settings('[excitation]\nkind = "periodic"\nperiod_samples = 1e12\n'))):
            with self.subTest(args=args):
                self.expect(SETTINGS, "analyze", self.recording, *args, contains=("'period_samples'", "16 to 4194304"))

    def test_a_long_segment_on_a_short_record_takes_no_memory_for_it(self):
        # The lanes of a 2^22-sample segment take about 800 MB; a record of
        # 40960 samples never fills one, so none of it may be taken.
        code, stderr, _, rss = run_measured(("analyze", self.recording, "--segment", "4194304"))
        self.assertEqual(code, INPUT, stderr)
        self.assertIn("fewer than one segment of 4194304", stderr)
        self.assertLess(rss, 200, "peak RSS in MiB")
        code, stderr, _, rss = run_measured(("analyze", self.recording, "--excitation", "periodic", "--period", "4194304"))
        self.assertEqual(code, NO_RESULT, stderr)
        self.assertIn("two whole periods", stderr)
        self.assertLess(rss, 200, "peak RSS in MiB")

    def test_amplitudes_out_of_double_range_are_named(self):
        # 1e-200 gave "the reference channel is flat", 1e200 "no line carries injection power".
        for scale in (1e-200, 1e200):
            with self.subTest(scale=scale):
                path = self.noise_recording("scaled.csv", rows=40960, scale=scale)
                result = self.expect(NO_RESULT, "analyze", path, contains=("channel 'x' peaks at", "--scale x="))
                self.assertNotIn("flat", result.stderr)
                self.assertNotIn("above the floor", result.stderr)
        self.assertEqual(run("analyze", self.recording, check=False).returncode, 0)

    def test_synth_sizes_are_bounded_before_allocating(self):
        # duration_s = 1e6 at 8 kHz and a multisine period of 1e12 samples
        # ended in "out of memory" (exit 1).
        with open(os.path.join(DEMO, "buck_48v_12v.toml")) as f:
            good = f.read()
        long = good.replace("duration_s = 0.5", "duration_s = 1e6")
        periodic = good.replace('kind = "noise"', 'kind = "multisine"\nperiod_samples = 1e12')
        self.assertNotEqual(long, good)
        self.assertNotEqual(periodic, good)
        for text, message in ((long, "at most 1e8 samples"), (periodic, "period_samples must be 16 to 4194304")):
            with self.subTest(message=message):
                code, stderr, _, rss = run_measured(("synth", self.settings(text), "--out-dir", self.folder))
                self.assertEqual(code, SETTINGS, stderr)
                self.assertIn(message, stderr)
                self.assertLess(rss, 200, "peak RSS in MiB")


if __name__ == "__main__":
    unittest.main()
