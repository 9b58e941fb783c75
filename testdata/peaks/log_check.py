"""Reference for segment's logFilter test: reads JSON {"w", "h", "v",
"sigma"} on stdin and prints -sigma^2 times scipy.ndimage.gaussian_laplace
of the image (zero beyond the edge, kernels truncated at 3 sigma), in
raster order (Debian's python3-scipy)."""
import json
import sys

import numpy as np
from scipy import ndimage as ndi

d = json.load(sys.stdin)
img = np.array(d["v"], dtype=np.float64).reshape(d["h"], d["w"])
s = d["sigma"]
out = -s * s * ndi.gaussian_laplace(img, s, mode="constant", cval=0.0, truncate=3.0)
print(json.dumps({"log": out.ravel().tolist()}))
