"""End-to-end tests: files as instruments write them.

Scope and DAQ exports with metadata lines above the header and decimal
commas, analyzer-style frequency-response tables, HDF5 files with no settings
file, raw binary layouts, WAV files with a disagreeing rate, probe factors on
the command line, and outputs to standard output. Every file is made here from
a simulated recording (`loopaudit synth`); the export shapes are invented, in
the form such exports commonly take.

Environment: LOOPAUDIT (the binary) and LOOPAUDIT_DEMO (data/demo), set by CTest.
"""
import json
import os
import shutil
import tempfile
import unittest

import numpy as np

from cli_common import DEMO, INPUT, SETTINGS, USAGE, ExpectsFailure, codes, load, run


# Exit codes documented in README.md.
RATE = 8000  # servo_velocity.toml records at 8 kHz





class Files(ExpectsFailure, unittest.TestCase):
    one_line_message = False

    @classmethod
    def setUpClass(cls):
        cls.folder = tempfile.mkdtemp(prefix="loopaudit_files_")
        run("synth", os.path.join(DEMO, "servo_velocity.toml"), "--out-dir", cls.folder)
        cls.text = os.path.join(cls.folder, "servo_velocity.csv")
        cls.data = np.loadtxt(cls.text, delimiter=",", skiprows=1)[:, 1:]  # z, x, y as the text reader parses them
        out = cls.path("plain.json")
        run("analyze", cls.text, "--json", out, "--csv", cls.path("plain.lines.csv"))
        cls.plain = load(out)

    @classmethod
    def tearDownClass(cls):
        shutil.rmtree(cls.folder, ignore_errors=True)

    @classmethod
    def path(cls, name):
        return os.path.join(cls.folder, name)

    def write(self, name, text):
        with open(self.path(name), "w", newline="") as f:
            f.write(text)
        return self.path(name)

    def assertSameMargins(self, results, delta=1e-9):
        for key in ("phase_margin_deg", "gain_margin_db", "gain_crossover_hz"):
            self.assertAlmostEqual(results["summary"][key], self.plain["summary"][key], delta=delta, msg=key)

    def scope_export(self, name="scope.csv"):
        """Metadata lines, channels named CH1..CH3, no time column, ';' and decimal commas."""
        lines = ["Model;DSO 4104", "Serial Number;XY12345", "Sample Interval;1,25E-04", "Record Length;%d" % len(self.data),
                 "", "CH1 [V];CH2 [V];CH3 [V]"]
        for row in self.data:
            lines.append(";".join(repr(float(v)).replace(".", ",") for v in row))
        return self.write(name, "\r\n".join(lines) + "\r\n")

    # Scope and DAQ exports.

    def test_scope_export_with_metadata_and_decimal_commas(self):
        scope = self.scope_export()
        # No time column: the message names --sample-rate and the metadata line that states it.
        self.expect(SETTINGS, "analyze", scope,
                    contains=("--sample-rate HZ", "line 3 ('Sample Interval;1,25E-04') suggests --sample-rate 8000"))
        # Channel roles: the message names the option and lists the channels found.
        self.expect(INPUT, "analyze", scope, "--sample-rate", RATE,
                    contains=("no channel 'z' (--z), 'x' (--x), 'y' (--y) among the channels 'CH1' 'CH2' 'CH3'",
                              "--z NAME --x NAME --y NAME"))
        self.expect(INPUT, "analyze", scope, "--sample-rate", RATE, "--z", "CH1", "--x", "CH2",
                    contains=("no channel named 'y' for y", "'CH1' 'CH2' 'CH3'", "--y NAME"))
        out = self.path("scope.json")
        run("analyze", scope, "--sample-rate", RATE, "--z", "CH1", "--x", "CH2", "--y", "CH3", "--json", out)
        # repr() prints each double exactly, so the parsed samples are the same doubles.
        self.assertSameMargins(load(out))

    def test_skip_rows_names_the_header(self):
        # A calibration table above the header passes for a header of two columns over rows of numbers.
        text = "Range,Offset\n10,0\n10,0\n10,0\nt,z,x,y\n" + "".join(
            f"{n / RATE!r},{z!r},{x!r},{y!r}\n" for n, (z, x, y) in enumerate(self.data))
        path = self.write("skip.csv", text)
        self.expect(SETTINGS, "analyze", path, contains=("'Range' 'Offset'", "taken from line 1", "--skip-rows N"))
        self.expect(INPUT, "analyze", path, "--sample-rate", RATE, "--z", "x-y", "--x", "Range", "--y", "Offset",
                    contains=("line 5, column 1 ('Range'): not a number: 't'", "taken from line 1", "--skip-rows N"))
        out = self.path("skip.json")
        run("analyze", path, "--skip-rows", 4, "--json", out)
        self.assertSameMargins(load(out), delta=1e-6)  # stamps printed by repr(n / RATE) give the same rate
        settings = self.write("skip.toml", "[input]\nlines_before_header = 4\n")
        run("analyze", path, "--config", settings, "--json", out)
        self.assertSameMargins(load(out), delta=1e-6)

    def test_trailing_delimiters_and_a_units_row(self):
        # A delimiter ends every line, and a row of units under the header marks X as the time.
        text = "X,CH1,CH2,CH3,\r\nSecond,Volt,Volt,Volt,\r\n" + "".join(
            f"{n / RATE!r},{z!r},{x!r},{y!r},\r\n" for n, (z, x, y) in enumerate(self.data))
        path = self.write("units_row.csv", text)
        out = self.path("units_row.json")
        run("analyze", path, "--z", "CH1", "--x", "CH2", "--y", "CH3", "--json", out)
        self.assertSameMargins(load(out), delta=1e-6)  # stamps printed by repr(n / RATE) give the same rate
        self.assertNotIn("ingest.channels-unused", codes(load(out)))
        # --channels names the channels of files without names: here a warning says it is not used.
        result = run("analyze", path, "--z", "CH1", "--x", "CH2", "--y", "CH3", "--channels", "a,b,c", "--json", out)
        self.assertIn("ingest.channels-unused", codes(load(out)))
        self.assertIn("--channels", result.stdout + result.stderr)
        self.assertSameMargins(load(out), delta=1e-6)
        rows = text.split("\r\n")
        rows[10] += "7"  # line 11, past the rows the header search checks
        bad = self.write("bad_trailing.csv", "\r\n".join(rows))
        self.expect(INPUT, "analyze", bad, "--z", "CH1", "--x", "CH2", "--y", "CH3",
                    contains=("line 11, column 5: '7' under the header's empty last cell",))

    # Probe factors on the command line.

    def test_probe_scale_on_the_command_line(self):
        # y as a x10 probe with inverted polarity records it: -y / 10.
        recorded = self.data * np.array([1.0, 1.0, -0.1])
        text = "t,z,x,y\n" + "".join(f"{n / RATE!r},{z!r},{x!r},{y!r}\n" for n, (z, x, y) in enumerate(recorded))
        path = self.write("probe.csv", text)
        out = self.path("probe.json")
        run("analyze", path, "--scale", "y=-10", "--json", out)
        self.assertSameMargins(load(out), delta=1e-6)  # -y/10 * -10 differs from y in the last bit
        run("analyze", path, "--scale", "x=1,y=-10", "--json", out)
        self.assertSameMargins(load(out), delta=1e-6)
        self.expect(USAGE, "analyze", path, "--scale", "y:-10", contains=("NAME=FACTOR",))
        self.expect(SETTINGS, "analyze", path, "--scale", "vout=10", contains=("'vout'", "'z' 'x' 'y'"))

    # Outputs to standard output.

    def test_outputs_to_standard_output(self):
        result = run("analyze", self.text, "--json", "-", cwd=self.folder)
        self.assertEqual(json.loads(result.stdout)["summary"], self.plain["summary"])
        self.assertIn("gain crossovers", result.stderr)  # the table goes to stderr
        self.assertFalse(os.path.exists(self.path("-")), "no file named '-'")
        result = run("analyze", self.text, "--csv", "-")
        with open(self.path("plain.lines.csv")) as f:
            self.assertEqual(result.stdout, f.read())
        self.expect(USAGE, "analyze", self.text, "--json", "-", "--csv", "-", contains=("only one output",))
        self.expect(USAGE, "analyze", self.text, "--plots", "-", contains=("names a folder",))
        result = run("table", self.path("plain.lines.csv"), "--report", "-")
        self.assertTrue(result.stdout.startswith("<!DOCTYPE html>"), result.stdout[:80])

    # Frequency-response tables as analyzers and simulators export them.

    def analyzer_table(self, name, rows, header="Frequency (Hz),Gain (dB),Phase (deg)"):
        lines = ["Analyzer,FRA-1", "Date,2026-12-02", "", header]
        lines += [f"{f!r},{g!r},{p!r}" for f, g, p in rows]
        return self.write(name, "\n".join(lines) + "\n")

    def test_analyzer_table_descending(self):
        # The same lines in descending order give the margins they give in
        # ascending order. (Not the recording's own margins: a table without
        # sigma columns holds exact lines, interpolated between brackets,
        # where analyze fits its measured lines over a wider window.)
        lines = np.loadtxt(self.path("plain.lines.csv"), delimiter=",", skiprows=1, usecols=(0, 3, 4))
        ascending, descending = self.path("fra_up.json"), self.path("fra.json")
        run("table", self.analyzer_table("fra_up.csv", lines), "--json", ascending)
        run("table", self.analyzer_table("fra.csv", lines[::-1]), "--json", descending)
        results = load(descending)
        self.assertIn("table.sorted", codes(results))
        self.assertNotIn("table.sorted", codes(load(ascending)))
        self.assertEqual(results["summary"], load(ascending)["summary"])
        out = descending
        # mag_db and phase_deg are printed to a few digits in the lines CSV,
        # and the recording's margins come from a fit over its noisy lines:
        # within its interval.
        low, high = (self.plain["summary"]["intervals"]["phase_margin_deg"][k] for k in ("ci_low", "ci_high"))
        self.assertTrue(low <= results["summary"]["phase_margin_deg"] <= high)
        repeated = self.analyzer_table("repeat.csv", [(100.0, 0.0, -90.0), (200.0, -6.0, -120.0), (100.0, 1.0, -80.0)])
        self.expect(INPUT, "table", repeated, contains=("100 Hz on lines 5 and 7",))
        unknown = self.analyzer_table("unknown.csv", [(100.0, 0.0, -90.0)], header="Hertz,Level,Angle")
        self.expect(INPUT, "table", unknown, contains=("'Hertz' 'Level' 'Angle'", "freq_hz freq frequency f",
                                                       "--freq-column"))
        named = self.analyzer_table("named.csv", lines, header="Hertz,Level,Angle")
        run("table", named, "--freq-column", "Hertz", "--gain-column", "Level", "--json", out)
        self.assertAlmostEqual(load(out)["summary"]["phase_margin_deg"], results["summary"]["phase_margin_deg"],
                               delta=1e-9)

    def test_simulator_and_iso_header_tables(self):
        lines = np.loadtxt(self.path("plain.lines.csv"), delimiter=",", skiprows=1, usecols=(0, 3, 4))
        reference = self.path("reference.json")
        run("table", self.analyzer_table("reference.csv", lines), "--json", reference)
        expected = load(reference)["summary"]
        # One complex value per cell, tab separated, the degree sign in Latin-1 as Windows programs write it.
        ac = self.path("ac.txt")
        with open(ac, "wb") as f:
            f.write(b"Freq.\tV(out)/V(in)\r\n")
            for freq, gain, phase in lines:
                f.write(f"{freq!r}\t({gain!r}dB,{phase!r}\u00b0)\r\n".encode("latin-1"))
        # Names with ' / unit', semicolons and decimal commas.
        iso = self.path("iso.csv")
        with open(iso, "w", encoding="utf-8") as f:
            f.write("Frequency / Hz;Gain / dB;Phase / \u00b0\n")
            f.writelines(f"{freq!r};{gain!r};{phase!r}\n".replace(".", ",") for freq, gain, phase in lines)
        for path in (ac, iso):
            out = path + ".json"
            run("table", path, "--json", out)
            for key in ("phase_margin_deg", "gain_crossover_hz"):
                self.assertAlmostEqual(load(out)["summary"][key], expected[key], delta=1e-9, msg=path + " " + key)

    # HDF5 without a settings file.

    def test_hdf5_without_settings(self):
        import h5py
        one = self.path("one.h5")
        with h5py.File(one, "w") as f:
            f.create_dataset("acq/samples", data=self.data).attrs["sample_rate_hz"] = float(RATE)
        out = self.path("h5.json")
        result = run("analyze", one, "--json", out)
        self.assertIn("read as dataset '/acq/samples' (the file's only candidate)", result.stdout)
        self.assertSameMargins(load(out))
        columns = self.path("columns.h5")
        with h5py.File(columns, "w") as f:
            f.attrs["sample_rate_hz"] = float(RATE)
            for k, name in enumerate("xyz"):  # stored in another order than z, x, y
                f.create_dataset(name, data=self.data[:, "zxy".index(name)])
        run("analyze", columns, "--json", out)
        self.assertSameMargins(load(out))
        two = self.path("two.h5")
        with h5py.File(two, "w") as f:
            f.attrs["sample_rate_hz"] = float(RATE)
            f.create_dataset("run1", data=self.data)
            f.create_dataset("run2", data=self.data)
        self.expect(SETTINGS, "analyze", two, contains=("'/run1' (2-D, %d x 3)" % len(self.data), "'/run2'",
                                                        "dataset = ", "--config FILE"))
        settings = self.write("h5.toml", '[input]\ndataset = "/run3"\n')
        self.expect(INPUT, "analyze", two, "--config", settings, contains=("no dataset '/run3'; the file holds '/run1'",))

    # Raw binary: the layout is echoed.

    def test_raw_layout_is_echoed(self):
        raw = self.path("rec.bin")
        self.data.astype("<f4").tofile(raw)
        result = run("analyze", raw, "--sample-rate", RATE, "--sample-type", "float32")
        self.assertIn("read as float32, little-endian, 3 channels interleaved", result.stdout)
        counts = self.path("counts.bin")
        np.round(self.data * 1000).astype("<i2").tofile(counts)
        out = self.path("counts.json")
        result = run("analyze", counts, "--sample-rate", RATE, "--json", out)
        self.assertIn("read as int16 (assumed), little-endian", result.stdout)
        self.assertIn("ingest.sample-type-assumed", codes(load(out)))
        self.expect(SETTINGS, "analyze", raw, contains=("--sample-rate HZ",))

    # WAV: a stated rate that disagrees with the file's.

    def test_wav_rate_disagreement_is_a_warning(self):
        from scipy.io import wavfile
        wav = self.path("rec.wav")
        wavfile.write(wav, RATE, self.data.astype(np.float32))
        out = self.path("wav.json")
        run("analyze", wav, "--json", out)
        self.assertNotIn("ingest.rate-disagrees", codes(load(out)))
        run("analyze", wav, "--sample-rate", 2 * RATE, "--json", out)
        found = [d for d in load(out)["diagnostics"] if d["code"] == "ingest.rate-disagrees"]
        self.assertEqual(len(found), 1)
        self.assertEqual(found[0]["severity"], "warning")
        self.assertIn("the file says 8000 Hz", found[0]["message"])

    def test_inspect_lists_the_channels_before_the_roles_are_named(self):
        # What a new user runs first on a scope export: the channel names, not an error.
        text = "Time,CH1,CH2,CH3\n" + "".join(
            f"{n / RATE!r},{z!r},{x!r},{y!r}\n" for n, (z, x, y) in enumerate(self.data))
        scope = self.write("channels.csv", text)
        result = run("inspect", scope)
        self.assertIn("channels CH1 CH2 CH3", result.stdout)
        self.assertIn("inspect.roles-missing", result.stdout)
        self.assertIn("--z NAME --x NAME --y NAME", result.stdout)
        named = run("inspect", scope, "--z", "CH1", "--x", "CH2", "--y", "CH3")
        self.assertIn("excitation  broadband", named.stdout)

    def test_hdf5_rate_attribute_must_be_one_positive_number(self):
        # An array was read whole into one double (a stack overflow with 4000
        # elements, its first value silently with 2); strings and negatives
        # were "no attribute".
        import h5py
        cases = {"array2": np.array([RATE, RATE], dtype=float), "array4000": np.full(4000, float(RATE)),
                 "text": str(RATE), "negative": -1.0}
        for name, attribute in cases.items():
            with self.subTest(attribute=name):
                path = self.path(name + ".h5")
                with h5py.File(path, "w") as f:
                    f.create_dataset("loop", data=self.data).attrs["sample_rate_hz"] = attribute
                result = run("analyze", path, "--quiet", check=False)
                self.assertEqual(result.returncode, SETTINGS, result.stderr)
                self.assertIn("'sample_rate_hz'", result.stderr)
                self.assertIn("--sample-rate HZ", result.stderr)

    def test_two_channel_wav_takes_the_injection_as_x_minus_y(self):
        # A sound card with two inputs records x and y; --z x-y then needs no --channels.
        from scipy.io import wavfile
        wav = self.path("xy.wav")
        wavfile.write(wav, RATE, self.data[:, 1:].astype(np.float32))
        out = self.path("xy.json")
        run("analyze", wav, "--z", "x-y", "--json", out)
        self.assertEqual(load(out)["input"]["roles"], {"z": "x-y", "x": "x", "y": "y"})


if __name__ == "__main__":
    unittest.main()
