"""Reads a map output folder as another tool would and checks it against the .npy files.

Usage: results_check.py FOLDER. Prints one line per finding and "ok N M" (N arrays, M points)
when every array of results.h5 (h5py) equals its .npy file (numpy), every float array's TIFF
(scikit-image) equals it too, every array has a unit and a description, the tables in
results.h5 have the CSV files' rows, and points.csv has one row per point with the fraction of
ordered_fraction.npy. Exit status 1 on any finding.
"""
import csv
import json
import os
import sys

import h5py
import numpy as np
from skimage import io as skio

folder = sys.argv[1]
findings = []
with h5py.File(os.path.join(folder, "results.h5"), "r") as h5:
    rows, cols = int(h5.attrs["rows"]), int(h5.attrs["cols"])
    names = sorted(h5["maps"].keys())
    npy_files = sorted(f[:-4] for f in os.listdir(folder) if f.endswith(".npy"))
    if names != npy_files:
        findings.append(f"maps {names} != npy files {npy_files}")
    for name in names:
        d = h5["maps"][name]
        a = np.load(os.path.join(folder, name + ".npy"))
        if d.shape != (rows, cols) or d.dtype != a.dtype or not np.array_equal(d[()], a, equal_nan=a.dtype.kind == "f"):
            findings.append(f"map {name}: HDF5 {d.shape} {d.dtype} differs from the .npy {a.shape} {a.dtype}")
        if "unit" not in d.attrs or not d.attrs["description"]:
            findings.append(f"map {name}: no unit or description")
        if a.dtype.kind == "f":
            t = skio.imread(os.path.join(folder, name + ".tif"))
            if t.dtype != np.float32 or not np.array_equal(t, a, equal_nan=True):
                findings.append(f"map {name}: TIFF {t.shape} {t.dtype} differs from the .npy")
    for table in ("particles", "classes", "points"):
        with open(os.path.join(folder, table + ".csv")) as f:
            csv_rows = list(csv.DictReader(line for line in f if not line.startswith("#")))
        group = h5["tables"][table]
        for column in group.keys():
            if len(group[column]) != len(csv_rows):
                findings.append(f"table {table}.{column}: {len(group[column])} rows, CSV {len(csv_rows)}")
    summary = json.loads(h5["summary_json"][()].decode() if isinstance(h5["summary_json"][()], bytes) else h5["summary_json"][()])
    with open(os.path.join(folder, "summary.json")) as f:
        if json.load(f) != summary:
            findings.append("summary_json differs from summary.json")
    with open(os.path.join(folder, "points.csv")) as f:
        points = list(csv.DictReader(line for line in f if not line.startswith("#")))
    if len(points) != rows * cols:
        findings.append(f"points.csv has {len(points)} rows for {rows * cols} points")
    fraction = np.load(os.path.join(folder, "ordered_fraction.npy")).ravel()
    from_csv = np.array([float(p["ordered_fraction"]) if p["ordered_fraction"] else np.nan for p in points])
    if from_csv.shape != fraction.shape or not np.allclose(from_csv, fraction, atol=5e-7, equal_nan=True):
        findings.append("points.csv ordered_fraction differs from ordered_fraction.npy")
for line in findings:
    print(line)
print("ok" if not findings else "failed", len(names), rows * cols)
sys.exit(1 if findings else 0)
