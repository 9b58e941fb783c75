"""Compare two folders of cleave outputs: PNG pictures pixel by pixel
(Debian's python3-pil and numpy), the record STEM.json without its
seconds and input path, every other file byte by byte. Prints one line a
file and ALL SAME or DIFFERENCES last.

    /usr/bin/python3 testdata/camera/compare.py DIR1 DIR2
"""
import json
import os
import sys

import numpy as np
from PIL import Image

a, b = sys.argv[1], sys.argv[2]
ok = True
for n in sorted(set(os.listdir(a)) | set(os.listdir(b))):
    pa, pb = os.path.join(a, n), os.path.join(b, n)
    if not (os.path.exists(pa) and os.path.exists(pb)):
        print(n, "only in one folder")
        ok = False
        continue
    if n.endswith(".png"):
        x, y = np.asarray(Image.open(pa)), np.asarray(Image.open(pb))
        same = x.shape == y.shape and x.dtype == y.dtype and bool((x == y).all())
        print(n, "pixels", "same" if same else "DIFFER", "bytes", os.path.getsize(pa), os.path.getsize(pb))
    elif n.endswith(".json"):
        ja, jb = json.load(open(pa)), json.load(open(pb))
        for j in (ja, jb):
            j.pop("seconds", None)
            j["input"]["path"] = ""
        same = ja == jb
        print(n, "record without seconds", "same" if same else "DIFFER")
    else:
        same = open(pa, "rb").read() == open(pb, "rb").read()
        print(n, "bytes", "same" if same else "DIFFER")
    ok = ok and same
print("ALL SAME" if ok else "DIFFERENCES")
