"""Recordings in every binary format, written by general-purpose libraries
(numpy.tofile, scipy.io.wavfile, h5py) and read back by loopaudit exactly;
and a scope-style text export (metadata lines, decimal commas) with a probe
factor, printed from numpy.

The samples go through reference_dump printed with 17 significant digits, so
"exactly" means bit for bit in double precision; integer PCM in WAV is read
as a fraction of full scale (value / 2^(bits-1)), as libsndfile defines it.
"""
import os
import subprocess
import sys
import tempfile
import unittest

import h5py
import numpy as np
from scipy.io import wavfile

DUMP = sys.argv.pop(1) if len(sys.argv) > 1 else "reference_dump"


def dump(path, settings=None):
    args = [DUMP, "samples", path] + ([settings] if settings else [])
    result = subprocess.run(args, capture_output=True, text=True)
    if result.returncode != 0:
        raise AssertionError(result.stderr)
    lines = result.stdout.splitlines()
    rate = float(lines[0])
    names = lines[1].split(",")
    data = np.array([[float(v) for v in line.split(",")] for line in lines[2:]])
    return rate, names, data


class Formats(unittest.TestCase):
    def setUp(self):
        self.folder = tempfile.mkdtemp(prefix="loopaudit_formats_")
        rng = np.random.default_rng(5)
        self.n = 70001  # more than one block of 65536
        self.signal = rng.standard_normal((self.n, 3))

    def path(self, name):
        return os.path.join(self.folder, name)

    def settings(self, text):
        path = self.path("run.toml")
        with open(path, "w") as f:
            f.write(text)
        return path

    def test_raw_types_and_byte_orders(self):
        for dtype, name in [("<i2", "int16"), (">i2", "int16"), ("<i4", "int32"), (">f4", "float32"),
                            ("<f8", "float64")]:
            with self.subTest(dtype=dtype):
                if dtype[1] == "i":
                    info = np.iinfo(dtype)
                    values = np.clip(self.signal * 3000, info.min, info.max).astype(dtype)
                else:
                    values = self.signal.astype(dtype)
                header = b"HDR-0123456789"
                path = self.path("rec.bin")
                with open(path, "wb") as f:
                    f.write(header)
                    values.tofile(f)
                order = "big" if dtype[0] == ">" else "little"
                settings = self.settings(
                    f'[input]\nformat = "raw"\nsample_type = "{name}"\nbyte_order = "{order}"\n'
                    f'header_bytes = {len(header)}\nsample_rate_hz = 50000\nscale = [1.0, 0.5, 2.0]\n'
                    f'offset = [0.0, 1.0, -1.0]\n')
                rate, names, data = dump(path, settings)
                self.assertEqual(rate, 50000.0)
                self.assertEqual(names, ["z", "x", "y"])
                expected = values.astype(np.float64) * np.array([1.0, 0.5, 2.0]) + np.array([0.0, 1.0, -1.0])
                np.testing.assert_array_equal(data, expected)

    def test_wav_int16_int24_float_multichannel(self):
        # 16-bit and 32-bit float through scipy.io.wavfile; 24-bit as the top 3
        # bytes of int32 in a 24-bit container written by hand (scipy writes
        # int32 as 32-bit, so 24-bit is built from its documented layout).
        pcm16 = np.clip(self.signal * 8000, -32768, 32767).astype(np.int16)
        wavfile.write(self.path("a.wav"), 48000, pcm16)
        rate, names, data = dump(self.path("a.wav"))
        self.assertEqual(rate, 48000.0)
        np.testing.assert_array_equal(data, pcm16 / 32768.0)

        floats = self.signal.astype(np.float32)
        wavfile.write(self.path("b.wav"), 96000, floats)
        _, _, data = dump(self.path("b.wav"))
        np.testing.assert_array_equal(data, floats.astype(np.float64))

        four = np.hstack([pcm16, pcm16[:, :1]])
        wavfile.write(self.path("c.wav"), 8000, four)
        _, names, data = dump(self.path("c.wav"))
        self.assertEqual(names, ["z", "x", "y", "ch4"])

        pcm24 = np.clip(self.signal * 2e6, -2**23, 2**23 - 1).astype(np.int32)
        self.write_wav24(self.path("d.wav"), 44100, pcm24)
        _, _, data = dump(self.path("d.wav"))
        np.testing.assert_array_equal(data, pcm24 / 2.0**23)

    @staticmethod
    def write_wav24(path, rate, samples):
        frames, channels = samples.shape
        raw = samples.astype("<i4").view(np.uint8).reshape(frames, channels, 4)[:, :, :3].tobytes()
        block = 3 * channels
        header = b"RIFF" + (36 + len(raw)).to_bytes(4, "little") + b"WAVE"
        header += b"fmt " + (16).to_bytes(4, "little") + (1).to_bytes(2, "little") + channels.to_bytes(2, "little")
        header += rate.to_bytes(4, "little") + (rate * block).to_bytes(4, "little") + block.to_bytes(2, "little")
        header += (24).to_bytes(2, "little") + b"data" + len(raw).to_bytes(4, "little")
        with open(path, "wb") as f:
            f.write(header + raw)

    def test_hdf5_matrix_both_orientations_and_columns(self):
        with h5py.File(self.path("m.h5"), "w") as f:
            d = f.create_dataset("acq/samples", data=self.signal)
            d.attrs["sample_rate_hz"] = 125000.0
            f.create_dataset("acq/transposed", data=self.signal.T.astype(np.float32))
            f.attrs["sample_rate_hz"] = 250000.0
            for i, name in enumerate(["inj", "vx", "vy"]):
                f.create_dataset("columns/" + name, data=(self.signal[:, i] * 100).astype(np.int16))
        rate, names, data = dump(self.path("m.h5"), self.settings('[input]\ndataset = "/acq/samples"\n'))
        self.assertEqual(rate, 125000.0)  # the dataset's attribute before the file's
        np.testing.assert_array_equal(data, self.signal)
        rate, _, data = dump(self.path("m.h5"), self.settings('[input]\ndataset = "/acq/transposed"\n'))
        self.assertEqual(rate, 250000.0)
        np.testing.assert_array_equal(data, self.signal.astype(np.float32).astype(np.float64))
        rate, names, data = dump(self.path("m.h5"), self.settings(
            '[input]\ndatasets = ["/columns/inj", "/columns/vx", "/columns/vy"]\n'))
        self.assertEqual(names, ["inj", "vx", "vy"])
        np.testing.assert_array_equal(data, (self.signal * 100).astype(np.int16).astype(np.float64))

    def test_scope_export_with_decimal_commas_and_probe_scale(self):
        # Metadata lines above the header, ';' and decimal commas, no time column;
        # repr() prints each double exactly, so the samples read back bit for bit.
        lines = ["Model;DSO 4104", "Sample Interval;2,0E-05", "", "CH1 [V];CH2 [V];CH3 [V]"]
        lines += [";".join(repr(float(v)).replace(".", ",") for v in row) for row in self.signal]
        with open(self.path("scope.csv"), "w") as f:
            f.write("\n".join(lines) + "\n")
        settings = self.settings('[input]\nsample_rate_hz = 50000\nscale = [1.0, 2.0, 1.0]\n'
                                 'probe_scale = { CH3 = -10.0 }\n')
        rate, names, data = dump(self.path("scope.csv"), settings)
        self.assertEqual(rate, 50000.0)
        self.assertEqual(names, ["CH1", "CH2", "CH3"])
        np.testing.assert_array_equal(data, self.signal * np.array([1.0, 2.0, -10.0]))


if __name__ == "__main__":
    unittest.main(verbosity=2)
