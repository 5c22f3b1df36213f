"""End-to-end tests: inputs that are cut short, misnamed, too wide, or that
cannot be read twice.

WAV files whose data end early, channel names that do not fit the file,
headers and rows of millions of cells (refused quickly, in bounded memory),
and recordings fed through a named pipe. Every input is made here, from the
simulated demo recordings (`loopaudit synth`).

Environment: LOOPAUDIT (the binary) and LOOPAUDIT_DEMO (data/demo), set by CTest.
"""
import os
import shutil
import struct
import subprocess
import threading
import unittest

import numpy as np

from cli_common import BINARY, DEMO, INPUT, SETTINGS, ExpectsFailure, TempFolder, codes, load, run, run_measured

RATE = 8000  # the servo demos record at 8 kHz
# Far above what a refusal needs, far below what splitting millions of cells
# into names and per-column buffers took (gigabytes, or no end).
WIDE_SECONDS = 60
WIDE_RSS_MIB = 400
# A run through a pipe that reopens it waits forever; this is long enough for
# the analyses here on a loaded 2-core machine.
PIPE_SECONDS = 120


def data_chunk(wav_bytes):
    """Offset and stated size of the data chunk of a RIFF WAVE file."""
    at = 12
    while at + 8 <= len(wav_bytes):
        chunk_id, size = struct.unpack_from("<4sI", wav_bytes, at)
        if chunk_id == b"data":
            return at, size
        at += 8 + size + (size & 1)
    raise AssertionError("no data chunk")


class Base(TempFolder, ExpectsFailure, unittest.TestCase):
    one_line_message = False


def servo_samples(folder):
    """z, x and y of the simulated servo demo (8 kHz), as the text reader parses them."""
    run("synth", os.path.join(DEMO, "servo_velocity.toml"), "--out-dir", folder)
    return np.loadtxt(os.path.join(folder, "servo_velocity.csv"), delimiter=",", skiprows=1)[:, 1:]


class CutShortWav(Base):
    @classmethod
    def setUpClass(cls):
        super().setUpClass()
        from scipy.io import wavfile
        data = servo_samples(cls.folder)
        cls.clean = cls.path("clean.wav")
        wavfile.write(cls.clean, RATE, data.astype(np.float32))
        with open(cls.clean, "rb") as f:
            cls.bytes = f.read()
        cls.frame = 3 * 4  # three float32 channels

    def findings(self, wav_bytes, name):
        wav = self.path(name)
        with open(wav, "wb") as f:
            f.write(wav_bytes)
        out = self.path(name + ".json")
        run("analyze", wav, "--json", out)
        return load(out)

    def test_clean_wav_has_no_such_warning(self):
        found = codes(self.findings(self.bytes, "whole.wav"))
        self.assertNotIn("ingest.truncated", found)
        self.assertNotIn("ingest.partial-frame", found)

    def test_wav_cut_inside_its_data_is_analysed_with_a_warning(self):
        # Cut 1000 frames and a half before the end: the header still states the whole data.
        result = self.findings(self.bytes[: len(self.bytes) - 1000 * self.frame - 6], "cut.wav")
        truncated = [d for d in result["diagnostics"] if d["code"] == "ingest.truncated"]
        self.assertEqual(len(truncated), 1, result["diagnostics"])
        self.assertEqual(truncated[0]["severity"], "warning")
        self.assertIn("cut short", truncated[0]["message"])
        self.assertIn("6 bytes of an incomplete frame", truncated[0]["message"])
        frames = len(self.bytes) // self.frame  # near enough: the header is under a frame's worth of bytes more
        self.assertLess(result["input"]["samples"], frames - 1000 + 10)
        self.assertNotIn("ingest.partial-frame", codes(result))

    def test_data_chunk_stating_more_than_the_file_holds_is_a_warning(self):
        at, size = data_chunk(self.bytes)
        patched = bytearray(self.bytes)
        struct.pack_into("<I", patched, at + 4, size + 4096 * self.frame)
        result = self.findings(bytes(patched), "overstated.wav")
        self.assertIn("ingest.truncated", codes(result))
        message = next(d["message"] for d in result["diagnostics"] if d["code"] == "ingest.truncated")
        self.assertIn(f"states {size + 4096 * self.frame} bytes", message)

    def test_data_chunk_ending_inside_a_frame_is_a_warning(self):
        at, size = data_chunk(self.bytes)
        patched = bytearray(self.bytes)
        struct.pack_into("<I", patched, at + 4, size - 5)
        result = self.findings(bytes(patched), "ragged.wav")
        self.assertIn("ingest.partial-frame", codes(result))
        self.assertNotIn("ingest.truncated", codes(result))


