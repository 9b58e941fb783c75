"""Reference for affinity.ObjectScale: scikit-image's blob_log on a PNG.

Usage: python3 blob_log.py IMAGE.png...
Prints one JSON line per image, {"count": n, "median_radius": r}, where r is the median over the
detected blobs of sigma*sqrt(2) (the radius of a disc whose normalized
Laplacian peaks at sigma, Lindeberg 1998). Needs Debian's python3-skimage.
The sigma ladder is geometric, 4 steps per octave from 1 to min(h, w)/8,
like the Go code.
"""
import json
import math
import sys

import numpy as np
from skimage import io
from skimage.feature import blob_log

for path in sys.argv[1:]:
    img = io.imread(path).astype(float) / 255.0
    lo, hi = 1.0, min(img.shape) / 8.0
    num = int(math.floor(4 * math.log2(hi / lo))) + 1
    blobs = blob_log(img, min_sigma=lo, max_sigma=hi, num_sigma=num,
                     log_scale=True, threshold=0.1)
    radii = blobs[:, 2] * math.sqrt(2) if len(blobs) else np.array([])
    print(json.dumps({"count": int(len(radii)),
                      "median_radius": float(np.median(radii)) if len(radii) else 0.0}))
