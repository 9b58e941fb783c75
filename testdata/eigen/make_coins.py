#!/usr/bin/python3
"""Make coins152x192.png: scikit-image's coins.png (303 rows x 384 columns,
8-bit gray, BSD-licensed, shipped by Debian's python3-skimage in
skimage/data) rescaled by 0.5 with skimage.transform.rescale (bilinear,
anti-aliased), which gives 152 rows x 192 columns, rounded to 8 bits.

Usage: /usr/bin/python3 testdata/eigen/make_coins.py
"""
import os

import numpy as np
import skimage
from skimage import io
from skimage.transform import rescale

src = os.path.join(os.path.dirname(skimage.__file__), "data", "coins.png")
img = io.imread(src)
assert img.ndim == 2 and img.dtype == np.uint8, (img.shape, img.dtype)
small = rescale(img.astype(np.float64), 0.5, order=1, anti_aliasing=True, preserve_range=True)
out = np.clip(np.rint(small), 0, 255).astype(np.uint8)
assert out.shape == (152, 192), out.shape
dst = os.path.join(os.path.dirname(os.path.abspath(__file__)), "coins152x192.png")
io.imsave(dst, out, check_contrast=False)
print("source", src, img.shape, "->", dst, out.shape, "scikit-image", skimage.__version__)