class ChannelNames(Base):
    @classmethod
    def setUpClass(cls):
        super().setUpClass()
        import h5py
        from scipy.io import wavfile
        data = servo_samples(cls.folder)
        cls.wav = cls.path("three.wav")
        wavfile.write(cls.wav, RATE, data.astype(np.float32))
        cls.h5 = cls.path("three.h5")
        with h5py.File(cls.h5, "w") as f:
            f.create_dataset("samples", data=data).attrs["sample_rate_hz"] = float(RATE)
        cls.raw = cls.path("three.bin")
        data.astype("<f4").tofile(cls.raw)

    def test_fewer_names_than_channels_are_refused_with_both_counts(self):
        for recording in (self.wav, self.h5):
            with self.subTest(recording=recording):
                self.expect(SETTINGS, "analyze", recording, "--channels", "z,x",
                            contains=("2 channel names given but the file has 3 channels",))

    def test_a_name_given_twice_is_refused_naming_it(self):
        for recording, extra in ((self.wav, ()), (self.h5, ()),
                                 (self.raw, ("--sample-rate", RATE, "--sample-type", "float32"))):
            with self.subTest(recording=recording):
                result = self.expect(SETTINGS, "analyze", recording, "--channels", "z,z,y", *extra,
                                     contains=("the channel name 'z' is given twice",))
                self.assertNotIn("no channel named", result.stderr)

    def test_the_settings_key_is_checked_the_same_way(self):
        settings = self.path("two_names.toml")
        with open(settings, "w") as f:
            f.write('[input]\nchannels = ["z", "x"]\n')
        self.expect(SETTINGS, "analyze", self.wav, "--config", settings,
                    contains=("2 channel names given but the file has 3 channels",))
        with open(settings, "w") as f:
            f.write('[input]\nchannels = ["z", "x", "x"]\n')
        self.expect(SETTINGS, "analyze", self.wav, "--config", settings, contains=("'x' is given twice",))

    def test_hdf5_datasets_whose_paths_end_alike_are_refused(self):
        import h5py
        data = np.loadtxt(self.path("servo_velocity.csv"), delimiter=",", skiprows=1)[:, 1:]
        two_z = self.path("two_z.h5")
        with h5py.File(two_z, "w") as f:
            f.attrs["sample_rate_hz"] = float(RATE)
            for group, column in (("a/z", 0), ("b/z", 1), ("c/y", 2)):
                f.create_dataset(group, data=data[:, column])
        self.expect(SETTINGS, "analyze", two_z, contains=("'/a/z' and '/b/z' would both be channel 'z'",))


