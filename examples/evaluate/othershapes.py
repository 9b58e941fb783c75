#!/usr/bin/python3
"""Scenes of kinds the project's Go generators do not make, with exact
instance masks, and their scores beside the classical watershed baseline
(watershed.py). They check that a rule chosen on imageio/scenes carries
over to shapes it was not made for. Debian python3-skimage, python3-scipy,
python3-sklearn.

Kinds: rods (capsules 4-6.5 px in radius, 14-40 px long, half of them
placed from a pixel of an earlier rod and kept where they do not overlap
it; bright on dark, blur 1.5 px, uneven light, Poisson and read noise), membrane (packed Voronoi cells whose 2-px boundaries are bright,
textured interiors), lobes (scikit-image's binary_blobs: lobed shapes that
never touch, each connected shape one object), specks (150-300 spots of
radius 1.5-4 px, a third touching another), bodies (large textured cells
of radius 18-40 px with dark nucleoli, a third touching another), sizes
(domed nuclei of radius 4-30 px in one field, a third touching another),
hollow (discs of radius 7-22 px with a bright rim and a dim interior, a
quarter touching another; the mask is the filled disc), defocus (nuclei
each blurred by its own 0.7-7 px, some edges very soft; the mask is the
nucleus in focus), jpeg (domed nuclei saved as an 8-bit JPEG at quality
60-80, NAME.jpg), elongated (packed ellipses of aspect 2-4 at random
orientations, most touching), chromatin (nuclei with textured chromatin
and bright foci), lowcount (nuclei 2-3 noise standard deviations above a
background of 6-15 photons, raw 16-bit counts on an offset of 100), pits
(dark inclusions in a polished metal section: bright grains with dark
grain boundaries and an etch texture; the mask holds the inclusions).
Four more stand beside the Go kinds where cleave was weakest, modelled
independently of them: brightfield (dark nuclei by Beer-Lambert
absorption on a vignetted bright field, pale cytoplasm around half of
them), tiles (packed grains of a warped Laguerre tessellation, boundaries
of varying width and darkness; no background), glowing (sparse nuclei
2.5-6 noise deviations above broad glows, photon noise) and machined
(directional grain under raking light, pits with a lit lip, dark and
bright inclusions, a crack; the mask holds pits, inclusions and crack).
Three more were written to try cleave on situations no earlier kind
covers: bacteria (dark rods with a faint bright halo on an uneven bright
field, end to end and side by side), filtered (bright irregular
particles on a porous filter membrane: dense dark pores, particles
4.5-12 pixel noise deviations above it) and span (fluorescent nuclei whose brightness spans 30x in
one field, on a dark background); large (cells of radius 28-60 px, 8-25
a field) and counts8 (8-bit nuclei of 14-40 counts on 8, saved as raw
8-bit values). Four more of that kind came after them: vignette (nuclei
under a radial falloff to 0.35 at the corners), dense (150-260 nuclei in
long touching chains without dark seams), phase (dark cells ringed by the
bright halo of phase contrast on a grey field; the mask is the cell) and
lowrange (raw 16-bit counts 150-400 above a background of 1000 with a
gradient of +-150).

    othershapes.py gen KIND DIR SEED N      # DIR/KIND-SEED.png (jpeg: .jpg), .truth.png
    othershapes.py score KIND CHOOSE_DIR REPORT_DIR LABELS_DIR...

score chooses the watershed's parameters on CHOOSE_DIR (watershed.py's
grid for nuclei, for grains on the inverted image for membrane, the
nuclei's with objects down to 5 px and closer peaks for specks, surface's
(inverted, objects down to 5 px) for pits and machined, stained's for
brightfield, bacteria and phase, grains' for tiles, haze's for glowing; '-' skips the
baseline) and
prints object F1, mAP over IoU 0.5:0.95 and ARI per scene of REPORT_DIR
for the baseline and for each folder of NAME.labels.png (e.g. cleave's
outputs), then their means.
"""
import os
import sys

import numpy as np
from scipy import ndimage as ndi
from skimage import data, draw, filters, io, measure, segmentation
from sklearn.metrics import adjusted_rand_score

# No __pycache__ beside the scripts in the repository.
sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import watershed as W  # noqa: E402


def noise(img, rng, peak, read):
    img = np.clip(img, 0, None)
    out = rng.poisson(img * peak) / peak + rng.normal(0, read, img.shape)
    return out

def save(d, name, img, truth, fmt="png16", quality=75):
    """DIR/NAME.png (16-bit, the maximum at 60000; fmt "counts": the
    values rounded as they are, a camera's raw counts) or DIR/NAME.jpg
    (fmt "jpg": 8-bit, the maximum at 250, JPEG at quality), and the
    instance labels DIR/NAME.truth.png."""
    img = np.clip(img, 0, None)
    if fmt == "jpg":
        img = np.clip(np.round(img / max(img.max(), 1e-9) * 250), 0, 255).astype(np.uint8)
        io.imsave(os.path.join(d, name + ".jpg"), img, check_contrast=False, quality=int(quality))
    else:
        if fmt == "counts":
            # Written by Pillow as 16-bit (mode I;16): imsave stores a
            # uint16 image whose values fit a byte as an 8-bit PNG.
            from PIL import Image
            Image.fromarray(np.clip(np.round(img), 0, 65535).astype(np.uint16)).save(os.path.join(d, name + ".png"))
        else:
            img = (img / max(img.max(), 1e-9) * 60000).astype(np.uint16)
            io.imsave(os.path.join(d, name + ".png"), img, check_contrast=False)
    io.imsave(os.path.join(d, name + ".truth.png"), truth.astype(np.uint16), check_contrast=False)

def place(rng, placed, share, reach, lo, hi):
    """Centre of a new object: with probability share beside one of placed
    (centre y, x and radius r each), reach(r) from its centre in a random
    direction, else uniform on [lo, hi) in both axes."""
    if placed and rng.random() < share:
        cy, cx, cr = placed[rng.integers(len(placed))]
        a = rng.uniform(0, 2 * np.pi)
        d = reach(cr)
        return cy + d * np.sin(a), cx + d * np.cos(a)
    return rng.uniform(lo, hi), rng.uniform(lo, hi)

