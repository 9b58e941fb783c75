#!/usr/bin/python3
"""Reference files for the imageio tests, written by independent encoders.

Provenance: every image here is written by a reference encoder from Debian
bookworm packages (python3-pil = Pillow, python3-tifffile, imagemagick), and
expected.json holds the pixels as read back by a reference decoder (Pillow,
tifffile or ImageMagick's `convert ... rgba:-`), so the Go tests compare
against readings made outside the project. lab.json holds CIE L*a*b* values
from scikit-image's skimage.color.rgb2lab, percentile.json values from
numpy.percentile (default linear method), blur.json a Gaussian blur from
scipy.ndimage.gaussian_filter (mode="reflect"). Install and run from this
folder (Debian's own python3, not another interpreter on the PATH):

    apt-get install -y python3-tifffile python3-numpy python3-pil python3-skimage imagemagick
    /usr/bin/python3 make.py

The outputs are deterministic: running it again gives the same bytes.

The tool versions used are recorded in versions.json.
"""
import io
import json
import subprocess

import numpy as np
import PIL
import scipy
import scipy.ndimage
import skimage
import skimage.color
import tifffile
from PIL import Image, ImageOps

expected = {}


def record(name, arr, **extra):
    arr = np.asarray(arr)
    if arr.ndim == 2:
        arr = arr[:, :, None]
    h, w, c = arr.shape
    planes = [arr[:, :, k].astype(np.int64).ravel().tolist() for k in range(c)]
    expected[name] = dict(width=w, height=h, channels=c, planes=planes, **extra)


def magick_rgba16(path):
    """Pixels as ImageMagick reads them: 16-bit RGBA, big-endian."""
    raw = subprocess.run(["convert", path, "-depth", "16", "-endian", "MSB", "rgba:-"], check=True, capture_output=True).stdout
    return np.frombuffer(raw, dtype=">u2")


# 7x5 16-bit gray; values exercise the high byte (0, 255, 256, 0xff00, 65535, odd patterns).
H, W = 5, 7
g16 = ((np.arange(H * W).reshape(H, W) * 1871 + 37 * (np.arange(W)[None, :] ^ np.arange(H)[:, None])) % 65536).astype(np.uint16)
g16[0, 0], g16[0, 1], g16[0, 2], g16[0, 3], g16[4, 6] = 0, 255, 256, 0xFF00, 65535

# 16-bit gray PNG (Pillow, mode I;16).
Image.fromarray(g16, mode="I;16").save("gray16.png")
back = np.array(Image.open("gray16.png")).astype(np.uint16)
assert (back == g16).all()
record("gray16.png", back, bitdepth=16)

# 16-bit gray TIFF (tifffile).
tifffile.imwrite("gray16.tif", g16, photometric="minisblack")
back = tifffile.imread("gray16.tif")
assert (back == g16).all()
record("gray16.tif", back, bitdepth=16)

# 16-bit RGB TIFF (tifffile).
rgb16 = np.stack([g16, (65535 - g16), ((g16.astype(np.uint32) * 7 + 12345) % 65536).astype(np.uint16)], axis=-1)
tifffile.imwrite("rgb16.tif", rgb16, photometric="rgb")
back = tifffile.imread("rgb16.tif")
assert (back == rgb16).all()
record("rgb16.tif", back, bitdepth=16)

# 16-bit RGB PNG and 16-bit RGBA PNG (ImageMagick from tifffile sources).
subprocess.run(["convert", "rgb16.tif", "-define", "png:bit-depth=16", "-define", "png:exclude-chunk=date,time", "PNG48:rgb16.png"], check=True)
m = magick_rgba16("rgb16.png").reshape(H, W, 4)
assert (m[:, :, :3] == rgb16).all() and (m[:, :, 3] == 65535).all()
record("rgb16.png", m[:, :, :3], bitdepth=16)

a16 = ((np.arange(H * W).reshape(H, W) * 4099) % 65536).astype(np.uint16)
a16[0, 0] = 65535
a16[1, 1] = 0
rgba16 = np.concatenate([rgb16, a16[:, :, None]], axis=-1)
tifffile.imwrite("rgba16_src.tif", rgba16, photometric="rgb", extrasamples=[2])  # unassociated alpha
subprocess.run(["convert", "rgba16_src.tif", "-define", "png:bit-depth=16", "-define", "png:exclude-chunk=date,time", "PNG64:rgba16.png"], check=True)
m = magick_rgba16("rgba16.png").reshape(H, W, 4)
assert (m == rgba16).all(), "ImageMagick changed the 16-bit RGBA samples"
record("rgba16.png", m[:, :, :3], bitdepth=16, alpha=True)
subprocess.run(["rm", "rgba16_src.tif"], check=True)

