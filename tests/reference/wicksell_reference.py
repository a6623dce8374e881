#!/usr/bin/python3
"""Wicksell's section-diameter density of log-normal spheres, by scipy.integrate.quad on the
untransformed kernel (Debian's python3-scipy), as an independent check of stereology.cpp.

usage: wicksell_reference.py MEDIAN_UM SIGMA_LN LIMIT_UM D1 [D2 ...]
Prints f(d) per µm for every d, one per line, then the share of sections larger than LIMIT_UM.
f(d) = d / <D> * integral_d^inf g(D) / sqrt(D^2 - d^2) dD, the singularity at D = d taken by quad's
algebraic weight (D - d)^(-1/2).
"""
import sys

import numpy as np
from scipy import integrate, stats

median, sigma, limit = float(sys.argv[1]), float(sys.argv[2]), float(sys.argv[3])
g = stats.lognorm(s=sigma, scale=median)
top = g.ppf(1 - 1e-13)


def f(d):
    if d >= top:
        return 0.0
    val, _ = integrate.quad(lambda D: g.pdf(D) / np.sqrt(D + d), d, top, weight="alg", wvar=(-0.5, 0.0),
                            limit=400, epsabs=0, epsrel=1e-11)
    return d / g.mean() * val


for arg in sys.argv[4:]:
    print("%.12e" % f(float(arg)))
share, _ = integrate.quad(f, limit, top, limit=400, epsabs=0, epsrel=1e-10)
print("%.12e" % share)