def rods(rng, n=512):
    truth = np.zeros((n, n), np.int32)
    lab = 0
    tries = 0
    target = rng.integers(25, 45)
    yy, xx = np.mgrid[0:n, 0:n]
    while lab < target and tries < 3000:
        tries += 1
        L = rng.uniform(14, 40); r = rng.uniform(4, 6.5)
        th = rng.uniform(0, np.pi)
        if lab > 0 and rng.random() < 0.5:
            # Half the rods start from a pixel of an earlier one (they
            # are kept only where they do not overlap it).
            ys, xs = np.nonzero(truth == rng.integers(1, lab + 1))
            k = rng.integers(len(ys)); cy, cx = ys[k], xs[k]
            cy += (L / 2 + r) * np.sin(th); cx += (L / 2 + r) * np.cos(th)
        else:
            cy, cx = rng.uniform(20, n - 20), rng.uniform(20, n - 20)
        dy, dx = np.sin(th), np.cos(th)
        # distance from segment
        py, px = yy - cy, xx - cx
        t = np.clip(py * dy + px * dx, -L / 2, L / 2)
        dist = np.hypot(py - t * dy, px - t * dx)
        m = dist <= r
        if m.sum() < 30 or (truth[m] > 0).any():
            continue
        if m[0].any() or m[-1].any() or m[:, 0].any() or m[:, -1].any():
            continue
        lab += 1
        truth[m] = lab
    inten = rng.uniform(0.5, 1.0, lab + 1); inten[0] = 0
    img = inten[truth]
    img = filters.gaussian(img, 1.5)
    light = 1 + 0.3 * np.sin(xx / n * np.pi) * np.cos(yy / n * 2)
    img = img * light + 0.08
    return noise(img, rng, 200, 0.02), truth

def membrane(rng, n=512):
    k = rng.integers(60, 140)
    pts = rng.uniform(0, n, (k, 2))
    yy, xx = np.mgrid[0:n, 0:n]
    # Voronoi by nearest seed
    d = np.full((n, n), np.inf); lab = np.zeros((n, n), np.int32)
    for i, (py, px) in enumerate(pts):
        dd = (yy - py) ** 2 + (xx - px) ** 2
        m = dd < d; d[m] = dd[m]; lab[m] = i + 1
    b = segmentation.find_boundaries(lab, mode="thick")
    truth = lab.copy(); truth[b] = 0
    truth, _, _ = segmentation.relabel_sequential(truth)
    inten = rng.uniform(0.15, 0.35, truth.max() + 1)
    img = inten[truth] + 0.05 * filters.gaussian(rng.normal(0, 1, (n, n)), 2) * 10
    img[b] = rng.uniform(0.6, 1.0)
    img = filters.gaussian(img, 1.0)
    light = 1 + 0.25 * np.cos(xx / n * 3 + 1) * np.sin(yy / n * 2 + 0.5)
    return noise(img * light, rng, 300, 0.02), truth

def lobes(rng, n=512):
    m = data.binary_blobs(length=n, blob_size_fraction=0.06, volume_fraction=0.25, seed=int(rng.integers(1 << 30)))
    truth = measure.label(m, connectivity=1)
    sizes = np.bincount(truth.ravel()); small = sizes < 20; small[0] = False
    truth[small[truth]] = 0
    truth, _, _ = segmentation.relabel_sequential(truth)
    img = filters.gaussian((truth > 0).astype(float) * 0.8 + 0.1, 1.2)
    return noise(img, rng, 150, 0.03), truth

def specks(rng, n=512):
    """Small bright spots (radius 1.5-4 px, 150-300 of them, a third
    placed touching an earlier one) of unequal brightness on a dim uneven
    field: puncta, inclusions, fine particles."""
    truth = np.zeros((n, n), np.int32)
    img = np.zeros((n, n))
    yy, xx = np.mgrid[0:n, 0:n]
    lab, tries = 0, 0
    target = rng.integers(150, 300)
    centres = []
    while lab < target and tries < 5000:
        tries += 1
        r = rng.uniform(1.5, 4)
        cy, cx = place(rng, centres, 0.33, lambda cr: cr + r + 0.5, 4, n - 4)
        y0, y1, x0, x1 = int(max(cy - r - 1, 0)), int(min(cy + r + 2, n)), int(max(cx - r - 1, 0)), int(min(cx + r + 2, n))
        d2 = (yy[y0:y1, x0:x1] - cy) ** 2 + (xx[y0:y1, x0:x1] - cx) ** 2
        m = d2 <= r * r
        if m.sum() < 5 or (truth[y0:y1, x0:x1][m] > 0).any():
            continue
        lab += 1
        truth[y0:y1, x0:x1][m] = lab
        img[y0:y1, x0:x1][m] = rng.uniform(0.35, 1.0)
        centres.append((cy, cx, r))
    img = filters.gaussian(img, 0.8)
    light = 0.12 + 0.06 * np.sin(xx / n * 2.5 + 0.3) * np.cos(yy / n * 1.7)
    return noise(img + light, rng, 250, 0.02), truth

def bodies(rng, n=512):
    """Large textured cells (ellipses of radius 18-40 px, aspect up to
    1.8) with dark nucleoli and granular interiors, a third of them
    touching an earlier one, bright on dark under uneven light."""
    truth = np.zeros((n, n), np.int32)
    img = np.zeros((n, n))
    yy, xx = np.mgrid[0:n, 0:n]
    lab, tries = 0, 0
    target = rng.integers(15, 35)
    cells = []
    while lab < target and tries < 2000:
        tries += 1
        a = rng.uniform(18, 40); b = a / rng.uniform(1, 1.8); th = rng.uniform(0, np.pi)
        cy, cx = place(rng, cells, 0.33, lambda ca: (ca + b) * 0.85, 0, n)
        u = (xx - cx) * np.cos(th) + (yy - cy) * np.sin(th)
        v = -(xx - cx) * np.sin(th) + (yy - cy) * np.cos(th)
        m = (u / a) ** 2 + (v / b) ** 2 <= 1
        if m.sum() < 200:
            continue
        over = truth[m] > 0
        if over.mean() > 0.08:
            continue
        lab += 1
        m &= truth == 0
        truth[m] = lab
        level = rng.uniform(0.4, 0.9)
        img[m] = level
        for _ in range(rng.integers(1, 4)):
            r = rng.uniform(3, 6)
            k = rng.integers(m.sum())
            py, px = np.argwhere(m)[k]
            img[((yy - py) ** 2 + (xx - px) ** 2 <= r * r) & m] = level * 0.55
        cells.append((cy, cx, a))
    grain = filters.gaussian(rng.normal(0, 1, (n, n)), 1.5) * 2.5
    img = img * (1 + 0.25 * grain)
    img = filters.gaussian(img, 1.5)
    light = 1 + 0.3 * np.cos(xx / n * 2.2 + 0.7) * np.sin(yy / n * 2.9 + 0.2)
    return noise(img * light + 0.05, rng, 200, 0.02), truth

