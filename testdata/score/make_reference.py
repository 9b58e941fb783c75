#!/usr/bin/python3
"""Reference values for cleave's segment/score tests.

Run with Debian's python3-sklearn (apt-get install -y python3-sklearn):

    /usr/bin/python3 testdata/score/make_reference.py

It writes reference.json beside this file: pairs of label vectors (random
and structured, fixed numpy seed) with scikit-learn's adjusted_rand_score,
rand_score, mutual_info_score and the entropies of each labelling
(sklearn.metrics.cluster.entropy), all in natural log.
"""
import json
import os

import numpy as np
import sklearn
from sklearn.metrics import adjusted_rand_score, mutual_info_score, rand_score
from sklearn.metrics.cluster import entropy

rng = np.random.RandomState(20240611)
cases = []


def add(name, a, b):
    a = np.asarray(a, dtype=np.int64)
    b = np.asarray(b, dtype=np.int64)
    assert a.shape == b.shape
    case = {
        "name": name,
        "a": [int(x) for x in a],
        "b": [int(x) for x in b],
        "ari": float(adjusted_rand_score(a, b)),
        "rand": float(rand_score(a, b)),
    }
    if len(a) > 0:  # sklearn's entropy of an empty labelling is 1.0 by convention; skip it
        case["mi"] = float(mutual_info_score(a, b))
        case["ha"] = float(entropy(a))
        case["hb"] = float(entropy(b))
    cases.append(case)


# Random labellings of several sizes and cluster counts.
for n, ka, kb in [(10, 2, 3), (50, 5, 5), (200, 3, 12), (1000, 20, 7), (5000, 40, 40)]:
    add("random_n%d_k%d_k%d" % (n, ka, kb), rng.randint(0, ka, n), rng.randint(0, kb, n))

# A noisy copy: the truth with 10% of labels replaced.
t = rng.randint(0, 8, 600)
p = t.copy()
flip = rng.rand(600) < 0.1
p[flip] = rng.randint(0, 8, flip.sum())
add("noisy_copy", p, t)

# Same partition under renaming, including negative and widely spread labels.
t = rng.randint(0, 6, 300)
ren = np.array([-7, 70000, 3, -2147483648, 2147483647, 0])
add("renamed", ren[t], t)

# Refinement: b splits every cluster of a in two.
a = np.repeat(np.arange(10), 30)
b = a * 2 + (np.arange(300) % 2)
add("refinement", a, b)

# Image-like blocks: a 32x32 grid of 8x8 tiles against the same grid shifted by 3 px.
yy, xx = np.mgrid[0:32, 0:32]
add("blocks_shifted", ((yy // 8) * 4 + xx // 8).ravel(), (((yy + 3) // 8) * 5 + (xx + 3) // 8).ravel())

# Objects on background: three discs against shrunken discs, the first two merged into one label.
gy, gx = np.mgrid[0:40, 0:40]
truth = np.zeros((40, 40), dtype=np.int64)
pred = np.zeros((40, 40), dtype=np.int64)
for k, (cy, cx, r) in enumerate([(10, 10, 6), (10, 24, 6), (28, 18, 8)]):
    d2 = (gy - cy) ** 2 + (gx - cx) ** 2
    truth[d2 <= r * r] = k + 1
    pred[d2 <= (r - 1) * (r - 1)] = 1 if k < 2 else 5
add("objects_merged", pred.ravel(), truth.ravel())

# Degenerate cases (sklearn defines them; see adjusted_rand_score).
add("one_cluster_both", [4] * 20, [9] * 20)
add("one_cluster_vs_singletons", [0] * 20, list(range(20)))
add("singletons_both", list(range(15)), list(range(100, 115)))
add("sklearn_doc_anticorrelated", [0, 0, 1, 1], [0, 1, 0, 1])
add("single_sample", [3], [5])
add("empty", [], [])

out = os.path.join(os.path.dirname(os.path.abspath(__file__)), "reference.json")
with open(out, "w") as f:
    json.dump({"generator": "make_reference.py", "sklearn": sklearn.__version__,
               "numpy": np.__version__, "cases": cases}, f, separators=(",", ":"))
    f.write("\n")
print("wrote %d cases to %s" % (len(cases), out))
