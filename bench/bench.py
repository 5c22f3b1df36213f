"""loopaudit's benchmark: end-to-end analysis of a large binary and a large
text recording, beside the same Welch computation in numpy + scipy.signal and
beside the one-core FFT floor, all measured in this one run.

Usage (from scripts/bench): bench.py BUILD_DIR DATA_DIR [--runs N] [--skip-scipy] [--against REV]
Prints medians of N runs (default 3) and ratios against the references.
--against REV also builds git revision REV (a worktree under DATA_DIR) and
times its analysis of the same recordings in the same run, the two programs'
runs alternating, so that a change's cost is a ratio measured side by side.
"""
import argparse
import os
import statistics
import subprocess
import sys
import time

import numpy as np

SEGMENT = 4096
BINARY_SAMPLES = 50_000_000  # per channel, 3 channels of float32: 600 MB
RATE = 1.0e6


def run_measured(args):
    """Wall time (s) and peak RSS (MiB) of one command. GNU time reports the
    RSS: a child forked from this Python process would count the parent's
    pages until its exec."""
    start = time.perf_counter()
    result = subprocess.run(["/usr/bin/time", "-f", "%M", *map(str, args)], stdout=subprocess.DEVNULL,
                            stderr=subprocess.PIPE, text=True)
    wall = time.perf_counter() - start
    if result.returncode != 0:
        raise SystemExit(f"failed: {' '.join(map(str, args))}\n{result.stderr}")
    return wall, int(result.stderr.strip().splitlines()[-1]) / 1024.0


def median_run(args, runs):
    results = [run_measured(args) for _ in range(runs)]
    return statistics.median(r[0] for r in results), max(r[1] for r in results)


