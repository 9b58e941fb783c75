#!/usr/bin/python3
"""Label images and scikit-learn reference scores for `cleave score`.

Run with Debian's python3-sklearn and python3-pil (apt-get install -y
python3-sklearn python3-pil):

    /usr/bin/python3 testdata/score/make_cli_reference.py

It writes small label images into cli/pred/NAME.png and cli/truth/NAME_mask.png
beside this file (fixed numpy seed), reads them back with PIL and writes
cli/reference.json with scikit-learn's adjusted_rand_score and rand_score,
and the variation of information H(a) + H(b) - 2 I(a;b) from
sklearn.metrics.cluster.entropy and mutual_info_score (natural log), of
the pixels as read back.
"""
import json
import os

import numpy as np
import PIL
import sklearn
from PIL import Image
from sklearn.metrics import adjusted_rand_score, mutual_info_score, rand_score
from sklearn.metrics.cluster import entropy

here = os.path.join(os.path.dirname(os.path.abspath(__file__)), "cli")
os.makedirs(os.path.join(here, "pred"), exist_ok=True)
os.makedirs(os.path.join(here, "truth"), exist_ok=True)
rng = np.random.RandomState(31337)


def save(path, arr, bits):
    if bits == 16:
        Image.fromarray(arr.astype(np.uint16), mode="I;16").save(path)
    else:
        Image.fromarray(arr.astype(np.uint8), mode="L").save(path)


def load(path):
    return np.asarray(Image.open(path)).astype(np.int64)


# Discs on background: truth with labels above 255 (16-bit), prediction
# shifted, shrunken, two discs merged and one missed.
h, w = 40, 48
gy, gx = np.mgrid[0:h, 0:w]
truth = np.zeros((h, w), np.int64)
pred = np.zeros((h, w), np.int64)
for k, (cy, cx, r) in enumerate([(10, 10, 6), (10, 23, 6), (28, 14, 8), (27, 36, 7)]):
    d2 = (gy - cy) ** 2 + (gx - cx) ** 2
    truth[d2 <= r * r] = 300 + 17 * k
    if k < 3:
        pred[(gy - cy - 1) ** 2 + (gx - cx) ** 2 <= (r - 1) ** 2] = 1 if k < 2 else 2
cases = [("discs", pred, 8, truth, 16)]

# Random labels: 5 classes against 7, 8-bit.
cases.append(("random", rng.randint(0, 5, (24, 32)), 8, rng.randint(0, 7, (24, 32)), 8))

# A noisy copy of a block partition; truth stored as a 0/255 binary mask
# (cleave reads it as 0/1) and the prediction as a 16-bit label map.
yy, xx = np.mgrid[0:32, 0:32]
mask = ((yy // 8 + xx // 8) % 2) * 255
noisy = (mask // 255) * 4 + 1
flip = rng.rand(32, 32) < 0.1
noisy[flip] = rng.randint(0, 6, flip.sum())
cases.append(("blocks", noisy, 16, mask, 8))

ref = {"generator": "make_cli_reference.py", "sklearn": sklearn.__version__, "numpy": np.__version__,
       "pil": PIL.__version__, "cases": []}
for name, p, pbits, t, tbits in cases:
    pp = os.path.join(here, "pred", name + ".png")
    tp = os.path.join(here, "truth", name + "_mask.png")
    save(pp, p, pbits)
    save(tp, t, tbits)
    a, b = load(pp).ravel(), load(tp).ravel()
    assert (a == p.ravel()).all() and (b == t.ravel()).all(), name
    ref["cases"].append({
        "name": name,
        "ari": float(adjusted_rand_score(b, a)),
        "rand": float(rand_score(b, a)),
        "vi": float(entropy(a) + entropy(b) - 2 * mutual_info_score(b, a)),
    })
with open(os.path.join(here, "reference.json"), "w") as f:
    json.dump(ref, f, indent=1)
    f.write("\n")
print("wrote %d cases to %s" % (len(cases), here))
