#!/usr/bin/python3
"""Classical baseline for examples/evaluate: threshold + distance-transform
watershed, built from scikit-image and scipy (Debian python3-skimage,
python3-scipy).

Segment every image of a folder with the parameters chosen for a kind:

    /usr/bin/python3 examples/evaluate/watershed.py --kind clusters --in DIR --out OUT

writes OUT/NAME.labels.png (16-bit instance labels, 0 background) for each
DIR/NAME.png, .jpg or .tif (truth files NAME.truth.png are skipped).

Redo the parameter search (run from the module root; it generates the
choice scenes with `go run ./examples/scenes/gen`):

    /usr/bin/python3 examples/evaluate/watershed.py --choose [--kinds clusters,haze] [--seeds 9000-9004]

The search tries every combination of a grid per kind on the choice seeds
and keeps the one with the highest mean object F1 (IoU > 0.5, the
criterion of segment/score.MatchObjects); results go to
examples/evaluate/watershed_params.json with the seeds and scores.

Pipeline for object-on-background kinds (objects darker than the
background are inverted first):
  1. optional background subtraction: image minus its Gaussian blur of
     sigma `flatten` px (0 = none);
  2. Gaussian smoothing of sigma `sigma`;
  3. threshold: Otsu's global threshold, or threshold_local (Gaussian
     weighted, block size `block`) with an offset of `offset` robust noise
     standard deviations (1.4826 MAD of the smoothed image) above the local
     mean;
  4. hole filling, removal of objects below `min_size` px;
  5. Euclidean distance transform of the mask; markers from h-maxima of
     the distance (height `h` px), from peak_local_max with `min_distance`,
     or none (each connected component one object);
  6. watershed of -distance from the markers restricted to the mask.
For `grains` (packed regions, dark boundaries, no background) the mask is
either the locally bright part (threshold_local) or everything but the
dark lines found by a black top-hat (`mask: tophat`, disc `radius`,
threshold `factor` times Otsu's on the top-hat); the boundaries drop out,
and the watershed floods either -distance or the inverted smoothed
intensity (`elevation`), so that dark boundary lines become ridges.
"""

import argparse
import itertools
import json
import os
import subprocess
import sys
import tempfile
import time

import numpy as np
from scipy import ndimage as ndi

try:
    from skimage import io as skio
    from skimage.feature import peak_local_max
    from skimage.filters import gaussian, threshold_local, threshold_otsu
    from skimage.morphology import black_tophat, disk, h_maxima, remove_small_objects
    from skimage.segmentation import watershed
except ImportError as e:  # evaluate.go checks for this message
    sys.stderr.write("watershed.py: python3-skimage missing (%s); install it with apt-get install -y python3-skimage\n" % e)
    sys.exit(3)

HERE = os.path.dirname(os.path.abspath(__file__))
PARAMS = os.path.join(HERE, "watershed_params.json")

# Objects darker than their background (see scenes.DarkObjects).
DARK = {"plates", "stained", "surface"}


def load(path):
    img = skio.imread(path)
    if img.ndim == 3:
        img = img[..., :3].mean(axis=2)
    img = img.astype(np.float64)
    lo, hi = np.percentile(img, [0.1, 99.9])
    return (img - lo) / max(hi - lo, 1e-9)


def robust_sd(x):
    med = np.median(x)
    return 1.4826 * np.median(np.abs(x - med))


def prepare(img, kind, flatten, sigma):
    """Inverted if dark objects, background subtracted, smoothed."""
    if kind in DARK:
        img = 1.0 - img
    if flatten > 0:
        img = img - gaussian(img, flatten)
    return gaussian(img, sigma) if sigma > 0 else img


def threshold(sm, method, block, offset):
    if method == "otsu":
        return sm > threshold_otsu(sm)
    sd = robust_sd(sm)
    return sm > threshold_local(sm, block, method="gaussian", offset=-offset * sd)


def clean(mask, min_size, fill=True):
    if fill:
        mask = ndi.binary_fill_holes(mask)
    return remove_small_objects(mask, min_size)


def markers_of(dist, mask, markers, h, min_distance):
    if markers == "none":
        return ndi.label(mask)[0]
    if markers == "hmax":
        return ndi.label(h_maxima(dist, h))[0]
    comp = ndi.label(mask)[0]
    pk = peak_local_max(dist, min_distance=min_distance, labels=comp, exclude_border=False)
    m = np.zeros(mask.shape, np.int32)
    m[tuple(pk.T)] = np.arange(1, len(pk) + 1)
    # Components without a peak keep one marker so they are not lost.
    missing = np.setdiff1d(np.unique(comp[mask]), np.unique(comp[m > 0]))
    if len(missing):
        nxt = len(pk) + 1
        for c in missing:
            ys, xs = np.nonzero(comp == c)
            i = np.argmax(dist[ys, xs])
            m[ys[i], xs[i]] = nxt
            nxt += 1
    return m


