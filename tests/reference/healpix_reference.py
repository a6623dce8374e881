#!/usr/bin/python3
"""HEALPix reference values from healpy (Debian's python3-healpy).

usage:
  healpix_reference.py pixels NSIDE IN.txt      IN: lines "x y z"   -> ring pixel index per line
  healpix_reference.py centres NSIDE IN.txt     IN: lines "pixel"   -> "x y z" of the ring pixel centre
  healpix_reference.py ylm NSIDE OUT.npy l,m ... -> rows of real maps from a single a_lm = 1 (RING)
  healpix_reference.py interp NSIDE IN.txt     IN: lines "x y z"   -> "p0 p1 p2 p3 w0 w1 w2 w3" (RING)
"""
import sys

import healpy as hp
import numpy as np

mode, nside = sys.argv[1], int(sys.argv[2])
if mode == "pixels":
    v = np.loadtxt(sys.argv[3], ndmin=2)
    for p in hp.vec2pix(nside, v[:, 0], v[:, 1], v[:, 2]):
        print(int(p))
elif mode == "centres":
    pix = np.loadtxt(sys.argv[3], dtype=np.int64, ndmin=1)
    x, y, z = hp.pix2vec(nside, pix)
    for a, b, c in zip(x, y, z):
        print("%.17g %.17g %.17g" % (a, b, c))
elif mode == "interp":
    v = np.loadtxt(sys.argv[3], ndmin=2)
    theta, phi = hp.vec2ang(v)
    pix, wgt = hp.get_interp_weights(nside, theta, phi)
    for k in range(v.shape[0]):
        print(" ".join(str(int(p)) for p in pix[:, k]), " ".join("%.17g" % w for w in wgt[:, k]))
elif mode == "ylm":
    out = sys.argv[3]
    maps = []
    for spec in sys.argv[4:]:
        l, m = (int(t) for t in spec.split(","))
        lmax = max(l, 1)
        alm = np.zeros(hp.Alm.getsize(lmax), dtype=np.complex128)
        alm[hp.Alm.getidx(lmax, l, m)] = 1.0
        maps.append(hp.alm2map(alm, nside, lmax=lmax))
    np.save(out, np.array(maps, dtype=np.float64))
