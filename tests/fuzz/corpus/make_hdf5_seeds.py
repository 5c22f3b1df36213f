#!/usr/bin/python3
"""Writes the seed corpus of fuzz_hdf5_recording into tests/fuzz/corpus/hdf5/.

The target is structure-aware (see the comment at the top of
tests/fuzz/fuzz_hdf5_recording.cpp for why and for the byte format): each
seed describes a file, which the target writes with the HDF5 library and
then reads. This script writes small files with h5py, in the layouts the
reader takes (one 2-D dataset, samples x channels or channels x samples; one
1-D dataset per channel; the sample rate on the dataset, on the file or in
the settings; float and integer samples; contiguous and chunked storage),
walks each file with h5py and encodes what it holds: dataset names, types,
shapes, storage, attributes and samples. Run it with Debian's python3
(python3-h5py); the output is the same on every run.
"""
import os
import struct
import tempfile

import h5py
import numpy as np

HERE = os.path.join(os.path.dirname(os.path.abspath(__file__)), "hdf5")
SAMPLES = 48

# The tables of the target, in its order.
DATASET_NAMES = ["samples", "acq/samples", "z", "x", "y", "ch/z", "ch/x", "ch/y", "a/z", "b/z", "data", "f_set"]
ATTRIBUTE_NAMES = ["sample_rate_hz", "fs", "units", "sample_rate"]
CHANNEL_NAMES = ["z", "x", "y", "f_set", "ch4"]
BLOCK_SIZES = [1, 7, 33, 4096, 65536]
TYPES = {np.dtype("<f8"): 0, np.dtype("<f4"): 1, np.dtype("<i2"): 2, np.dtype("<i4"): 3, np.dtype("u1"): 4,
         np.dtype("<i8"): 5, np.dtype("<u8"): 6, np.dtype(">f8"): 7, np.dtype(">i2"): 8}


def samples(dtype=np.float64):
    t = np.arange(SAMPLES)
    z = np.sin(2 * np.pi * t / 12)
    x = 0.5 * np.sin(2 * np.pi * t / 12 + 0.3)
    data = np.stack([z, x, x - z], axis=1)
    if np.issubdtype(dtype, np.integer):
        data = np.round(data * 1000)
    return data.astype(dtype)


def attributes(obj):
    out = bytearray([len(obj.attrs)])
    for name, value in obj.attrs.items():
        value = np.asarray(value)
        out += bytes([ATTRIBUTE_NAMES.index(name), TYPES[value.dtype], 0 if value.ndim == 0 else value.size])
        first = value.reshape(-1)[0]
        out += struct.pack("<d", float(first)) if value.dtype.kind == "f" else struct.pack("<q", int(first))
    return out


def describe(path, flags=0, channel_names=(), block_size=33):
    """The description of the file at path, with the given settings."""
    out = bytearray([flags | (8 if channel_names else 0)])
    if channel_names:
        out += bytes([len(channel_names)] + [CHANNEL_NAMES.index(n) for n in channel_names])
    out.append(BLOCK_SIZES.index(block_size))
    sample_bytes = bytearray()
    with h5py.File(path, "r") as f:
        found = []
        f.visititems(lambda name, obj: found.append((name, obj)) if isinstance(obj, h5py.Dataset) else None)
        out.append(len(found))
        for name, dataset in found:
            assert all(d < 240 for d in dataset.shape)
            out += bytes([DATASET_NAMES.index(name), TYPES[dataset.dtype], dataset.ndim, *dataset.shape])
            out.append((1 if dataset.chunks else 0) | 2)
            out += attributes(dataset)
            sample_bytes += dataset[()].tobytes()
        out += attributes(f)
    return bytes(out + sample_bytes)


def write(folder, name, fill, **settings):
    path = os.path.join(folder, name + ".h5")
    with h5py.File(path, "w", track_order=False) as f:
        fill(f)
    seed = os.path.join(HERE, name + ".bin")
    with open(seed, "wb") as f:
        f.write(describe(path, **settings))
    print(f"{seed}: {os.path.getsize(seed)} bytes")


def matrix(f):
    f.create_dataset("samples", data=samples()).attrs["sample_rate_hz"] = 1000.0


def channels_first(f):
    f.create_dataset("acq/samples", data=samples(np.int16).T)
    f.attrs["sample_rate_hz"] = np.int32(8000)


def columns(f):
    data = samples(np.float32)
    for i, name in enumerate("zxy"):
        f.create_dataset(f"ch/{name}", data=data[:, i]).attrs["sample_rate_hz"] = 2000.0


def chunked(f):
    f.create_dataset("samples", data=samples(), chunks=(16, 3))
    f.attrs["fs"] = 500.0


def no_rate(f):
    f.create_dataset("data", data=samples(np.int32))


def main():
    os.makedirs(HERE, exist_ok=True)
    with tempfile.TemporaryDirectory() as folder:
        write(folder, "matrix", matrix)
        write(folder, "channels_first", channels_first, block_size=7)
        write(folder, "columns", columns, flags=2, channel_names=("z", "x", "y"))
        write(folder, "chunked", chunked, flags=16, block_size=4096)
        write(folder, "no_rate", no_rate, flags=1 | 4)


if __name__ == "__main__":
    main()
