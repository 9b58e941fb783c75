#!/usr/bin/python3
"""Binary masks and reference scores for `cleave score` on masks.

Run with Debian's python3-sklearn, python3-skimage and python3-pil
(apt-get install -y python3-sklearn python3-skimage python3-pil):

    /usr/bin/python3 testdata/score/make_mask_reference.py

It writes, beside this file in masks/:
  pred/NAME.png          the prediction (a label map, or itself a binary mask)
  truth/NAME_mask.png    the truth as a binary mask (0 and one other value)
  labelled/NAME.png      that mask labelled by scikit-image's
                         measure.label(mask, connectivity=2), the
                         8-connected components, as a 16-bit PNG
and masks/reference.json with, per case, the component counts of
measure.label (connectivity 2, and 1 for comparison) and scikit-learn's
adjusted_rand_score of the prediction (labelled the same way when it is a
binary mask) against the labelled truth, and against the unsplit mask
(one label), all of the pixels as read back with PIL.
"""
import json
import os

import numpy as np
import PIL
import skimage
import sklearn
from PIL import Image
from skimage.measure import label
from sklearn.metrics import adjusted_rand_score

here = os.path.join(os.path.dirname(os.path.abspath(__file__)), "masks")
for sub in ("pred", "truth", "labelled"):
    os.makedirs(os.path.join(here, sub), exist_ok=True)
rng = np.random.RandomState(20240612)


def save(path, arr, bits):
    if bits == 16:
        Image.fromarray(arr.astype(np.uint16), mode="I;16").save(path)
    else:
        Image.fromarray(arr.astype(np.uint8), mode="L").save(path)


def load(path):
    return np.asarray(Image.open(path)).astype(np.int64)


def binary(a):
    v = np.unique(a)
    return len(v) == 2 and v[0] == 0


h, w = 48, 64
gy, gx = np.mgrid[0:h, 0:w]
cases = []

# Discs, two squares touching only at a corner (one object with
# 8-connectivity, two with 4) and a one-pixel diagonal stroke (one object
# with 8-connectivity, one per pixel with 4); a 0/255 8-bit mask. The
# prediction is a 16-bit label map: discs shifted, the corner pair split,
# the stroke missed.
truth = np.zeros((h, w), bool)
pred = np.zeros((h, w), np.int64)
for k, (cy, cx, r) in enumerate([(10, 10, 6), (12, 30, 5), (34, 12, 7)]):
    truth[(gy - cy) ** 2 + (gx - cx) ** 2 <= r * r] = True
    pred[(gy - cy) ** 2 + (gx - cx - 1) ** 2 <= r * r] = 1000 + k
truth[30:36, 30:36] = True
truth[36:42, 36:42] = True
pred[30:36, 30:36] = 7
pred[36:42, 36:42] = 8
for i in range(12):
    truth[4 + i, 44 + i] = True
cases.append(("shapes", pred, 16, truth.astype(np.int64) * 255, 8))

# Both sides binary masks: the truth a noisy field of blobs (0/65535,
# 16-bit), the prediction the same blobs eroded by chance (0/1, 8-bit).
field = np.zeros((h, w), bool)
for _ in range(9):
    cy, cx, r = rng.randint(4, h - 4), rng.randint(4, w - 4), rng.randint(2, 6)
    field[(gy - cy) ** 2 + (gx - cx) ** 2 <= r * r] = True
pmask = field & (rng.rand(h, w) > 0.15)
cases.append(("blobs", pmask.astype(np.int64), 8, field.astype(np.int64) * 65535, 16))

# A mask stored with the value 7 (not 255), against a random 4-label map.
seven = ((gy // 6 + gx // 6) % 3 == 0).astype(np.int64) * 7
cases.append(("seven", rng.randint(0, 4, (h, w)), 8, seven, 8))

ref = {"generator": "make_mask_reference.py", "sklearn": sklearn.__version__, "skimage": skimage.__version__,
       "numpy": np.__version__, "pil": PIL.__version__, "cases": []}
for name, p, pbits, t, tbits in cases:
    pp = os.path.join(here, "pred", name + ".png")
    tp = os.path.join(here, "truth", name + "_mask.png")
    lp = os.path.join(here, "labelled", name + ".png")
    save(pp, p, pbits)
    save(tp, t, tbits)
    a, b = load(pp), load(tp)
    assert (a == p).all() and (b == t).all() and binary(b), name
    tl = label(b != 0, connectivity=2)
    save(lp, tl, 16)
    assert (load(lp) == tl).all()
    pl = label(a != 0, connectivity=2) if binary(a) else a
    ref["cases"].append({
        "name": name,
        "pred_binary": bool(binary(a)),
        "pred_components_8": int(pl.max()) if binary(a) else None,
        "truth_components_8": int(tl.max()),
        "truth_components_4": int(label(b != 0, connectivity=1).max()),
        "ari": float(adjusted_rand_score(tl.ravel(), pl.ravel())),
        "ari_unsplit": float(adjusted_rand_score(b.ravel(), a.ravel())),
    })
with open(os.path.join(here, "reference.json"), "w") as f:
    json.dump(ref, f, indent=1)
    f.write("\n")
print("wrote %d cases to %s" % (len(cases), here))