# 8-bit files (Pillow).
rng = np.random.default_rng(20261202)
rgb8 = rng.integers(0, 256, size=(H, W, 3), dtype=np.uint8)
rgb8[0, 0] = (0, 0, 0)
rgb8[0, 1] = (255, 255, 255)
Image.fromarray(rgb8, mode="RGB").save("rgb8.png")
back = np.array(Image.open("rgb8.png"))
record("rgb8.png", back, bitdepth=8)

g8 = (g16 >> 8).astype(np.uint8)
Image.fromarray(g8, mode="L").save("gray8.png")
record("gray8.png", np.array(Image.open("gray8.png")), bitdepth=8)

la = np.stack([g8, (255 - g8)], axis=-1)
Image.fromarray(la, mode="LA").save("graya8.png")
back = np.array(Image.open("graya8.png"))
assert back.shape == (H, W, 2)
record("graya8.png", back[:, :, 0], bitdepth=8, alpha=True)

rgba8 = np.concatenate([rgb8, rng.integers(0, 256, size=(H, W, 1), dtype=np.uint8)], axis=-1)
rgba8[0, 0, 3] = 0
rgba8[0, 1, 3] = 255
Image.fromarray(rgba8, mode="RGBA").save("rgba8.png")
back = np.array(Image.open("rgba8.png"))
record("rgba8.png", back[:, :, :3], bitdepth=8, alpha=True)

# Paletted PNG with a colour palette.
pal_colors = [(0, 0, 0), (255, 0, 0), (0, 128, 255), (17, 200, 33), (250, 250, 10)]
idx = (np.arange(H * W).reshape(H, W) * 3) % len(pal_colors)
p = Image.fromarray(idx.astype(np.uint8), mode="P")
p.putpalette([v for c in pal_colors for v in c])
p.save("paletted.png")
back = np.array(Image.open("paletted.png").convert("RGB"))
record("paletted.png", back, bitdepth=8)

# BMP (24-bit), GIF (paletted), WebP (lossless): all from rgb8 / the palette image.
Image.fromarray(rgb8, mode="RGB").save("rgb8.bmp")
record("rgb8.bmp", np.array(Image.open("rgb8.bmp")), bitdepth=8)
p.save("paletted.gif")
record("paletted.gif", np.array(Image.open("paletted.gif").convert("RGB")), bitdepth=8)
Image.fromarray(rgb8, mode="RGB").save("rgb8.webp", lossless=True)
record("rgb8.webp", np.array(Image.open("rgb8.webp").convert("RGB")), bitdepth=8)

# JPEG EXIF orientation 1..8. The upright image U has 3x2 blocks of 8x8 in
# distinct colours; the stored image for orientation k is the inverse
# transform of U, so applying tag k must give U back. Pillow's
# ImageOps.exif_transpose cross-checks each file.
blocks = np.array([[(230, 30, 30), (30, 200, 30), (30, 30, 220)],
                   [(240, 240, 40), (200, 40, 200), (40, 210, 210)]], dtype=np.uint8)
U = np.kron(blocks, np.ones((8, 8, 1), dtype=np.uint8)).astype(np.uint8)  # 16x24x3
Image.fromarray(U, mode="RGB").save("upright.png")
record("upright.png", U, bitdepth=8)
# Stored = inverse of the display transform for each tag (Exif 2.32, Orientation).
inverse = {
    1: lambda a: a,
    2: lambda a: a[:, ::-1],
    3: lambda a: a[::-1, ::-1],
    4: lambda a: a[::-1, :],
    5: lambda a: a.transpose(1, 0, 2),
    6: lambda a: np.rot90(a, 1),   # stored = display rotated 90 CCW; tag 6 rotates it 90 CW back
    7: lambda a: a[::-1, ::-1].transpose(1, 0, 2),
    8: lambda a: np.rot90(a, -1),
}
for k in range(1, 9):
    stored = np.ascontiguousarray(inverse[k](U))
    im = Image.fromarray(stored, mode="RGB")
    exif = Image.Exif()
    exif[0x0112] = k
    name = f"orient{k}.jpg"
    im.save(name, quality=95, subsampling=0, exif=exif.tobytes())
    got = Image.open(name)
    assert got.getexif().get(0x0112) == k
    up = np.array(ImageOps.exif_transpose(got)).astype(int)
    assert up.shape == U.shape, (k, up.shape)
    assert np.abs(up - U.astype(int)).max() <= 6, (k, np.abs(up - U.astype(int)).max())

