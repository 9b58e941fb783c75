#!/usr/bin/python3
"""Generated shapes and their regionprops, the reference of cleave's
region measurements (segment/measure) and outlines.

Run with Debian's interpreter and python3-skimage (0.19 or newer):

    /usr/bin/python3 testdata/measure/shapes.py > shapes.json

It prints one JSON object: {"skimage": version, "scenes": [...]}. Each
scene has its size, label map (row-major), intensity planes (row-major,
integers, one per channel), class map, and per label the values of
skimage.measure.regionprops with the intensity image (channels last),
plus numpy's population standard deviation and sum of the intensities,
and the analytic perimeter of the shape the label was drawn from (when it
has one). Shapes are drawn by testing pixel centres (x, y) against the
shape; x is the column, y the row. The generator is seeded, so the output
is the same on every run.
"""
import json
import math
import sys

import numpy as np
import skimage
from skimage.measure import regionprops

RNG = np.random.default_rng(20240914)


def ellipse_perimeter(a, b):
    # Ramanujan's second approximation (relative error ~ 1e-10 here).
    h = ((a - b) / (a + b)) ** 2
    return math.pi * (a + b) * (1 + 3 * h / (10 + math.sqrt(4 - 3 * h)))


class Scene:
    def __init__(self, name, w, h, channels=1):
        self.name, self.w, self.h = name, w, h
        self.labels = np.zeros((h, w), dtype=np.int32)
        self.truth = {}
        self.yy, self.xx = np.mgrid[:h, :w].astype(float)
        self.channels = channels

    def ellipse(self, label, cx, cy, a, b, theta, perimeter=True):
        u = (self.xx - cx) * math.cos(theta) + (self.yy - cy) * math.sin(theta)
        v = -(self.xx - cx) * math.sin(theta) + (self.yy - cy) * math.cos(theta)
        m = (u / a) ** 2 + (v / b) ** 2 <= 1
        self.labels[m] = label
        if perimeter:
            self.truth[label] = ellipse_perimeter(a, b)
        return m

    def rect(self, label, cx, cy, sx, sy, theta):
        u = (self.xx - cx) * math.cos(theta) + (self.yy - cy) * math.sin(theta)
        v = -(self.xx - cx) * math.sin(theta) + (self.yy - cy) * math.cos(theta)
        m = (np.abs(u) <= sx / 2) & (np.abs(v) <= sy / 2)
        self.labels[m] = label
        return m

    def out(self):
        lab = self.labels
        planes = [RNG.integers(0, 65536, size=lab.shape) for _ in range(self.channels)]
        # A smooth ramp under the noise, so that means differ by region.
        for k, p in enumerate(planes):
            p[:] = np.clip(p // 4 + (self.xx * (97 + 13 * k)).astype(int) % 40000, 0, 65535)
        inten = np.stack(planes, axis=-1).astype(float)
        ids = [int(l) for l in np.unique(lab) if l > 0]
        classes = np.zeros_like(lab)
        cls = {l: int(RNG.integers(0, 3)) for l in ids}
        for l in ids:
            classes[lab == l] = cls[l]
        props = []
        for r in regionprops(lab, intensity_image=inten):
            vals = inten[lab == r.label]
            minr, minc, maxr, maxc = r.bbox
            props.append({
                "label": int(r.label),
                "area": int(r.area),
                "centroid": [float(r.centroid[1]), float(r.centroid[0])],
                "bbox": [int(minc), int(minr), int(maxc), int(maxr)],
                "perimeter_crofton": float(r.perimeter_crofton),
                "perimeter_skimage": float(r.perimeter),
                "equivalent_diameter_area": float(r.equivalent_diameter_area),
                "axis_major_length": float(r.axis_major_length),
                "axis_minor_length": float(r.axis_minor_length),
                "eccentricity": float(r.eccentricity),
                "orientation": float(r.orientation),
                "area_convex": int(r.area_convex),
                "solidity": float(r.solidity),
                "feret_diameter_max": float(r.feret_diameter_max),
                "intensity_mean": [float(v) for v in np.atleast_1d(r.intensity_mean)],
                "intensity_min": [float(v) for v in np.atleast_1d(r.intensity_min)],
                "intensity_max": [float(v) for v in np.atleast_1d(r.intensity_max)],
                "intensity_std": [float(v) for v in vals.std(axis=0)],
                "intensity_sum": [float(v) for v in vals.sum(axis=0)],
                "touches_border": bool(minr == 0 or minc == 0 or maxr == lab.shape[0] or maxc == lab.shape[1]),
                "class": cls[r.label],
                "true_perimeter": self.truth.get(int(r.label)),
            })
        return {"name": self.name, "width": self.w, "height": self.h,
                "labels": [int(v) for v in lab.ravel()],
                "planes": [[int(v) for v in p.ravel()] for p in planes],
                "classes": [int(v) for v in classes.ravel()],
                "regions": props}


def scenes():
    out = []
    # Discs of radius 20, 10 and 5 at sub-pixel centres.
    s = Scene("disks", 180, 120)
    for k, (r, cx, cy) in enumerate([(20, 30, 30), (20, 80.5, 30.5), (20, 130.3, 31.7),
                                     (10, 20, 90), (10, 55.25, 90.75), (5, 90, 90), (5, 110.5, 95.5)]):
        s.ellipse(k + 1, cx, cy, r, r, 0)
    out.append(s.out())
    # Ellipses 25 x 10 at several angles.
    s = Scene("ellipses", 240, 120)
    for k, deg in enumerate([0, 30, 45, 60, 90, 120, 150, 170]):
        cx, cy = 30 + 60 * (k % 4), 30 + 60 * (k // 4)
        s.ellipse(k + 1, cx + 0.3, cy + 0.1, 25, 10, math.radians(deg))
    out.append(s.out())
    # Squares and rectangles, upright and rotated.
    s = Scene("squares", 200, 100)
    s.rect(1, 25, 25, 30, 30, 0)
    s.rect(2, 75.5, 25.5, 30, 30, math.radians(30))
    s.rect(3, 125, 25, 30, 30, math.radians(45))
    s.rect(4, 175, 25, 12, 36, 0)
    s.rect(5, 25, 75, 40, 14, math.radians(20))
    s.rect(6, 75, 75, 1, 1, 0)
    s.rect(7, 125, 75, 30, 1, 0)
    out.append(s.out())
    # Shapes with holes: a ring, a frame, a disc with two holes, a hole
    # holding another object, an island inside a hole of the same label.
    s = Scene("holes", 200, 100)
    ring = s.ellipse(1, 30, 30, 22, 22, 0, perimeter=False)
    s.labels[ring & ((s.xx - 30) ** 2 + (s.yy - 30) ** 2 <= 12 ** 2)] = 0
    s.rect(2, 85, 30, 36, 36, 0)
    s.rect(0, 85, 30, 20, 20, 0)
    s.rect(3, 85, 30, 8, 8, 0)  # an object inside the frame's hole
    s.ellipse(4, 150, 30, 24, 18, math.radians(25), perimeter=False)
    s.ellipse(0, 142, 26, 5, 5, 0, perimeter=False)
    s.ellipse(0, 160, 34, 4, 7, 0, perimeter=False)
    s.rect(5, 40, 75, 40, 40, 0)
    s.rect(0, 40, 75, 28, 28, 0)
    s.rect(5, 40, 75, 10, 10, 0)  # island of the same label in its hole
    # Holes touching the outline at a corner only (diagonal pixels).
    s.rect(6, 110, 75, 20, 20, 0)
    s.labels[72:75, 107:110] = 0
    s.labels[75, 110] = 0
    s.labels[71, 106] = 0
    out.append(s.out())
    # Touching objects, objects at the border, corner contacts: a
    # Voronoi tiling of random seeds, with background cells.
    s = Scene("touching", 90, 70, channels=3)
    seeds = RNG.random((25, 2)) * [90, 70]
    d = (s.xx[..., None] - seeds[:, 0]) ** 2 + (s.yy[..., None] - seeds[:, 1]) ** 2
    cell = np.argmin(d, axis=-1)
    s.labels[:] = np.where(cell % 5 == 4, 0, cell + 1)
    out.append(s.out())
    # Noise: random labels 0..4 on a small grid, every corner case of
    # pixel contacts, disconnected labels.
    s = Scene("noise", 23, 17)
    s.labels[:] = RNG.integers(0, 5, size=(17, 23))
    out.append(s.out())
    return out


if __name__ == "__main__":
    json.dump({"skimage": skimage.__version__, "scenes": scenes()}, sys.stdout)