class WideFiles(Base):
    """A header of millions of names, and a row of millions of cells."""

    COLUMNS = 3_000_000

    @classmethod
    def setUpClass(cls):
        super().setUpClass()
        # Distinct names of four letters (52^4 > 3e6): the header is 15 MB, under the 16 MiB a line may hold.
        letters = np.array(list("abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ"))
        index = np.arange(cls.COLUMNS)
        names = letters[index // 52**3 % 52], letters[index // 52**2 % 52], letters[index // 52 % 52], letters[index % 52]
        header = ",".join(np.char.add(np.char.add(names[0], names[1]), np.char.add(names[2], names[3])))
        row = ",".join(["0"] * cls.COLUMNS)
        cls.recording = cls.path("wide.csv")
        with open(cls.recording, "w") as f:
            f.write(header + "\n" + (row + "\n") * 3)
        cls.table = cls.path("wide_table.csv")
        with open(cls.table, "w") as f:
            f.write("freq_hz,re,im," + header + "\n" + ("1,0,0," + row + "\n") * 3)
        cls.wide_row = cls.path("wide_row.csv")
        with open(cls.wide_row, "w") as f:
            f.write("t,z,x,y\n" + "".join(f"{i}e-3,1,2,3\n" for i in range(5)) + "5e-3,1,2,3," + row + "\n")
        cls.wide_table_row = cls.path("wide_table_row.csv")
        with open(cls.wide_table_row, "w") as f:
            f.write("freq_hz,re,im\n10,1,0\n20,0.5,0\n30," + row + "\n")

    def refused_quickly(self, *args, contains=()):
        code, stderr, seconds, rss_mib = run_measured(args, WIDE_SECONDS)
        self.assertEqual(code, INPUT, stderr)
        for text in contains:
            self.assertIn(text, stderr)
        self.assertLess(rss_mib, WIDE_RSS_MIB, stderr)
        return stderr

    def test_a_recording_header_of_millions_of_columns_is_refused(self):
        self.refused_quickly("analyze", self.recording, "--sample-rate", RATE,
                             contains=(self.recording, "line 1", f"{self.COLUMNS} columns", "at most 1024"))
        # The header named by --skip-rows is checked the same way.
        self.refused_quickly("analyze", self.recording, "--sample-rate", RATE, "--skip-rows", 0,
                             contains=("line 1", f"{self.COLUMNS} columns", "at most 1024"))

    def test_a_table_header_of_millions_of_columns_is_refused(self):
        self.refused_quickly("table", self.table, contains=(self.table, "line 1", f"{self.COLUMNS + 3} columns",
                                                            "at most 1024"))

    def test_a_row_of_millions_of_cells_is_refused_in_bounded_memory(self):
        self.refused_quickly("analyze", self.wide_row, contains=("line 7", "more cells than the 4 columns"))
        self.refused_quickly("table", self.wide_table_row, contains=("line 4", f"{self.COLUMNS + 1} cells where"))

    def test_a_header_at_the_limit_is_read(self):
        width = 1024
        path = self.path("widest.csv")
        names = ["t", "z", "x", "y"] + [f"c{i}" for i in range(width - 4)]
        rows = np.random.default_rng(5).normal(size=(3000, width))
        rows[:, 0] = np.arange(rows.shape[0]) / RATE
        with open(path, "w") as f:
            f.write(",".join(names) + "\n")
            np.savetxt(f, rows[:, :], delimiter=",", fmt="%.4g")
        result = self.expect(0, "inspect", path)
        self.assertIn("3000 samples", result.stdout)


class Pipes(Base):
    """Recordings fed through a named pipe, as from another program."""

    @classmethod
    def setUpClass(cls):
        super().setUpClass()
        for scenario in ("servo_velocity", "servo_stepped"):
            run("synth", os.path.join(DEMO, f"{scenario}.toml"), "--out-dir", cls.folder)
        # A stepped sine too long to be kept in memory for the second pass.
        with open(os.path.join(DEMO, "servo_stepped.toml")) as f:
            text = f.read()
        long_toml = cls.path("long_stepped.toml")
        with open(long_toml, "w") as f:
            f.write(text.replace('name = "servo_stepped"', 'name = "long_stepped"').replace("duration_s = 12", "duration_s = 40"))
        run("synth", long_toml, "--out-dir", cls.folder)

    def through_pipe(self, recording, *args):
        """Runs analyze on a named pipe that a thread feeds with the recording once."""
        fifo = self.path(os.path.basename(recording) + ".fifo")
        if os.path.exists(fifo):
            os.remove(fifo)
        os.mkfifo(fifo)

        def feed():
            try:
                with open(fifo, "wb") as pipe, open(recording, "rb") as source:
                    shutil.copyfileobj(source, pipe)
            except BrokenPipeError:
                pass

        threading.Thread(target=feed, daemon=True).start()
        try:
            return subprocess.run([BINARY, "analyze", fifo, *map(str, args)], capture_output=True, text=True,
                                  timeout=PIPE_SECONDS)
        except subprocess.TimeoutExpired:
            raise AssertionError(f"analyze of a pipe feeding {recording} ran over {PIPE_SECONDS} s")
        finally:
            os.remove(fifo)

    def same_summary(self, recording, *args):
        from_file = self.path(os.path.basename(recording) + ".file.json")
        from_pipe = self.path(os.path.basename(recording) + ".pipe.json")
        run("analyze", recording, "--json", from_file, *args)
        result = self.through_pipe(recording, "--json", from_pipe, *args)
        self.assertEqual(result.returncode, 0, result.stderr)
        self.assertEqual(load(from_pipe)["summary"], load(from_file)["summary"])
        self.assertEqual(load(from_pipe)["input"]["samples"], load(from_file)["input"]["samples"])
        return load(from_pipe)

    def test_noise_through_a_pipe_is_read_once(self):
        result = self.same_summary(self.path("servo_velocity.csv"))
        self.assertEqual(result["method"]["excitation"], "broadband")

    def test_a_short_stepped_sine_through_a_pipe_is_analysed_from_memory(self):
        result = self.same_summary(self.path("servo_stepped.csv"))
        self.assertEqual(result["method"]["excitation"], "stepped")

    def test_a_long_stepped_sine_through_a_pipe_is_refused(self):
        result = self.through_pipe(self.path("long_stepped.csv"))
        self.assertEqual(result.returncode, INPUT, result.stderr)
        self.assertIn("is a pipe and cannot be read twice", result.stderr)
        self.assertIn("a stepped sine is read twice", result.stderr)
        self.assertIn("save it to a file first", result.stderr)


if __name__ == "__main__":
    unittest.main()
