#!/usr/bin/python3
"""Reference rotations computed with scipy.spatial.transform.Rotation (Debian's python3-scipy).

Reads lines from the file named in argv[1]:
  E phi1 Phi phi2           -> "q0 q1 q2 q3 g11 g12 g13 g21 g22 g23 g31 g32 g33"
  M a1 a2 a3 b1 b2 b3       -> cubic misorientation angle in degrees
  R n seed                  -> "mean_deg frac_above_55" of n random cubic misorientations
Angles are Bunge ZXZ in degrees. With the passive convention (P = -1) the quaternion
equals scipy's active intrinsic 'ZXZ' quaternion and the passive matrix is the
transpose of scipy's active matrix.
"""
import sys

import numpy as np
from scipy.spatial.transform import Rotation as R

CUBIC = R.create_group("O")


def active(e):
    return R.from_euler("ZXZ", e, degrees=True)


def cubic_angle(ra, rb):
    # passive g = R^T, Delta = g_b g_a^T; its angle equals that of Ra^-1 Rb, minimised over S.
    delta = ra.inv() * rb
    return np.degrees(np.min((delta * CUBIC).magnitude()))


for line in open(sys.argv[1]):
    f = line.split()
    if not f:
        continue
    if f[0] == "E":
        r = active([float(x) for x in f[1:4]])
        x, y, z, w = r.as_quat()
        q = np.array([w, x, y, z])
        if q[0] < 0:
            q = -q
        g = r.as_matrix().T
        print(" ".join("%.15g" % v for v in list(q) + list(g.ravel())))
    elif f[0] == "M":
        v = [float(x) for x in f[1:7]]
        print("%.12g" % cubic_angle(active(v[:3]), active(v[3:])))
    elif f[0] == "R":
        n, seed = int(f[1]), int(f[2])
        a = R.random(n, random_state=seed)
        b = R.random(n, random_state=seed + 1)
        delta = a.inv() * b
        angles = np.array([np.min((delta[i] * CUBIC).magnitude()) for i in range(n)])
        print("%.10g %.10g" % (np.degrees(angles).mean(), np.mean(np.degrees(angles) > 55.0)))
