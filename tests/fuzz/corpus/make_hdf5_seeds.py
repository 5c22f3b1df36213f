#!/usr/bin/python3
"""Writes the seed corpus of fuzz_hdf5_recording into tests/fuzz/corpus/hdf5/.

Small files (a few KB each) in the layouts the HDF5 reader takes: one 2-D
dataset (samples x channels, or channels x samples), one 1-D dataset per
channel, sample rate on the dataset or on the file, float and integer
samples, contiguous and chunked storage. Run it with Debian's python3
(python3-h5py) from anywhere; the files are the same on every run except for
the library version HDF5 writes into them.
"""
import os

import h5py
import numpy as np

HERE = os.path.join(os.path.dirname(os.path.abspath(__file__)), "hdf5")
SAMPLES = 48


def samples(dtype=np.float64):
    t = np.arange(SAMPLES)
    z = np.sin(2 * np.pi * t / 12)
    x = 0.5 * np.sin(2 * np.pi * t / 12 + 0.3)
    y = x - z
    data = np.stack([z, x, y], axis=1)
    if np.issubdtype(dtype, np.integer):
        data = np.round(data * 1000)
    return data.astype(dtype)


def write(name, fill):
    path = os.path.join(HERE, name)
    with h5py.File(path, "w", libver="earliest", track_order=False) as f:
        fill(f)
    print(f"{path}: {os.path.getsize(path)} bytes")


def matrix(f):
    f.create_dataset("samples", data=samples()).attrs["sample_rate_hz"] = 1000.0


def matrix_channels_first(f):
    f.create_dataset("acq/samples", data=samples(np.int16).T)
    f.attrs["sample_rate_hz"] = np.int32(8000)


def columns(f):
    data = samples(np.float32)
    for i, name in enumerate("zxy"):
        f.create_dataset(f"ch/{name}", data=data[:, i]).attrs["sample_rate_hz"] = 2000.0


def chunked(f):
    f.create_dataset("samples", data=samples(), chunks=(16, 3))
    f.attrs["sample_rate_hz"] = 500.0


def no_rate(f):
    f.create_dataset("samples", data=samples(np.int32))


def main():
    os.makedirs(HERE, exist_ok=True)
    write("matrix.h5", matrix)
    write("channels_first.h5", matrix_channels_first)
    write("columns.h5", columns)
    write("chunked.h5", chunked)
    write("no_rate.h5", no_rate)


if __name__ == "__main__":
    main()