def split(mask, dist, markers, h, min_distance, elevation=None):
    mk = markers_of(dist, mask, markers, h, min_distance)
    elev = -dist if elevation is None else elevation
    return watershed(elev, mk, mask=mask).astype(np.int32)


def masked(img, kind, p):
    """The smoothed image, the object mask and its distance transform."""
    sm = prepare(img, kind, p.get("flatten", 0), p["sigma"])
    if kind == "grains" and p.get("mask") == "tophat":
        # Dark boundary lines: black top-hat (closing minus image) with a
        # disc of radius `radius`, above `factor` times its Otsu threshold.
        th = black_tophat(sm, disk(p["radius"]))
        mask = clean(th <= p["factor"] * threshold_otsu(th), p["min_size"], fill=False)
    elif kind == "grains":
        mask = clean(threshold(sm, "local", p["block"], p["offset"]), p["min_size"], fill=False)
    else:
        mask = clean(threshold(sm, p["threshold"], p.get("block", 101), p.get("offset", 0)), p["min_size"])
    return sm, mask, ndi.distance_transform_edt(mask)


def segment(img, kind, p):
    sm, mask, dist = masked(img, kind, p)
    elev = -sm if p.get("elevation") == "intensity" else None
    return split(mask, dist, p["markers"], p.get("h", 1), p.get("min_distance", 5), elev)


def pair_ious(pred, truth):
    """IoU of every overlapping (prediction, truth) object pair, and the
    object counts of both maps."""
    pred = pred.ravel().astype(np.int64)
    truth = truth.ravel().astype(np.int64)
    npred = len(np.unique(pred[pred > 0]))
    ntrue = len(np.unique(truth[truth > 0]))
    both = (pred > 0) & (truth > 0)
    key = pred[both] * (truth.max() + 1) + truth[both]
    k, inter = np.unique(key, return_counts=True)
    pa = np.bincount(pred)
    ta = np.bincount(truth)
    pl, tl = k // (truth.max() + 1), k % (truth.max() + 1)
    return inter / (pa[pl] + ta[tl] - inter), npred, ntrue


def object_f1(pred, truth):
    """F1 of objects matched at IoU > 0.5 (unique by construction)."""
    iou, npred, ntrue = pair_ious(pred, truth)
    if npred == 0 and ntrue == 0:
        return 1.0
    tp = int((iou > 0.5).sum())
    return 2 * tp / (npred + ntrue) if npred + ntrue else 0.0


# ---- parameter search -------------------------------------------------------

def grid(kind):
    """The combinations tried for a kind, as dicts."""
    if kind == "grains":
        marks = [dict(markers="hmax", h=h) for h in (1, 2)] + [dict(markers="peak", min_distance=d) for d in (5, 9)]
        out = []
        for sigma, block, offset, elevation in itertools.product((1, 2), (15, 31, 61), (0, 1), ("distance", "intensity")):
            for m in marks:
                out.append(dict(sigma=sigma, block=block, offset=offset, min_size=20, elevation=elevation, **m))
        for sigma, radius, factor in itertools.product((0.5, 1), (2, 3, 4), (0.5, 0.75, 1)):
            for m in [dict(markers="none"), dict(markers="hmax", h=2), dict(markers="hmax", h=3)]:
                out.append(dict(mask="tophat", sigma=sigma, radius=radius, factor=factor, min_size=20, elevation="distance", **m))
        return out
    marks = [dict(markers="none")] + [dict(markers="hmax", h=h) for h in (1, 2, 3)]
    marks += [dict(markers="peak", min_distance=d) for d in ((2, 3, 5) if kind == "specks" else (5, 9))]
    ths = [dict(threshold="otsu")] + [dict(threshold="local", block=b, offset=o) for b, o in ((51, 1), (151, 1), (151, 3))]
    # Pits on a surface can be a few pixels across: allow smaller objects.
    # Specks (othershapes.py) are a few pixels across too.
    sizes = (5, 20) if kind in ("surface", "specks") else (20,)
    out = []
    for flatten, sigma, th, min_size in itertools.product((0, 40), (1, 2), ths, sizes):
        for m in marks:
            out.append(dict(flatten=flatten, sigma=sigma, min_size=min_size, **th, **m))
    return out


