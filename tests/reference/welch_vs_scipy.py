"""Welch spectra, coherence and windows of loopaudit against scipy.signal.

scipy.signal (Debian's python3-scipy) is the reference library: csd(x, y)
is conj(X) Y averaged over Hann-windowed segments with the segment mean
removed and density scaling; welch() and coherence() follow from it
(scipy.signal.csd documentation: "by convention, Pxy is computed with the
conjugate FFT of X multiplied by the FFT of Y"; coherence() is the
magnitude-squared coherence).
"""
import subprocess
import sys
import tempfile
import unittest

import numpy as np
from scipy import signal

DUMP = sys.argv.pop(1) if len(sys.argv) > 1 else "reference_dump"
# Both sides use double-precision FFTs on the same samples; the samples pass
# through text printed with 17 significant digits, so only FFT rounding differs.
RELATIVE = 1e-9


def channels(seed=3, n=50000):
    rng = np.random.default_rng(seed)
    z = rng.standard_normal(n)
    b, a = signal.butter(2, 0.1)
    x = signal.lfilter(b, a, z) + 0.3 * rng.standard_normal(n)
    y = -0.7 * np.roll(x, 2) + 0.2 * rng.standard_normal(n) + 0.5
    return np.vstack([z, x, y])


def ours(data, fs, nperseg, overlap, window):
    with tempfile.NamedTemporaryFile("w", suffix=".csv", delete=False) as f:
        f.write("a,b,c\n")
        np.savetxt(f, data.T, delimiter=",", fmt="%.17g")
        path = f.name
    out = subprocess.run([DUMP, "spectra", path, repr(fs), str(nperseg), repr(overlap), window],
                         check=True, capture_output=True, text=True).stdout
    table = np.array([[float(v) for v in line.split(",")] for line in out.splitlines()])
    freq = table[:, 0]
    values = table[:, 1::2] + 1j * table[:, 2::2]
    pairs = [(i, j) for i in range(3) for j in range(i, 3)]
    return freq, {p: values[:, n] for n, p in enumerate(pairs)}


def close(a, b):
    scale = np.max(np.abs(b))
    return np.max(np.abs(a - b)) <= RELATIVE * scale


class WelchAgainstScipy(unittest.TestCase):
    def check(self, nperseg, overlap, window):
        data = channels()
        fs = 2500.0
        noverlap = int(np.floor(overlap * nperseg))
        freq, s = ours(data, fs, nperseg, overlap, window)
        scipy_window = {"blackman-harris": "blackmanharris", "rectangular": "boxcar"}.get(window, window)
        kwargs = dict(fs=fs, window=scipy_window, nperseg=nperseg, noverlap=noverlap, detrend="constant")
        for (i, j), ours_ij in s.items():
            f_ref, s_ref = signal.csd(data[i], data[j], **kwargs)
            np.testing.assert_allclose(freq, f_ref, rtol=1e-12)
            self.assertTrue(close(ours_ij, s_ref), f"csd({i},{j}) {window} {nperseg}/{overlap}")
        for i in range(3):
            _, p_ref = signal.welch(data[i], **kwargs)
            self.assertTrue(close(s[(i, i)].real, p_ref), f"welch({i})")
        for i, j in [(0, 1), (0, 2), (1, 2)]:
            _, c_ref = signal.coherence(data[i], data[j], **kwargs)
            c_ours = np.abs(s[(i, j)]) ** 2 / (s[(i, i)].real * s[(j, j)].real)
            # Line 0 is left out: after the segment mean is removed, the
            # rectangular window's DC line is rounding noise on both sides (0/0).
            np.testing.assert_allclose(c_ours[1:], c_ref[1:], rtol=1e-8, atol=1e-12)

    def test_hann_half_overlap(self):
        self.check(1024, 0.5, "hann")

    def test_hamming_odd_segment(self):
        self.check(999, 0.25, "hamming")

    def test_blackman_harris_no_overlap(self):
        self.check(512, 0.0, "blackman-harris")

    def test_rectangular_three_quarters(self):
        self.check(256, 0.75, "rectangular")

    def test_windows_match_get_window(self):
        # scipy.signal.get_window returns the periodic (DFT-even) form by default.
        for ours_name, scipy_name in [("hann", "hann"), ("hamming", "hamming"),
                                      ("blackman-harris", "blackmanharris"), ("rectangular", "boxcar")]:
            for n in (16, 1001, 4096):
                out = subprocess.run([DUMP, "window", ours_name, str(n)], check=True,
                                     capture_output=True, text=True).stdout
                w = np.array([float(v) for v in out.split()])
                np.testing.assert_allclose(w, signal.get_window(scipy_name, n), rtol=0, atol=1e-14)


if __name__ == "__main__":
    unittest.main(verbosity=2)
