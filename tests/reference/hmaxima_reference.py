#!/usr/bin/python3
"""skimage.morphology.h_maxima reference (Debian's python3-skimage).

usage: hmaxima_reference.py IN.f32 HEIGHT WIDTH H
Reads a float32 image and prints the number of h-maxima (connected with 8 neighbours) and then
their pixel indices (row-major), one per line.
"""
import sys

import numpy as np
from scipy import ndimage
from skimage.morphology import h_maxima

src, h, w, depth = sys.argv[1], int(sys.argv[2]), int(sys.argv[3]), float(sys.argv[4])
img = np.fromfile(src, dtype="<f4").reshape(h, w).astype(np.float64)
maxima = h_maxima(img, depth, footprint=np.ones((3, 3)))
labels, count = ndimage.label(maxima, np.ones((3, 3)))
print(count)
for k in np.flatnonzero(maxima):
    print(k)