def mask_key(kind, p):
    keys = ["mask", "flatten", "sigma", "threshold", "block", "offset", "radius", "factor", "min_size"]  # elevation reuses sm
    return tuple((k, p.get(k)) for k in keys)


def search(kind, data):
    """Every combination of the kind's grid and its mean object F1 over
    data, a list of (image, truth) pairs."""
    combos = grid(kind)
    scores = np.zeros(len(combos))
    for img, truth in data:
        cache = {}
        for i, p in enumerate(combos):
            key = mask_key(kind, p)
            if key not in cache:
                cache[key] = masked(img, kind, p)
            sm, mask, dist = cache[key]
            elev = -sm if p.get("elevation") == "intensity" else None
            lab = split(mask, dist, p["markers"], p.get("h", 1), p.get("min_distance", 5), elev)
            scores[i] += object_f1(lab, truth) / len(data)
    return combos, scores


def choose(kinds, seeds, size, path):
    root = os.path.dirname(os.path.dirname(HERE))
    params = {}
    if os.path.exists(path):
        with open(path) as f:
            params = json.load(f)
    params.setdefault("kinds", {})
    for kind in kinds:
        t0 = time.time()
        with tempfile.TemporaryDirectory() as d:
            subprocess.run(["go", "run", "./examples/scenes/gen", "-out", d, "-kind", kind,
                            "-n", str(len(seeds)), "-seed", str(seeds[0]), "-size", str(size)],
                           cwd=root, check=True, stdout=subprocess.DEVNULL)
            names = sorted(f[:-len(".truth.png")] for f in os.listdir(d) if f.endswith(".truth.png"))
            data = [(load(os.path.join(d, n + ".png")), skio.imread(os.path.join(d, n + ".truth.png"))) for n in names]
        combos, scores = search(kind, data)
        best = int(np.argmax(scores))
        params["kinds"][kind] = {"params": combos[best], "f1": round(float(scores[best]), 4),
                                 "combinations": len(combos)}
        print("%s: F1 %.3f with %s (%d combinations, %.0f s)" % (kind, scores[best], combos[best], len(combos), time.time() - t0), flush=True)
    params["choice_seeds"] = seeds
    params["size"] = size
    params["criterion"] = "mean object F1 (IoU > 0.5) over the choice seeds, scenes at default options"
    tmp = path + ".tmp"
    with open(tmp, "w") as f:
        json.dump(params, f, indent=1, sort_keys=True)
        f.write("\n")
    os.replace(tmp, path)


def run_folder(kind, src, dst, path):
    with open(path) as f:
        all_params = json.load(f)
    if kind not in all_params.get("kinds", {}):
        sys.stderr.write("watershed.py: no parameters for kind %r in %s; run --choose --kinds %s\n" % (kind, path, kind))
        return 2
    p = all_params["kinds"][kind]["params"]
    os.makedirs(dst, exist_ok=True)
    n = 0
    for f in sorted(os.listdir(src)):
        stem, ext = os.path.splitext(f)
        if ext.lower() not in (".png", ".jpg", ".jpeg", ".tif", ".tiff") or stem.endswith(".truth") or stem.endswith(".labels"):
            continue
        lab = segment(load(os.path.join(src, f)), kind, p)
        if lab.max() > 65535:
            sys.stderr.write("watershed.py: %s: %d objects do not fit 16 bits\n" % (f, lab.max()))
            return 1
        out = os.path.join(dst, stem + ".labels.png")
        tmp = os.path.join(dst, "." + stem + ".tmp.png")
        skio.imsave(tmp, lab.astype(np.uint16), check_contrast=False)
        os.replace(tmp, out)
        n += 1
    print("watershed.py: %d images segmented (%s)" % (n, kind))
    return 0


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--kind")
    ap.add_argument("--in", dest="src")
    ap.add_argument("--out")
    ap.add_argument("--choose", action="store_true")
    ap.add_argument("--kinds", default="nuclei,plates,clusters,haze,stained,surface,grains")
    ap.add_argument("--seeds", default="9000-9004")
    ap.add_argument("--size", type=int, default=512)
    ap.add_argument("--params", default=PARAMS, help="parameter file (default watershed_params.json beside this script)")
    a = ap.parse_args()
    if a.choose:
        lo, hi = (int(x) for x in a.seeds.split("-"))
        choose(a.kinds.split(","), list(range(lo, hi + 1)), a.size, a.params)
        return 0
    if not (a.kind and a.src and a.out):
        ap.error("--kind, --in and --out are required (or --choose)")
    return run_folder(a.kind, a.src, a.out, a.params)


if __name__ == "__main__":
    sys.exit(main())
