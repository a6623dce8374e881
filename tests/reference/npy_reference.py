"""Reads a .npy file with numpy and prints its shape, dtype and the sum of its values."""
import sys

import numpy as np

a = np.load(sys.argv[1])
print(tuple(int(d) for d in a.shape), a.dtype, f"{float(a.sum()):.4f}")
