#!/usr/bin/python3
"""Reference for the learned estimator's spatial direction (numpy's symmetric eigensolver).

usage: lag_direction_reference.py X.f32 GRAIN.i32 BOUNDARY.u8 ROWS COLS FEATURES
Features of each grain centred on the grain's mean over its points away from grain boundaries
(NaN: not covered, counts as the mean); each feature scaled by its noise spread from the
differences of right and lower neighbours in one grain; the leading eigenvector of the symmetrised
lag-one cross-covariance of the scaled features. Prints one score per point (nan where not
measured), the sign as numpy gives it.
"""
import sys

import numpy as np

xs, gs, bs, rows, cols, p = sys.argv[1], sys.argv[2], sys.argv[3], int(sys.argv[4]), int(sys.argv[5]), int(sys.argv[6])
n = rows * cols
x = np.fromfile(xs, dtype="<f4").reshape(n, p).astype(np.float64)
grain = np.fromfile(gs, dtype="<i4")
boundary = np.fromfile(bs, dtype=np.uint8)
learns = (grain > 0) & (boundary == 0)

centred = np.zeros_like(x)
for g in np.unique(grain[grain > 0]):
    rows_g = learns & (grain == g)
    mean = np.nanmean(np.where(np.isnan(x[rows_g]), np.nan, x[rows_g]), axis=0)
    mean = np.where(np.isnan(mean), 0.0, mean)
    sel = grain == g
    centred[sel] = np.where(np.isnan(x[sel]), 0.0, x[sel] - mean)

pairs = []
for k in range(n):
    if not learns[k]:
        continue
    if (k + 1) % cols != 0 and learns[k + 1] and grain[k + 1] == grain[k]:
        pairs.append((k, k + 1))
    if k + cols < n and learns[k + cols] and grain[k + cols] == grain[k]:
        pairs.append((k, k + cols))
a = np.array([i for i, _ in pairs])
b = np.array([j for _, j in pairs])
both = ~np.isnan(x[a]) & ~np.isnan(x[b])
diff2 = np.where(both, 0.5 * (centred[a] - centred[b]) ** 2, 0.0)
covered = both.sum(axis=0)
noise = diff2.sum(axis=0) / np.maximum(covered, 1)
scale = np.where((covered >= 0.1 * len(pairs)) & (noise > 0), 1 / np.sqrt(np.where(noise > 0, noise, 1)), 0.0)
za, zb = centred[a] * scale, centred[b] * scale
lag = za.T @ zb
lag = 0.5 * (lag + lag.T) / len(pairs)
values, vectors = np.linalg.eigh(lag)
w = vectors[:, -1] * scale
score = centred @ w
for k in range(n):
    print("nan" if grain[k] <= 0 else repr(float(score[k])))
