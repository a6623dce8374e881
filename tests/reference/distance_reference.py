#!/usr/bin/python3
"""scipy.ndimage.distance_transform_edt reference (Debian's python3-scipy).

usage: distance_reference.py IN.u8 HEIGHT WIDTH
Reads a uint8 mask (1: in the part) and prints, per pixel in row-major order, the Euclidean
distance from each part pixel to the nearest pixel off the part (0 off the part), one per line.
"""
import sys

import numpy as np
from scipy import ndimage

src, h, w = sys.argv[1], int(sys.argv[2]), int(sys.argv[3])
mask = np.fromfile(src, dtype=np.uint8).reshape(h, w)
for v in ndimage.distance_transform_edt(mask).ravel():
    print(f"{v:.9g}")
