#!/usr/bin/python3
"""Reference values for the scenes package tests, from Debian's python3-skimage.

Run from this directory with the system interpreter:

    apt-get install -y python3-skimage
    /usr/bin/python3 skimage_reference.py

It writes
  otsu_skimage.txt          skimage.filters.threshold_otsu on integer images
                            whose histograms are defined by integer formulas
                            repeated in scenes_test.go (otsuCase);
  shepp_logan_skimage.txt   statistics of skimage.data.shepp_logan_phantom()
                            (400 x 400, stored by scikit-image as an 8-bit
                            PNG): the pixel count of each gray level and the
                            means of its 8 x 8 blocks (a 50 x 50 grid).
"""
import numpy as np
import skimage
from skimage import data
from skimage.filters import threshold_otsu


def bimodal_counts():
    # Two integer parabolic bumps plus a deterministic jitter, every bin
    # non-empty so no threshold ties arise. Mirrored in scenes_test.go.
    v = np.arange(256, dtype=np.int64)
    return (1 + np.maximum(0, 900 - (v - 60) ** 2)
            + np.maximum(0, 2 * (1600 - (v - 170) ** 2) // 3)
            + (v * 7919 + 13) % 97)


def image_from_counts(counts, scale, offset, dtype):
    vals = np.arange(len(counts), dtype=np.int64) * scale + offset
    return np.repeat(vals, counts).astype(dtype)


cases = {
    "bimodal8": image_from_counts(bimodal_counts(), 1, 0, np.uint8),
    "bimodal16": image_from_counts(bimodal_counts(), 250, 17, np.uint16),
    # Hand-worked in scenes_test.go: 10 x3, 20 x1, 200 x2 -> 20.
    "gap8": np.array([10, 10, 10, 20, 200, 200], dtype=np.uint8),
}
with open("otsu_skimage.txt", "w") as f:
    f.write("# skimage %s threshold_otsu; foreground = image > threshold\n" % skimage.__version__)
    for name, img in cases.items():
        f.write("%s %d\n" % (name, int(threshold_otsu(img))))

p = data.shepp_logan_phantom()
assert p.shape == (400, 400)
levels, counts = np.unique(p, return_counts=True)
blocks = p.reshape(50, 8, 50, 8).mean(axis=(1, 3))
with open("shepp_logan_skimage.txt", "w") as f:
    f.write("# skimage %s data.shepp_logan_phantom(), 400x400\n" % skimage.__version__)
    f.write("levels %d\n" % len(levels))
    for lv, c in zip(levels, counts):
        f.write("%.6f %d\n" % (lv, c))
    f.write("blocks 50 8\n")
    for row in blocks:
        f.write(" ".join("%.5f" % x for x in row) + "\n")
