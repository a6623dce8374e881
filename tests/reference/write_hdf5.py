#!/usr/bin/python3
"""Writes a raw little-endian uint16 pattern stack into HDF5 with h5py (Debian's python3-h5py).

usage: write_hdf5.py RAW OUT.h5 DATASET ROWS COLS HEIGHT WIDTH RANK [DTYPE]
RANK 3 gives [points, h, w], RANK 4 [rows, cols, h, w], RANK 2 a wrongly shaped [points, h*w]
for error tests. DTYPE (default uint16) converts the samples, e.g. float32.
"""
import sys

import h5py
import numpy as np

raw, out, name = sys.argv[1], sys.argv[2], sys.argv[3]
rows, cols, h, w, rank = (int(x) for x in sys.argv[4:9])
dtype = sys.argv[9] if len(sys.argv) > 9 else "uint16"
data = np.fromfile(raw, dtype="<u2").reshape(rows * cols, h, w).astype(dtype)
if rank == 4:
    data = data.reshape(rows, cols, h, w)
elif rank == 2:
    data = data.reshape(rows * cols, h * w)
with h5py.File(out, "w") as f:
    chunks = (1,) + data.shape[1:] if rank != 2 else None
    f.create_dataset(name, data=data, chunks=chunks, compression="gzip" if rank == 3 else None)