def sizes(rng, n=512):
    """Round and oval nuclei whose radii span 4-30 px in one field (drawn
    log-uniformly), a third touching an earlier one, each with its own
    brightness and a domed profile, blur 1.2 px, uneven light: one field
    with objects of very different scales."""
    truth = np.zeros((n, n), np.int32)
    img = np.zeros((n, n))
    yy, xx = np.mgrid[0:n, 0:n]
    lab, tries = 0, 0
    target = rng.integers(25, 60)
    cells = []
    while lab < target and tries < 4000:
        tries += 1
        a = float(np.exp(rng.uniform(np.log(4), np.log(30))))
        b = a / rng.uniform(1, 1.5); th = rng.uniform(0, np.pi)
        cy, cx = place(rng, cells, 0.33, lambda ca: (ca + b) * 0.9, a, n - a)
        y0, y1 = int(max(cy - a - 2, 0)), int(min(cy + a + 3, n))
        x0, x1 = int(max(cx - a - 2, 0)), int(min(cx + a + 3, n))
        if y1 <= y0 or x1 <= x0:
            continue
        u = (xx[y0:y1, x0:x1] - cx) * np.cos(th) + (yy[y0:y1, x0:x1] - cy) * np.sin(th)
        v = -(xx[y0:y1, x0:x1] - cx) * np.sin(th) + (yy[y0:y1, x0:x1] - cy) * np.cos(th)
        q = (u / a) ** 2 + (v / b) ** 2
        m = q <= 1
        if m.sum() < 30:
            continue
        sub = truth[y0:y1, x0:x1]
        if (sub[m] > 0).mean() > 0.05:
            continue
        m &= sub == 0
        lab += 1
        sub[m] = lab
        img[y0:y1, x0:x1][m] = rng.uniform(0.35, 1.0) * (1 - 0.35 * q[m])
        cells.append((cy, cx, a))
    img = filters.gaussian(img, 1.2)
    light = 1 + 0.3 * np.sin(xx / n * 2.1 + 0.4) * np.cos(yy / n * 1.3)
    return noise(img * light + 0.06, rng, 200, 0.02), truth

def hollow(rng, n=512):
    """Ring-like objects: discs of radius 7-22 px whose 2-4 px rim is
    bright and whose interior is at 25-50 % of the rim (vesicles, shells,
    stained envelopes), a quarter touching an earlier one, blur 1 px,
    uneven light. The mask is the filled disc."""
    truth = np.zeros((n, n), np.int32)
    img = np.zeros((n, n))
    yy, xx = np.mgrid[0:n, 0:n]
    lab, tries = 0, 0
    target = rng.integers(20, 45)
    cells = []
    while lab < target and tries < 4000:
        tries += 1
        r = rng.uniform(7, 22)
        cy, cx = place(rng, cells, 0.25, lambda cr: cr + r + 0.5, r, n - r)
        y0, y1 = int(max(cy - r - 2, 0)), int(min(cy + r + 3, n))
        x0, x1 = int(max(cx - r - 2, 0)), int(min(cx + r + 3, n))
        if y1 <= y0 or x1 <= x0:
            continue
        d = np.hypot(yy[y0:y1, x0:x1] - cy, xx[y0:y1, x0:x1] - cx)
        m = d <= r
        sub = truth[y0:y1, x0:x1]
        if m.sum() < 30 or (sub[m] > 0).any():
            continue
        lab += 1
        sub[m] = lab
        rim = rng.uniform(2, 4); level = rng.uniform(0.5, 1.0)
        img[y0:y1, x0:x1][m] = np.where(d[m] >= r - rim, level, level * rng.uniform(0.25, 0.5))
        cells.append((cy, cx, r))
    img = filters.gaussian(img, 1.0)
    light = 1 + 0.25 * np.cos(xx / n * 1.9 + 0.2) * np.sin(yy / n * 2.4 + 0.9)
    return noise(img * light + 0.07, rng, 200, 0.02), truth


def ellipse(rng, truth, cells, target, share, arange, aspect, tries_max, over_max):
    """Place up to target ellipses (half-axis a drawn by arange(rng), b =
    a / aspect(rng), random orientation) into truth, a share of them
    beside an earlier one (its centre 0.85 x (the earlier one's a + its
    own b) away, so most touch or overlap a little); an ellipse under 30
    px, or overlapping earlier ones by more than over_max of its area, is
    dropped, else it keeps only its free pixels.
    Yields (label, box slices, mask in the box, q = the ellipse's
    normalized squared radius in the box) for each one placed."""
    n = truth.shape[0]
    lab, tries = int(truth.max()), 0
    while lab < target and tries < tries_max:
        tries += 1
        a = arange(rng); b = a / aspect(rng); th = rng.uniform(0, np.pi)
        cy, cx = place(rng, cells, share, lambda ca: (ca + b) * 0.85, a, n - a)
        y0, y1 = int(max(cy - a - 2, 0)), int(min(cy + a + 3, n))
        x0, x1 = int(max(cx - a - 2, 0)), int(min(cx + a + 3, n))
        if y1 <= y0 or x1 <= x0:
            continue
        yy, xx = np.mgrid[y0:y1, x0:x1]
        u = (xx - cx) * np.cos(th) + (yy - cy) * np.sin(th)
        v = -(xx - cx) * np.sin(th) + (yy - cy) * np.cos(th)
        q = (u / a) ** 2 + (v / b) ** 2
        m = q <= 1
        if m.sum() < 30:
            continue
        sub = truth[y0:y1, x0:x1]
        if (sub[m] > 0).mean() > over_max:
            continue
        m &= sub == 0
        lab += 1
        sub[m] = lab
        cells.append((cy, cx, a))
        yield lab, (slice(y0, y1), slice(x0, x1)), m, q

def defocus(rng, n=512):
    """Nuclei (radius 8-18 px, aspect up to 1.4, a third touching an
    earlier one) each out of focus by its own blur, 0.7-7 px drawn
    log-uniformly, so some edges are sharp and some very soft; brightness
    0.3-1.0, uneven light. The mask is the nucleus in focus."""
    truth = np.zeros((n, n), np.int32)
    img = np.zeros((n, n))
    cells = []
    for lab, box, m, q in ellipse(rng, truth, cells, rng.integers(25, 50), 0.33,
                                  lambda r: r.uniform(8, 18), lambda r: r.uniform(1, 1.4), 4000, 0.05):
        s = float(np.exp(rng.uniform(np.log(0.7), np.log(7))))
        one = np.zeros((n, n))
        one[box][m] = rng.uniform(0.3, 1.0)
        # Blur this nucleus alone, on its box widened by 4 sigma.
        g = int(4 * s) + 1
        y0, y1 = max(box[0].start - g, 0), min(box[0].stop + g, n)
        x0, x1 = max(box[1].start - g, 0), min(box[1].stop + g, n)
        img[y0:y1, x0:x1] += filters.gaussian(one[y0:y1, x0:x1], s)
    yy, xx = np.mgrid[0:n, 0:n]
    light = 1 + 0.25 * np.sin(xx / n * 2.3 + 0.5) * np.cos(yy / n * 1.6)
    return noise(img * light + 0.06, rng, 200, 0.02), truth

