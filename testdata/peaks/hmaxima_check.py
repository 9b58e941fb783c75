"""Reference for segment's basins test: reads a JSON list of {"w", "h",
"v", "hgt"} (integer-valued images in raster order) on stdin and prints
for each the number of regional maxima of dynamic at least hgt, 4-connected, as Soille (2003,
section 6.3.4) defines the h-maxima: the regional maxima of the
h-maxima transform HMAX_h(f), the reconstruction by dilation of f - h
under f (scikit-image's morphology.reconstruction and local_maxima,
Debian's python3-skimage), counted as 4-connected components."""
import json
import sys

import numpy as np
from scipy import ndimage as ndi
from skimage.morphology import local_maxima, reconstruction

cross = ndi.generate_binary_structure(2, 1)
out = []
for d in json.load(sys.stdin):
    img = np.array(d["v"], dtype=np.float64).reshape(d["h"], d["w"])
    hmax = reconstruction(img - d["hgt"], img, method="dilation", footprint=cross)
    m = local_maxima(hmax, connectivity=1, allow_borders=True)
    _, n = ndi.label(m, structure=cross)
    out.append(int(n))
print(json.dumps({"maxima": out}))
