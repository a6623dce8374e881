#!/usr/bin/python3
"""scipy.ndimage.gaussian_filter reference (Debian's python3-scipy).

usage: gaussian_reference.py IN.f32 OUT.f64 HEIGHT WIDTH SIGMA
Reads a float32 image, filters it with mode="reflect", truncate=4.0, writes float64.
"""
import sys

import numpy as np
from scipy.ndimage import gaussian_filter

src, dst, h, w, sigma = sys.argv[1], sys.argv[2], int(sys.argv[3]), int(sys.argv[4]), float(sys.argv[5])
img = np.fromfile(src, dtype="<f4").reshape(h, w).astype(np.float64)
gaussian_filter(img, sigma, mode="reflect", truncate=4.0).astype("<f8").tofile(dst)