def domed(rng, n, target, share, arange, aspect, tries_max, over_max, lo, dome):
    """Domed cells placed by ellipse (its arguments): each at a level
    drawn from [lo, 1) falling by dome toward its rim, blurred 1.2 px.
    Returns the image and the truth."""
    truth = np.zeros((n, n), np.int32)
    img = np.zeros((n, n))
    for lab, box, m, q in ellipse(rng, truth, [], target, share, arange, aspect, tries_max, over_max):
        img[box][m] = rng.uniform(lo, 1.0) * (1 - dome * q[m])
    return filters.gaussian(img, 1.2), truth

def jpeg(rng, n=512):
    """Domed nuclei (radius 6-16 px, aspect up to 1.5, a third touching an
    earlier one), blur 1.2 px, uneven light, saved as an 8-bit JPEG at
    quality 60-80 (the .jpg beside the .truth.png), as a microscope's
    snapshot or a web image."""
    img, truth = domed(rng, n, rng.integers(30, 60), 0.33, lambda r: r.uniform(6, 16),
                       lambda r: r.uniform(1, 1.5), 4000, 0.05, 0.35, 0.35)
    yy, xx = np.mgrid[0:n, 0:n]
    light = 1 + 0.3 * np.cos(xx / n * 1.8 + 0.3) * np.sin(yy / n * 2.2 + 0.6)
    return noise(img * light + 0.06, rng, 300, 0.015), truth

def elongated(rng, n=512):
    """Elongated cells: ellipses of half-length 12-26 px and aspect 2-4 at
    random orientations, packed (60 % placed beside an earlier one, up to
    8 % overlap, the later cell losing it), each with its own brightness
    and a domed profile, blur 1.2 px, uneven light."""
    img, truth = domed(rng, n, rng.integers(40, 80), 0.6, lambda r: r.uniform(12, 26),
                       lambda r: r.uniform(2, 4), 6000, 0.08, 0.4, 0.3)
    yy, xx = np.mgrid[0:n, 0:n]
    light = 1 + 0.25 * np.sin(xx / n * 2.6 + 0.2) * np.cos(yy / n * 1.9 + 0.4)
    return noise(img * light + 0.06, rng, 200, 0.02), truth

def chromatin(rng, n=512):
    """Nuclei (radius 10-22 px, aspect up to 1.5, a third touching an
    earlier one) with textured chromatin (their level times 1 + 0.45 x
    smoothed noise at 1.5 px, clipped at 0.15) and 2-8 bright foci of
    radius 1-2.5 px at 1.6-2.6 times the level, blur 1 px, uneven light."""
    truth = np.zeros((n, n), np.int32)
    img = np.zeros((n, n))
    cells = []
    tex = filters.gaussian(rng.normal(0, 1, (n, n)), 1.5)
    tex = np.clip(1 + 0.45 * tex / tex.std(), 0.15, None)
    yy, xx = np.mgrid[0:n, 0:n]
    for lab, box, m, q in ellipse(rng, truth, cells, rng.integers(20, 45), 0.33,
                                  lambda r: r.uniform(10, 22), lambda r: r.uniform(1, 1.5), 4000, 0.05):
        level = rng.uniform(0.3, 0.8)
        img[box][m] = level * tex[box][m]
        ys, xs = np.nonzero(m)
        for _ in range(rng.integers(2, 9)):
            k = rng.integers(len(ys)); r = rng.uniform(1, 2.5)
            f = ((yy[box] - yy[box][ys[k], xs[k]]) ** 2 + (xx[box] - xx[box][ys[k], xs[k]]) ** 2 <= r * r) & m
            img[box][f] = level * rng.uniform(1.6, 2.6)
    img = filters.gaussian(img, 1.0)
    light = 1 + 0.25 * np.cos(xx / n * 2.0 + 0.9) * np.sin(yy / n * 2.7 + 0.1)
    return noise(img * light + 0.05, rng, 200, 0.02), truth

def lowcount(rng, n=512):
    """A dim exposure: nuclei (radius 7-16 px, aspect up to 1.4, a quarter
    touching an earlier one) only 2-3 noise standard deviations above a
    background of 6-15 photons (Poisson noise plus a read noise of 1.5),
    blur 1 px, saved as raw 16-bit counts on a camera offset of 100."""
    truth = np.zeros((n, n), np.int32)
    img = np.zeros((n, n))
    cells = []
    bg = rng.uniform(6, 15)
    sd = np.sqrt(bg + 1.5 ** 2)
    for lab, box, m, q in ellipse(rng, truth, cells, rng.integers(25, 50), 0.25,
                                  lambda r: r.uniform(7, 16), lambda r: r.uniform(1, 1.4), 4000, 0.05):
        img[box][m] = rng.uniform(2, 3) * sd
    img = filters.gaussian(img, 1.0)
    return noise(img + bg, rng, 1, 1.5) + 100, truth

def pits(rng, n=512):
    """Dark pits and inclusions in a polished metal section on a bright
    field: Voronoi grains (40-90 px across) of unequal brightness with a
    fine etch texture and 1-px dark grain boundaries, and 30-70 dark
    inclusions (round of radius 3-8 px, or stringers of aspect 2-3; at
    least 30 px each), darker than the boundaries, some on a boundary, a
    fifth placed beside another; blur 0.8 px, light falling off 20 % across the field. The
    mask holds the inclusions only."""
    yy, xx = np.mgrid[0:n, 0:n]
    k = rng.integers(30, 80)
    pts = rng.uniform(0, n, (k, 2))
    d = np.full((n, n), np.inf); grain = np.zeros((n, n), np.int32)
    for i, (py, px) in enumerate(pts):
        dd = (yy - py) ** 2 + (xx - px) ** 2
        m = dd < d; d[m] = dd[m]; grain[m] = i + 1
    img = rng.uniform(0.72, 0.92, k + 1)[grain]
    img = img + 0.03 * filters.gaussian(rng.normal(0, 1, (n, n)), 1.0) * 5
    img[segmentation.find_boundaries(grain, mode="inner")] = rng.uniform(0.5, 0.6)
    truth = np.zeros((n, n), np.int32)
    cells = []
    for lab, box, m, q in ellipse(rng, truth, cells, rng.integers(30, 70), 0.2,
                                  lambda r: r.uniform(3, 8),
                                  lambda r: r.uniform(2, 3) if r.random() < 0.3 else r.uniform(1, 1.3), 4000, 0.05):
        img[box][m] = rng.uniform(0.08, 0.35) * (0.8 + 0.2 * q[m])
    img = filters.gaussian(img, 0.8)
    light = 1 - 0.2 * (xx * np.cos(0.6) + yy * np.sin(0.6)) / n
    return noise(img * light, rng, 400, 0.01), truth


