#!/usr/bin/python3
"""Connected components and region properties from scipy.ndimage.label and skimage.measure.regionprops
(Debian's python3-scipy and python3-skimage).

usage: regionprops_reference.py MASK.npy CONNECTIVITY(4|8)
prints per label (in label order): area row_centroid col_centroid mu_rr mu_cc mu_rc
(central second moments of the pixel centres divided by the area).
"""
import sys

import numpy as np
from scipy import ndimage
from skimage.measure import regionprops

mask = np.load(sys.argv[1]) > 0.5
structure = ndimage.generate_binary_structure(2, 1 if sys.argv[2] == "4" else 2)
labels, n = ndimage.label(mask, structure=structure)
for r in regionprops(labels):
    mu = r.moments_central
    area = r.area
    print("%d %.12g %.12g %.12g %.12g %.12g" % (area, r.centroid[0], r.centroid[1], mu[2, 0] / area, mu[0, 2] / area, mu[1, 1] / area))
