#!/usr/bin/python3
"""Reference for affinity.GaussianSmooth: scipy.ndimage.gaussian_filter
(Debian python3-scipy) with mode="reflect" and truncate=3.

    gaussian_filter.py IN W H SIGMA OUT

IN holds W*H little-endian float32 values, row-major; OUT gets the
filtered plane in the same layout, computed in float64.
"""
import sys

import numpy as np
from scipy import ndimage

sys.dont_write_bytecode = True


def main():
    src, w, h, sigma, dst = sys.argv[1], int(sys.argv[2]), int(sys.argv[3]), float(sys.argv[4]), sys.argv[5]
    img = np.fromfile(src, dtype="<f4").astype(np.float64).reshape(h, w)
    out = ndimage.gaussian_filter(img, sigma, mode="reflect", truncate=3.0)
    out.astype("<f4").tofile(dst)


if __name__ == "__main__":
    main()