def build_revision(root, revision, data):
    """The loopaudit program of git revision `revision`, built (Release) in a
    worktree under `data`; built once per commit."""
    commit = subprocess.run(["git", "-C", root, "rev-parse", "--verify", revision + "^{commit}"], check=True,
                            capture_output=True, text=True).stdout.strip()
    tree = os.path.join(os.path.abspath(data), "against-" + commit[:12])
    if not os.path.isdir(tree):
        subprocess.run(["git", "-C", root, "worktree", "add", "--detach", tree, commit], check=True,
                       stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    build = os.path.join(tree, "build")
    subprocess.run(["cmake", "-S", tree, "-B", build, "-DCMAKE_BUILD_TYPE=Release"], check=True,
                   stdout=subprocess.DEVNULL)
    subprocess.run(["cmake", "--build", build, "--target", "loopaudit_cli", "-j", str(os.cpu_count() or 1)],
                   check=True, stdout=subprocess.DEVNULL)
    return os.path.join(build, "loopaudit"), commit[:12]


def paired_runs(first, second, runs):
    """Medians (wall s) and peak RSS (MiB) of two commands, their runs
    alternating and each going first in every other round (a run right after
    another of the same file was measured faster or slower by its place
    alone)."""
    a, b = [], []
    for round_ in range(runs):
        if round_ % 2 == 0:
            a.append(run_measured(first))
            b.append(run_measured(second))
        else:
            b.append(run_measured(second))
            a.append(run_measured(first))
    return ((statistics.median(r[0] for r in a), max(r[1] for r in a)),
            (statistics.median(r[0] for r in b), max(r[1] for r in b)))


def make_binary(path):
    if os.path.exists(path) and os.path.getsize(path) == BINARY_SAMPLES * 3 * 4:
        return
    rng = np.random.default_rng(1)
    chunk = 5_000_000
    with open(path + ".part", "wb") as f:
        for _ in range(BINARY_SAMPLES // chunk):
            z = rng.standard_normal(chunk).astype(np.float32)
            x = (0.5 * z + 0.1 * rng.standard_normal(chunk)).astype(np.float32)
            np.stack([z, x, x - z], axis=1).tofile(f)
    os.replace(path + ".part", path)


SCIPY_BINARY = """
import sys, numpy as np
from scipy import signal
data = np.fromfile(sys.argv[1], dtype=np.float32).reshape(-1, 3).astype(np.float64)
z, x, y = data[:, 0], data[:, 1], data[:, 2]
kw = dict(fs={rate}, window="hann", nperseg={segment}, noverlap={segment} // 2)
_, szx = signal.csd(z, x, **kw)
_, szy = signal.csd(z, y, **kw)
_, sxy = signal.csd(x, y, **kw)
_, szz = signal.welch(z, **kw)
_, sxx = signal.welch(x, **kw)
_, syy = signal.welch(y, **kw)
_, c = signal.coherence(z, y, **kw)
print(szy[10] / szx[10], c[10])
"""

SCIPY_TEXT = """
import sys, numpy as np
from scipy import signal
data = np.loadtxt(sys.argv[1], delimiter=",", skiprows=1)
z, x, y = data[:, 1], data[:, 2], data[:, 3]
kw = dict(fs={rate}, window="hann", nperseg={segment}, noverlap={segment} // 2)
_, szx = signal.csd(z, x, **kw)
_, szy = signal.csd(z, y, **kw)
_, c = signal.coherence(z, y, **kw)
print(szy[10] / szx[10], c[10])
"""


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("build")
    parser.add_argument("data")
    parser.add_argument("--runs", type=int, default=3)
    parser.add_argument("--skip-scipy", action="store_true")
    parser.add_argument("--against", metavar="REV", help="also time git revision REV, side by side")
    a = parser.parse_args()
    tool = os.path.join(a.build, "loopaudit")
    floor_tool = os.path.join(a.build, "fft_floor")
    root = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    os.makedirs(a.data, exist_ok=True)

    binary = os.path.join(a.data, "bench_binary.f32")
    settings = os.path.join(a.data, "bench_binary.toml")
    text = os.path.join(a.data, "bench_csv.csv")
    print("preparing the recordings in", a.data, file=sys.stderr)
    make_binary(binary)
    with open(settings, "w") as f:
        f.write(f'[input]\nformat = "raw"\nsample_type = "float32"\nsample_rate_hz = {RATE}\n')
    if not os.path.exists(text):
        subprocess.run([tool, "synth", os.path.join(root, "data", "bench", "csv_record.toml"), "--out-dir", a.data],
                       check=True, stdout=subprocess.DEVNULL)
    text_rows = 10_000_000
    text_bytes = os.path.getsize(text)

    segments = (BINARY_SAMPLES - SEGMENT) // (SEGMENT // 2) + 1
    out = subprocess.run([floor_tool, str(SEGMENT), str(3 * segments), str(a.runs)], check=True,
                         capture_output=True, text=True).stdout.split()
    floor = float(out[1])

    print(f"measuring ({a.runs} runs each; medians)", file=sys.stderr)
    bin_args = ["analyze", binary, "--config", settings, "--quiet"]
    txt_args = ["analyze", text, "--quiet"]
    against = None
    if a.against:
        other, commit = build_revision(root, a.against, a.data)
        (bin_wall, bin_rss), other_bin = paired_runs([tool, *bin_args], [other, *bin_args], a.runs)
        (txt_wall, txt_rss), other_txt = paired_runs([tool, *txt_args], [other, *txt_args], a.runs)
        against = (commit, other_bin, other_txt)
    else:
        bin_wall, bin_rss = median_run([tool, *bin_args], a.runs)
        txt_wall, txt_rss = median_run([tool, *txt_args], a.runs)
    python = "/usr/bin/python3"
    scipy_bin = scipy_txt = None
    if not a.skip_scipy:
        scipy_bin = median_run([python, "-c", SCIPY_BINARY.format(rate=RATE, segment=SEGMENT), binary], a.runs)
        scipy_txt = run_measured([python, "-c", SCIPY_TEXT.format(rate=RATE, segment=SEGMENT), text])

    samples = 3 * BINARY_SAMPLES
    print()
    print(f"binary record: 3 x {BINARY_SAMPLES:.0e} float32 samples ({os.path.getsize(binary) / 1e6:.0f} MB), "
          f"{segments} segments of {SEGMENT}, Hann, 50 % overlap")
    print(f"  {'':34} {'wall s':>8} {'samples/s':>10} {'peak RSS MiB':>13} {'ratio':>8}")
    print(f"  {'loopaudit analyze':34} {bin_wall:8.3f} {samples / bin_wall:10.3g} {bin_rss:13.1f} {'1':>8}")
    if against:
        print(f"  {'loopaudit analyze at ' + against[0]:34} {against[1][0]:8.3f} {samples / against[1][0]:10.3g} "
              f"{against[1][1]:13.1f} {bin_wall / against[1][0]:7.2f}x")
    print(f"  {'FFTs alone, one core (floor)':34} {floor:8.3f} {samples / floor:10.3g} {'':>13} "
          f"{bin_wall / floor:7.2f}x")
    if scipy_bin:
        print(f"  {'numpy + scipy.signal':34} {scipy_bin[0]:8.3f} {samples / scipy_bin[0]:10.3g} "
              f"{scipy_bin[1]:13.1f} {scipy_bin[0] / bin_wall:7.1f}x")
    print(f"text record: {text_rows:.0e} rows, 4 columns ({text_bytes / 1e6:.0f} MB)")
    print(f"  {'loopaudit analyze':34} {txt_wall:8.3f} {text_bytes / 1e6 / txt_wall:7.0f} MB/s {txt_rss:10.1f}")
    if against:
        print(f"  {'loopaudit analyze at ' + against[0]:34} {against[2][0]:8.3f} {text_bytes / 1e6 / against[2][0]:7.0f} MB/s "
              f"{against[2][1]:10.1f} {txt_wall / against[2][0]:6.2f}x")
    if scipy_txt:
        print(f"  {'numpy.loadtxt + scipy.signal':34} {scipy_txt[0]:8.3f} {text_bytes / 1e6 / scipy_txt[0]:7.0f} MB/s "
              f"{scipy_txt[1]:10.1f} {scipy_txt[0] / txt_wall:6.1f}x")
    print()
    checks = [
        ("binary end to end <= 1.5 x one-core FFT floor", bin_wall <= 1.5 * floor, f"{bin_wall / floor:.2f}x"),
        ("text parsed at >= 400 MB/s", text_bytes / 1e6 / txt_wall >= 400, f"{text_bytes / 1e6 / txt_wall:.0f} MB/s"),
        ("peak RSS < 32 MiB (binary)", bin_rss < 32, f"{bin_rss:.1f} MiB"),
        ("peak RSS < 32 MiB (text)", txt_rss < 32, f"{txt_rss:.1f} MiB"),
    ]
    if scipy_bin:
        checks.insert(0, ("binary >= 10 x faster than numpy + scipy", scipy_bin[0] >= 10 * bin_wall,
                          f"{scipy_bin[0] / bin_wall:.1f}x"))
    if against:
        checks.append((f"binary at most 1.10 x the time of {against[0]}", bin_wall <= 1.10 * against[1][0],
                       f"{bin_wall / against[1][0]:.2f}x"))
    for name, ok, figure in checks:
        print(f"  {'met ' if ok else 'MISS'}  {name}: {figure}")


if __name__ == "__main__":
    main()