def smooth_field(rng, n, sigma, amp):
    """1 + amp x zero-mean Gaussian-smoothed noise of scale sigma px,
    normalized to unit standard deviation and clipped at 3 of them (a
    broad field has few independent values, so its extremes can lie far
    out): a slow, irregular variation."""
    f = filters.gaussian(rng.normal(0, 1, (n, n)), sigma)
    return 1 + amp * np.clip(f / max(f.std(), 1e-12), -3, 3)

def brightfield(rng, n=512):
    """Dark stained nuclei on a bright, uneven transmitted-light field,
    by Beer-Lambert absorption: the field (a vignette falling 20-40 %
    from an off-centre point, times a slow mottle of 5 %) times 10^-OD.
    Nuclei: ellipses of radius 6-15 px, aspect up to 1.6, 40 % placed
    beside an earlier one (overlap up to 10 %, clusters form as chains),
    optical density 0.25-1.0 with a coarse texture of 15 %; pale
    cytoplasm (OD 0.04-0.12, 1.6-2.4 times the nucleus' radius, not in
    the mask) around half of them; blur 1 px, Poisson noise at 600
    photons. The mask holds the nuclei."""
    yy, xx = np.mgrid[0:n, 0:n]
    cy, cx = rng.uniform(0.2, 0.8, 2) * n
    vig = 1 - rng.uniform(0.2, 0.4) * ((yy - cy) ** 2 + (xx - cx) ** 2) / (0.5 * n * n)
    field = vig * smooth_field(rng, n, 40, 0.05)
    truth = np.zeros((n, n), np.int32)
    od = np.zeros((n, n))
    tex = smooth_field(rng, n, 2, 0.15)
    cells = []
    for lab, box, m, q in ellipse(rng, truth, cells, rng.integers(40, 90), 0.4,
                                  lambda r: r.uniform(6, 15), lambda r: r.uniform(1, 1.6), 5000, 0.1):
        od[box][m] = rng.uniform(0.25, 1.0) * tex[box][m]
    cyto = np.zeros((n, n))
    for cy, cx, a in cells:
        if rng.random() < 0.5:
            r = a * rng.uniform(1.6, 2.4)
            d2 = (yy - cy) ** 2 + (xx - cx) ** 2
            cyto = np.maximum(cyto, np.where(d2 <= r * r, rng.uniform(0.04, 0.12), 0))
    od = filters.gaussian(od + cyto * (truth == 0), 1.0)
    return noise(field * 10 ** -od, rng, 600, 0.0), truth

def tiles(rng, n=512):
    """Densely packed grains with thin dark boundaries and no background:
    a Laguerre (power-weighted Voronoi) tessellation of 50-220 seeds on
    coordinates warped by a smooth displacement of 3-7 px, so boundaries
    curve; boundaries 1-2.5 px wide whose darkness varies along them
    (some only 15 % below the grains beside them); grains of unequal
    brightness with a gentle shading each; blur 0.8 px, light varying
    20 %, Poisson noise at 300 photons. The mask holds the grains;
    boundary pixels are 0."""
    yy, xx = np.mgrid[0:n, 0:n].astype(float)
    amp = rng.uniform(3, 7)
    wy = yy + amp * (smooth_field(rng, n, 25, 1) - 1)
    wx = xx + amp * (smooth_field(rng, n, 25, 1) - 1)
    k = int(rng.integers(50, 220))
    pts = rng.uniform(0, n, (k, 2))
    wt = (rng.uniform(0.6, 1.4, k) * n / np.sqrt(k) * 0.3) ** 2
    d = np.full((n, n), np.inf); lab = np.zeros((n, n), np.int32)
    for i, (py, px) in enumerate(pts):
        dd = (wy - py) ** 2 + (wx - px) ** 2 - wt[i]
        m = dd < d; d[m] = dd[m]; lab[m] = i + 1
    # Boundary width: pixels within hw of a label change, hw 0.5-1.25 px.
    hw = rng.uniform(0.5, 1.25)
    edt = ndi_distance_to_change(lab)
    b = edt <= hw
    truth = lab.copy(); truth[b] = 0
    truth = measure.label(truth > 0, connectivity=1) * (truth > 0)
    sizes = np.bincount(truth.ravel()); small = sizes < 20; small[0] = False
    truth[small[truth]] = 0
    truth, _, _ = segmentation.relabel_sequential(truth)
    level = rng.uniform(0.45, 0.85, k + 1)[lab]
    tilt = rng.uniform(-1, 1, (k + 1, 2))[lab] * 0.1
    img = level * (1 + tilt[..., 0] * np.sin(yy / 40) + tilt[..., 1] * np.cos(xx / 40))
    depth = smooth_field(rng, n, 6, 0.5)
    dark = np.clip(rng.uniform(0.15, 0.6) * depth, 0.1, 0.85)
    img[b] = img[b] * (1 - dark[b])
    img = filters.gaussian(img, 0.8) * smooth_field(rng, n, 80, 0.1)
    return noise(img, rng, 300, 0.0), truth

def ndi_distance_to_change(lab):
    """Distance of each pixel to the nearest pixel of another label
    (scipy's Euclidean distance transform of the label-change map, minus
    half a pixel)."""
    edge = np.zeros(lab.shape, bool)
    edge[:, 1:] |= lab[:, 1:] != lab[:, :-1]
    edge[1:, :] |= lab[1:, :] != lab[:-1, :]
    return ndi.distance_transform_edt(~edge)

def glowing(rng, n=512):
    """Sparse dim nuclei on haze: 8-25 nuclei (radius 7-16 px, aspect up
    to 1.4, a fifth beside another) only 2.5-6 noise standard deviations
    above the haze under them, on a haze of 2-4 broad glows (sigma 50-150
    px) up to 5-12 times the nuclei's contrast and a vignette; blur 1.5
    px, Poisson noise at 80 photons and read noise. The mask holds the
    nuclei."""
    yy, xx = np.mgrid[0:n, 0:n]
    bg = 0.1
    sd = np.sqrt(bg / 80)
    haze = np.full((n, n), bg)
    for _ in range(rng.integers(2, 5)):
        s = rng.uniform(50, 150); cy, cx = rng.uniform(0, n, 2)
        haze += rng.uniform(5, 12) * 4 * sd * np.exp(-((yy - cy) ** 2 + (xx - cx) ** 2) / (2 * s * s))
    haze *= 1 - 0.3 * ((yy - n / 2) ** 2 + (xx - n / 2) ** 2) / (0.5 * n * n)
    truth = np.zeros((n, n), np.int32)
    img = np.zeros((n, n))
    for lab, box, m, q in ellipse(rng, truth, [], rng.integers(8, 26), 0.2,
                                  lambda r: r.uniform(7, 16), lambda r: r.uniform(1, 1.4), 3000, 0.05):
        local = haze[box][m].mean()
        img[box][m] = rng.uniform(2.5, 6) * np.sqrt(local / 80) * (1 - 0.3 * q[m])
    img = filters.gaussian(img, 1.5)
    return noise(img + haze, rng, 80, 0.01), truth