# Label maps: 16-bit labels (Pillow I;16), 8-bit 0/255 mask (Pillow), 16-bit 0/65535 mask (tifffile).
lab16 = np.zeros((H, W), dtype=np.uint16)
lab16[1:3, 1:4] = 1
lab16[3, 5] = 300
lab16[4, 0] = 65535
lab16[0, 6] = 2
Image.fromarray(lab16, mode="I;16").save("labels16.png")
back = np.array(Image.open("labels16.png")).astype(np.uint16)
assert (back == lab16).all()
record("labels16.png", back, bitdepth=16)
mask = ((np.arange(H * W).reshape(H, W) % 3) == 0).astype(np.uint8) * 255
Image.fromarray(mask, mode="L").save("mask8.png")
record("mask8.png", np.array(Image.open("mask8.png")), bitdepth=8)
tifffile.imwrite("mask16.tif", mask.astype(np.uint16) * 257, photometric="minisblack")
record("mask16.tif", tifffile.imread("mask16.tif"), bitdepth=16)

# Not an image at all, named .tif.
with open("notanimage.tif", "w") as f:
    f.write("This is a plain text file with a .tif name.\n")

with open("expected.json", "w") as f:
    json.dump(expected, f, separators=(",", ":"))

# CIE L*a*b* reference (skimage.color.rgb2lab, D65, 2-degree observer).
colors = [(255, 255, 255), (0, 0, 0), (255, 0, 0), (0, 255, 0), (0, 0, 255), (128, 128, 128),
          (10, 10, 10), (200, 150, 50), (30, 60, 200), (1, 2, 3)]
rgb = np.array(colors, dtype=np.float64)[None, :, :] / 255.0
lab = skimage.color.rgb2lab(rgb)[0]
with open("lab.json", "w") as f:
    json.dump({"rgb8": colors, "lab": lab.tolist()}, f, indent=1)

# Percentiles (numpy.percentile, default "linear" = Hyndman-Fan definition 7).
ramp = np.arange(1000, dtype=np.float64)
noise = rng.random(777).astype(np.float32)
ints = rng.integers(0, 65536, size=1001)
golden = np.array([((i * 0.6180339887498949) % 1.0) * 1000 for i in range(50000)]).astype(np.float32)
pct = {"ramp1000": {"values": ramp.tolist(), "p01": float(np.percentile(ramp, 0.1)), "p999": float(np.percentile(ramp, 99.9))},
       "float777": {"values": noise.astype(float).tolist(), "p01": float(np.percentile(noise.astype(np.float64), 0.1)),
                    "p999": float(np.percentile(noise.astype(np.float64), 99.9))},
       "int1001": {"values": ints.astype(float).tolist(), "p01": float(np.percentile(ints, 0.1)), "p999": float(np.percentile(ints, 99.9))},
       # Not stored: 50000 float32 values v_i = float32(((i * 0.6180339887498949) mod 1) * 1000),
       # which the Go test regenerates bit for bit.
       "golden50000": {"values": [], "p01": float(np.percentile(golden.astype(np.float64), 0.1)),
                       "p999": float(np.percentile(golden.astype(np.float64), 99.9))},
       "two": {"values": [3.0, 10.0], "p01": float(np.percentile([3.0, 10.0], 0.1)), "p999": float(np.percentile([3.0, 10.0], 99.9))}}
with open("percentile.json", "w") as f:
    json.dump(pct, f, separators=(",", ":"))

# Gaussian blur reference (scipy.ndimage.gaussian_filter, mode reflect = half-sample symmetric).
bh, bw, sigma = 30, 40, 4.0
img = np.zeros((bh, bw))
img[:, 20:] = 1000.0
img[8, 8] = 5000.0
img += np.arange(bw)[None, :] * 3.0
ref = scipy.ndimage.gaussian_filter(img, sigma, mode="reflect", truncate=8.0)
with open("blur.json", "w") as f:
    json.dump({"width": bw, "height": bh, "sigma": sigma, "input": img.ravel().tolist(), "blurred": ref.ravel().tolist()}, f, separators=(",", ":"))

magick = subprocess.run(["convert", "-version"], capture_output=True, text=True).stdout.splitlines()[0]
with open("versions.json", "w") as f:
    json.dump({"Pillow": PIL.__version__, "tifffile": tifffile.__version__, "numpy": np.__version__,
               "scipy": scipy.__version__, "scikit-image": skimage.__version__, "ImageMagick": magick}, f, indent=1)