def machined(rng, n=512):
    """A machined surface under raking light: directional grain (noise
    smoothed 0.8 px across and 12-25 px along one direction, 5-10 % of
    the level), light rising 1.5-3 fold across the field, 4-10 dark pits
    (radius 3-9 px, aspect up to 1.8) each with a bright lip on the lit
    side, 3-8 inclusions (radius 3-7 px, half darker and half brighter
    than the metal) and one crack (a 1-2 px dark random walk of 80-250
    px); blur 0.7 px, Poisson noise at 1500 photons. The mask holds the
    pits, inclusions and the crack, each one object."""
    yy, xx = np.mgrid[0:n, 0:n]
    th = rng.uniform(0, np.pi)
    g = ndi.gaussian_filter(rng.normal(0, 1, (2 * n, 2 * n)), (rng.uniform(12, 25), 0.8))
    g = ndi.rotate(g, np.degrees(th), reshape=False, order=1)[n // 2:n // 2 + n, n // 2:n // 2 + n]
    img = 0.6 * (1 + rng.uniform(0.05, 0.1) * g / g.std())
    la = rng.uniform(0, 2 * np.pi)
    ramp = (xx * np.cos(la) + yy * np.sin(la)) / n
    ramp = (ramp - ramp.min()) / (ramp.max() - ramp.min())
    light = 1 + (rng.uniform(1.5, 3) - 1) * ramp
    truth = np.zeros((n, n), np.int32)
    cells = []
    for lab, box, m, q in ellipse(rng, truth, cells, rng.integers(4, 11), 0.0,
                                  lambda r: r.uniform(3, 9), lambda r: r.uniform(1, 1.8), 2000, 0.0):
        img[box][m] = 0.6 * rng.uniform(0.15, 0.45) * (0.7 + 0.3 * q[m])
        ly, lx = box[0].start, box[1].start
        ring = (q > 1) & (q < 1.6) & (((yy[box] - yy[box].mean()) * np.sin(la) + (xx[box] - xx[box].mean()) * np.cos(la)) > 0)
        img[box][ring & (truth[box] == 0)] *= 1.35
    target = int(truth.max()) + rng.integers(3, 9)
    for lab, box, m, q in ellipse(rng, truth, cells, target, 0.0,
                                  lambda r: r.uniform(3, 7), lambda r: r.uniform(1, 1.5), 2000, 0.0):
        img[box][m] = 0.6 * (rng.uniform(0.3, 0.55) if rng.random() < 0.5 else rng.uniform(1.5, 1.8))
    # The crack: a random walk of 2-px steps with a slowly turning heading.
    crack = np.zeros((n, n), bool)
    y, x = rng.uniform(0.2, 0.8, 2) * n
    h = rng.uniform(0, 2 * np.pi); w = rng.uniform(0.5, 1.0)
    for _ in range(int(rng.uniform(80, 250) / 2)):
        h += rng.normal(0, 0.25); y += 2 * np.sin(h); x += 2 * np.cos(h)
        if not (2 <= y < n - 2 and 2 <= x < n - 2):
            break
        crack |= (yy - y) ** 2 + (xx - x) ** 2 <= (w + 0.5) ** 2
    crack &= truth == 0
    if crack.sum() >= 30:
        truth[crack] = truth.max() + 1
        img[crack] *= rng.uniform(0.25, 0.5)
    img = filters.gaussian(img, 0.7) * light
    return noise(img / light.max(), rng, 1500, 0.0), truth


def capsule_mask(n, cy, cx, r, length, ang):
    yy, xx = np.mgrid[0:n, 0:n]
    dy, dx = np.sin(ang), np.cos(ang)
    t = np.clip((yy - cy) * dy + (xx - cx) * dx, -length / 2, length / 2)
    py, px = cy + t * dy, cx + t * dx
    return (yy - py) ** 2 + (xx - px) ** 2 <= r * r


def bacteria(rng, n=512):
    """Dark rods (capsules radius 2.5-4.5 px, straight part 6-26 px) on a
    bright field with a slow 15 % unevenness; a third placed touching an
    earlier one (end to end or side by side, overlap < 8 %); a faint
    bright halo 2 px wide around each (10 % of the field); blur 1 px,
    Poisson noise at 400 photons."""
    truth = np.zeros((n, n), np.int32)
    placed = []
    target = rng.integers(40, 90)
    lab = 0
    for _ in range(4000):
        if lab >= target:
            break
        r = rng.uniform(2.5, 4.5); L = rng.uniform(6, 26); a = rng.uniform(0, np.pi)
        if placed and rng.random() < 0.33:
            py, px, pr, pL, pa = placed[rng.integers(len(placed))]
            if rng.random() < 0.5:  # end to end
                d = (pL + L) / 2 + pr + r - 1
                a = pa + rng.normal(0, 0.3)
                cy, cx = py + d * np.sin(pa), px + d * np.cos(pa)
            else:  # side by side
                d = pr + r - 0.5
                a = pa + rng.normal(0, 0.2)
                cy, cx = py + d * np.cos(pa), px - d * np.sin(pa)
        else:
            cy, cx = rng.uniform(20, n - 20, 2)
        m = capsule_mask(n, cy, cx, r, L, a)
        if m.sum() < 20 or not (20 < cy < n - 20 and 20 < cx < n - 20):
            continue
        if (truth[m] > 0).sum() > 0.08 * m.sum():
            continue
        lab += 1
        truth[m & (truth == 0)] = lab
        placed.append((cy, cx, r, L, a))
    obj = truth > 0
    dist = ndi.distance_transform_edt(~obj)
    halo = ((dist > 0) & (dist <= 2.5)) * 0.10
    dark = np.zeros((n, n))
    for l in range(1, lab + 1):
        dark[truth == l] = rng.uniform(0.35, 0.65)
    field = smooth_field(rng, n, 60, 0.15 / 3)
    img = field * (1 + halo - dark)
    img = filters.gaussian(img, 1.0)
    return noise(img, rng, 400, 0.0), truth


def blobby(rng, n, cy, cx, r):
    """Irregular particle: radius perturbed by 3 harmonics up to 25 %."""
    yy, xx = np.mgrid[0:n, 0:n]
    th = np.arctan2(yy - cy, xx - cx)
    rr = np.full_like(th, r)
    for k in (2, 3, 5):
        rr += r * rng.uniform(0, 0.25 / k * 2) * np.cos(k * th + rng.uniform(0, 2 * np.pi))
    return (yy - cy) ** 2 + (xx - cx) ** 2 <= rr ** 2


def filtered(rng, n=512):
    """Bright irregular particles (radius 3-12 px, 20 % touching) on a
    porous filter membrane: a background of dense dark pores (radius 1-3
    px, 20-40 % darker) and a slow 20 % illumination fall-off; particles
    4.5-12 single-pixel noise deviations above the field (before the
    blur); blur 1.2 px, Poisson noise at 300 photons plus read noise."""
    truth = np.zeros((n, n), np.int32)
    placed = []
    lab = 0
    target = rng.integers(25, 60)
    for _ in range(3000):
        if lab >= target:
            break
        r = rng.uniform(3, 12)
        cy, cx = place(rng, placed, 0.2, lambda pr: pr + r - 1, 15, n - 15)
        m = blobby(rng, n, cy, cx, r)
        if m.sum() < 15 or (truth[m] > 0).sum() > 0.06 * m.sum():
            continue
        lab += 1
        truth[m & (truth == 0)] = lab
        placed.append((cy, cx, r))
    bg = np.ones((n, n))
    npores = int(n * n / 60)
    ys, xs = rng.uniform(0, n, npores), rng.uniform(0, n, npores)
    for y, x in zip(ys, xs):
        rr, cc = draw.disk((y, x), rng.uniform(1, 3), shape=(n, n))
        bg[rr, cc] *= 1 - rng.uniform(0.2, 0.4)
    yy, xx = np.mgrid[0:n, 0:n]
    light = 1 - 0.2 * ((yy - rng.uniform(0, n)) ** 2 + (xx - rng.uniform(0, n)) ** 2) / (2 * n * n)
    peak = 300
    sd = 1 / np.sqrt(peak)
    img = bg.copy()
    for l in range(1, lab + 1):
        img[truth == l] = 1 + rng.uniform(3, 8) * sd * 1.5
    img = filters.gaussian(img * light, 1.2)
    return noise(img, rng, peak, 0.01), truth


def span(rng, n=512):
    """Fluorescent nuclei (ellipses radius 7-16 px, aspect up to 1.5, 35 %
    touching) whose brightness spans 30x in one field (log-uniform 0.2 to
    6 above a background of 0.1), a smooth interior texture of 10 %, blur
    1.5 px, Poisson noise at 800 photons per unit: raw-like 16-bit."""
    truth = np.zeros((n, n), np.int32)
    cells = []
    img = np.full((n, n), 0.1)
    tex = smooth_field(rng, n, 3, 0.1)
    for lab, box, m, q in ellipse(rng, truth, cells, rng.integers(30, 70), 0.35,
                                  lambda r: r.uniform(7, 16), lambda r: r.uniform(1, 1.5), 4000, 0.08):
        img[box][m] = 0.1 + np.exp(rng.uniform(np.log(0.2), np.log(6))) * tex[box][m]
    img = filters.gaussian(img, 1.5)
    return noise(img, rng, 800, 0.0), truth


def large(rng, n=512):
    """Large cells (ellipses radius 28-60 px, aspect up to 1.4, 35 %
    touching), 8-25 a field, bright on dark (0.6-1.2 on 0.15) with a
    smooth 20 % interior texture, blur 2 px, Poisson noise at 200
    photons."""
    truth = np.zeros((n, n), np.int32)
    cells = []
    img = np.full((n, n), 0.15)
    tex = smooth_field(rng, n, 6, 0.2)
    for lab, box, m, q in ellipse(rng, truth, cells, rng.integers(8, 25), 0.35,
                                  lambda r: r.uniform(28, 60), lambda r: r.uniform(1, 1.4), 3000, 0.06):
        img[box][m] = rng.uniform(0.6, 1.2) * tex[box][m]
    img = filters.gaussian(img, 2.0)
    return noise(img, rng, 200, 0.0), truth


def counts8(rng, n=512):
    """8-bit nuclei stored with few grey levels: background about 8 counts,
    nuclei 14-40 counts (ellipses radius 6-14 px, 30 % touching), blur 1.2
    px, Poisson counts; saved as raw 8-bit values."""
    truth = np.zeros((n, n), np.int32)
    cells = []
    img = np.full((n, n), 8.0)
    for lab, box, m, q in ellipse(rng, truth, cells, rng.integers(30, 70), 0.3,
                                  lambda r: r.uniform(6, 14), lambda r: r.uniform(1, 1.5), 4000, 0.08):
        img[box][m] = rng.uniform(14, 40)
    img = filters.gaussian(img, 1.2, preserve_range=True)
    return np.clip(rng.poisson(img), 0, 255).astype(np.uint8), truth



def vignette(rng, n=512):
    """Nuclei (ellipses radius 6-15 px, aspect up to 1.5, 30 % touching),
    0.5-1.0 above a background of 0.15, under a radial falloff from 1 at
    a centre up to 60 px off the middle to 0.35 at the corners (the
    vignetting of a wide-field objective), blur 1.3 px, Poisson noise at
    300 photons and read noise 0.004."""
    truth = np.zeros((n, n), np.int32)
    cells = []
    img = np.full((n, n), 0.15)
    for lab, box, m, q in ellipse(rng, truth, cells, rng.integers(30, 70), 0.3,
                                  lambda r: r.uniform(6, 15), lambda r: r.uniform(1, 1.5), 4000, 0.08):
        img[box][m] = 0.15 + rng.uniform(0.5, 1.0)
    yy, xx = np.mgrid[0:n, 0:n]
    cy, cx = n / 2 + rng.uniform(-60, 60), n / 2 + rng.uniform(-60, 60)
    rr = np.hypot(yy - cy, xx - cx) / (n / np.sqrt(2))
    img = filters.gaussian(img, 1.3) * (1 - 0.65 * np.clip(rr, 0, 1) ** 2)
    return noise(img, rng, 300, 0.004), truth


def dense(rng, n=512):
    """Packed nuclei: 150-260 ellipses (radius 7-12 px, aspect up to
    1.4), 85 % placed beside an earlier one and overlapping up to 15 %,
    so most lie in long touching chains without a dark seam; 0.6-1.0 on
    0.1, blur 1.2 px, Poisson noise at 500 photons."""
    truth = np.zeros((n, n), np.int32)
    cells = []
    img = np.full((n, n), 0.1)
    for lab, box, m, q in ellipse(rng, truth, cells, rng.integers(150, 260), 0.85,
                                  lambda r: r.uniform(7, 12), lambda r: r.uniform(1, 1.4), 8000, 0.15):
        img[box][m] = rng.uniform(0.6, 1.0)
    img = filters.gaussian(img, 1.2)
    return noise(img, rng, 500, 0.0), truth


def phase(rng, n=512):
    """Cells as phase contrast shows them: dark (0.35-0.55) on a grey
    field (0.6), each ringed by a bright halo 3 px wide (0.85) just
    outside its edge (ellipses radius 8-16 px, aspect up to 1.5, 25 %
    touching); blur 1 px, Poisson noise at 400 photons. The label is the
    cell without its halo."""
    truth = np.zeros((n, n), np.int32)
    cells = []
    img = np.full((n, n), 0.6)
    for lab, box, m, q in ellipse(rng, truth, cells, rng.integers(25, 55), 0.25,
                                  lambda r: r.uniform(8, 16), lambda r: r.uniform(1, 1.5), 4000, 0.06):
        img[box][m] = rng.uniform(0.35, 0.55)
    img[ndi.binary_dilation(truth > 0, iterations=3) & (truth == 0)] = 0.85
    img = filters.gaussian(img, 1.0)
    return noise(img, rng, 400, 0.0), truth


def lowrange(rng, n=512):
    """16-bit raw counts in a narrow range: a background of 1000 counts
    with a linear gradient of +-150 across the field in a random
    direction, nuclei (ellipses radius 6-14 px, aspect up to 1.5, 30 %
    touching) 150-400 counts above it, blur 1.5 px, Poisson counts."""
    truth = np.zeros((n, n), np.int32)
    cells = []
    img = np.zeros((n, n))
    for lab, box, m, q in ellipse(rng, truth, cells, rng.integers(30, 70), 0.3,
                                  lambda r: r.uniform(6, 14), lambda r: r.uniform(1, 1.5), 4000, 0.08):
        img[box][m] = rng.uniform(150, 400)
    yy, xx = np.mgrid[0:n, 0:n]
    a = rng.uniform(0, 2 * np.pi)
    bg = 1000 + 150 * ((xx - n / 2) * np.cos(a) + (yy - n / 2) * np.sin(a)) / (n / 2)
    img = filters.gaussian(img, 1.5, preserve_range=True) + bg
    return rng.poisson(img).astype(np.float64), truth


def scores(pred, truth):
    iou, npred, ntrue = W.pair_ious(pred, truth)
    tp = (iou > 0.5).sum()
    f1 = 2 * tp / (npred + ntrue) if npred + ntrue else 1.0
    aps = []
    for t in np.arange(0.5, 0.951, 0.05):
        tp = (iou > t).sum(); d = npred + ntrue - tp
        aps.append(tp / d if d else 1.0)
    return f1, float(np.mean(aps)), adjusted_rand_score(truth.ravel(), pred.ravel())

def image_of(d, n):
    """DIR/NAME.png, or DIR/NAME.jpg when there is no PNG (kind jpeg)."""
    p = os.path.join(d, n + ".png")
    return p if os.path.exists(p) else os.path.join(d, n + ".jpg")

def load_set(d):
    names = sorted(f[:-10] for f in os.listdir(d) if f.endswith(".truth.png"))
    return [(n, W.load(image_of(d, n)), io.imread(os.path.join(d, n + ".truth.png"))) for n in names]

def choose(kind, data, inv):
    """The watershed's parameters for kind, chosen on data by
    watershed.py's own search (the grid of nuclei, or of grains on the
    inverted image for membranes, its own for specks)."""
    # Specks are a few pixels across: their grid (watershed.py) is the
    # nuclei's with objects down to 5 px, as cleave's --min-area 5, and
    # peaks 2 and 3 px apart.
    # Pits are dark on bright and a few pixels across: the grid of
    # surface (watershed.py inverts the image and allows 5-px objects).
    # The four kinds modelled on the weakest situations use the
    # grids of the Go kinds they stand beside.
    wk = {"membrane": "grains", "specks": "specks", "pits": "surface", "brightfield": "stained",
          "tiles": "grains", "glowing": "haze", "machined": "surface", "bacteria": "stained",
          "phase": "stained"}.get(kind, "nuclei")
    combos, sc = W.search(wk, [(1 - img if inv else img, truth) for _, img, truth in data])
    b = int(np.argmax(sc))
    return wk, combos[b], sc[b]


def score_main(kind, cdir, rdir, outs):
    inv = kind == "membrane"
    if cdir != "-":
        wk, p, f = choose(kind, load_set(cdir), inv)
        print("%s: watershed chosen on %s: F1 %.3f %s" % (kind, cdir, f, p))
    rep = load_set(rdir)
    tot = {}
    for n, img, truth in rep:
        res = {}
        if cdir != "-":
            lab = W.segment(1 - img if inv else img, wk, p)
            res["ws"] = scores(lab, truth)
        for o in outs:
            pl = io.imread(os.path.join(o, n + ".labels.png"))
            res[o] = scores(pl, truth)
        for k, v in res.items():
            tot.setdefault(k, []).append(v)
        print(n, int(truth.max()), " ".join("%s %.3f/%.3f/%.3f" % (os.path.basename(k), *v) for k, v in res.items()))
    for k, v in tot.items():
        print("MEAN %-30s F1 %.3f mAP %.3f ARI %.3f" % (k, *np.mean(v, axis=0)))


KINDS = {"rods": rods, "membrane": membrane, "lobes": lobes, "specks": specks, "bodies": bodies,
         "sizes": sizes, "hollow": hollow, "defocus": defocus, "jpeg": jpeg, "elongated": elongated,
         "chromatin": chromatin, "lowcount": lowcount, "pits": pits,
         "brightfield": brightfield, "tiles": tiles, "glowing": glowing, "machined": machined,
         "bacteria": bacteria, "filtered": filtered, "span": span, "large": large, "counts8": counts8,
         "vignette": vignette, "dense": dense, "phase": phase, "lowrange": lowrange}


def main():
    if len(sys.argv) == 6 and sys.argv[1] == "gen":
        kind, out, seed, count = sys.argv[2], sys.argv[3], int(sys.argv[4]), int(sys.argv[5])
        os.makedirs(out, exist_ok=True)
        for s in range(seed, seed + count):
            rng = np.random.default_rng(s)
            img, truth = KINDS[kind](rng)
            if img.dtype == np.uint8:  # raw 8-bit values as they are
                io.imsave(os.path.join(out, "%s-%d.png" % (kind, s)), img, check_contrast=False)
                io.imsave(os.path.join(out, "%s-%d.truth.png" % (kind, s)), truth.astype(np.uint16), check_contrast=False)
            elif kind == "jpeg":
                save(out, "%s-%d" % (kind, s), img, truth, "jpg", rng.integers(60, 81))
            else:
                save(out, "%s-%d" % (kind, s), img, truth, "counts" if kind in ("lowcount", "lowrange") else "png16")
        return 0
    if len(sys.argv) >= 5 and sys.argv[1] == "score":
        score_main(sys.argv[2], sys.argv[3], sys.argv[4], sys.argv[5:])
        return 0
    sys.stderr.write(__doc__)
    return 2


if __name__ == "__main__":
    sys.exit(main())
