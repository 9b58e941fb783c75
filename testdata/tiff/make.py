#!/usr/bin/python3
"""TIFF variants for the imageio/tiffread and imageio tests, written by
outside encoders, with the pixel values an outside decoder reports.

Every file is one small scene (37 x 29 pixels: three bright discs on a
sloping background, sizes chosen so that 16 x 16 tiles and 8-row strips
end part-way) written as one variant: sample types, byte orders,
BigTIFF, tiles, strips, planar and contiguous samples, channels, pages,
OME-XML and hyperstack descriptions, resolution tags, compressions and
predictors. Provenance:

- python3-tifffile (Debian) writes the layouts, sample types and
  metadata, uncompressed or deflate;
- libtiff's tiffcp (Debian libtiff-tools) re-encodes a tifffile file to
  LZW, deflate, PackBits, zstd, JPEG and LZMA, with the horizontal and
  floating-point predictors (tiffcp -c codec:predictor);
- the reference values are what tifffile reads back from the file; where
  this tifffile lacks the codec (it has no LZW, zstd or floating-point
  predictor without the imagecodecs package, which Debian does not ship)
  they are tifffile's reading of the uncompressed file tiffcp was given,
  and tiffcp's lossless re-encoding is checked by decoding the result
  with Pillow (python3-pil, through libtiff) and comparing; JPEG files
  take Pillow's (libjpeg's) decoding, and the Go test allows the
  difference two conforming JPEG decoders may have.

manifest.json lists every file with its pages, samples per pixel and
reference planes (refs/*.bin: float64 little-endian, one plane after
another in page-major, sample-minor order, each row by row), or the
error expected for features cleave does not read, and the metadata
tifffile reports (OME pixel sizes, hyperstack fields, resolution tags).

Run from this folder with Debian's python3 (not another interpreter on
the PATH):

    apt-get install -y python3-tifffile python3-numpy python3-pil python3-sklearn libtiff-tools
    /usr/bin/python3 make.py

The output is deterministic.
"""
import hashlib
import json
import os
import subprocess

import numpy as np
import PIL
import PIL.Image
import tifffile

W, H = 37, 29
HERE = os.path.dirname(os.path.abspath(__file__))
os.chdir(HERE)
os.makedirs("refs", exist_ok=True)
for old in os.listdir("refs"):
    os.remove(os.path.join("refs", old))


def scene(shift=0.0):
    """Three discs on a slope, values in 0..1."""
    y, x = np.mgrid[0:H, 0:W].astype(np.float64)
    img = 0.1 + 0.002 * x + 0.001 * y
    for cx, cy, r in ((9 + shift, 8, 5), (25, 10 - shift, 6), (18, 21, 4.5)):
        img[(x - cx) ** 2 + (y - cy) ** 2 <= r * r] += 0.6
    return img


BASE = scene()


def as_dtype(a, dtype):
    d = np.dtype(dtype)
    if d.kind == "f":
        return (a * 1000 - 100).astype(d)  # negative values too
    if d.kind == "i":
        return np.round(a * np.iinfo(d).max * 0.9 - np.iinfo(d).max * 0.1).astype(d)
    return np.round(a * np.iinfo(d).max * 0.95).astype(d)


manifest = {"tifffile": tifffile.__version__, "numpy": np.__version__, "pillow": PIL.__version__,
            "libtiff": subprocess.run(["tiffcp", "-h"], capture_output=True, text=True).stdout.splitlines()[0],
            "files": {}}


def planes_of(path):
    """The pages of a file as tifffile reads them: a list of (samples, H, W) arrays."""
    out = []
    with tifffile.TiffFile(path) as tf:
        for page in tf.pages:
            a = page.asarray()
            if page.samplesperpixel == 1:
                a = a[np.newaxis]
            elif page.planarconfig == 1:  # contiguous: (H, W, S)
                a = np.moveaxis(a, -1, 0)
            out.append(a)
    return out


def store(name, planes, note, tolerance=0):
    flat = np.concatenate([p.astype("<f8").ravel() for p in planes])
    data = flat.tobytes()
    h = hashlib.sha256(data).hexdigest()[:16]
    ref = "refs/%s.bin" % h
    if not os.path.exists(ref):
        with open(ref, "wb") as f:
            f.write(data)
    entry = manifest["files"].setdefault(name, {})
    entry.update({"pages": len(planes), "samples": int(planes[0].shape[0]), "width": W, "height": H,
                  "ref": ref, "reference": note})
    if tolerance:
        entry["tolerance"] = tolerance


def meta(name, **kw):
    manifest["files"].setdefault(name, {}).update(kw)


def write(name, data, **kw):
    tifffile.imwrite(name, data, **kw)
    store(name, planes_of(name), "tifffile")


# --- sample types, little-endian, one strip per 8 rows ------------------
for dt in ["uint8", "int8", "uint16", "int16", "uint32", "int32", "uint64", "int64",
           "float16", "float32", "float64"]:
    a = as_dtype(BASE, dt)
    write("%s.tif" % dt, a, rowsperstrip=8)

# float samples that are not numbers: NaN and infinities, to be masked
nan = as_dtype(BASE, "float32")
nan[0, 0] = np.nan
nan[3, 4:7] = np.nan
nan[28, 36] = np.inf
nan[27, 36] = -np.inf
write("float32-nan.tif", nan)

# --- byte orders and BigTIFF -------------------------------------------
u16 = as_dtype(BASE, "uint16")
f32 = as_dtype(BASE, "float32")
write("uint16-be.tif", u16, byteorder=">", rowsperstrip=8)
write("float32-be.tif", f32, byteorder=">")
write("bigtiff-uint16.tif", u16, bigtiff=True, rowsperstrip=8)
write("bigtiff-float32-be.tif", f32, bigtiff=True, byteorder=">", tile=(16, 16))
write("bigtiff-zlib.tif", u16, bigtiff=True, compression="zlib", predictor=2)

# --- tiles ------------------------------------------------------------
write("tiled-uint16.tif", u16, tile=(16, 16))
write("tiled-float64-zlib.tif", as_dtype(BASE, "float64"), tile=(16, 16), compression="zlib")

# --- samples per pixel: RGB, 2 and 5 channels, contiguous and planar ---
rgb8 = np.stack([as_dtype(scene(k), "uint8") for k in (0, 1, 2)], axis=-1)
rgb16 = np.stack([as_dtype(scene(k), "uint16") for k in (0, 1, 2)], axis=-1)
write("rgb8.tif", rgb8, photometric="rgb")
write("rgb16-planar.tif", np.moveaxis(rgb16, -1, 0), photometric="rgb", planarconfig="separate", rowsperstrip=8)
write("rgb16-planar-tiled.tif", np.moveaxis(rgb16, -1, 0), photometric="rgb", planarconfig="separate", tile=(16, 16))
two = np.stack([as_dtype(scene(k), "uint16") for k in (0, 3)], axis=-1)
write("two-channel.tif", two, photometric="minisblack", planarconfig="contig")
five = np.stack([as_dtype(scene(k), "float32") for k in range(5)], axis=0)
write("five-channel-planar.tif", five, photometric="minisblack", planarconfig="separate")
rgba = np.concatenate([rgb8, np.full((H, W, 1), 255, np.uint8)], axis=-1)
write("rgba8.tif", rgba, photometric="rgb", extrasamples=["unassalpha"])

# --- pages: a plain z-stack, OME-XML, the hyperstack description ------
stack = np.stack([as_dtype(scene(z), "uint16") for z in range(4)])
write("stack.tif", stack, photometric="minisblack")
meta("stack.tif", planes=4)

ome = np.stack([np.stack([as_dtype(scene(z + 2 * c), "uint16") for z in range(3)]) for c in range(2)])  # C, Z, Y, X
tifffile.imwrite("ome-cz.ome.tif", ome, photometric="minisblack", metadata={
    "axes": "CZYX", "PhysicalSizeX": 0.325, "PhysicalSizeXUnit": "µm", "PhysicalSizeY": 0.325,
    "PhysicalSizeYUnit": "µm", "Channel": {"Name": ["DAPI", "GFP"]}})
# tifffile gives the document a fresh UUID; a fixed one of the same
# length keeps the output deterministic.
with open("ome-cz.ome.tif", "r+b") as f:
    data = f.read()
    i = data.index(b"urn:uuid:") + len(b"urn:uuid:")
    f.seek(i)
    f.write(b"00000000-0000-4000-8000-000000000000")
store("ome-cz.ome.tif", planes_of("ome-cz.ome.tif"), "tifffile")
with tifffile.TiffFile("ome-cz.ome.tif") as tf:
    px = tifffile.xml2dict(tf.ome_metadata)["OME"]["Image"]["Pixels"]
    meta("ome-cz.ome.tif", ome={"DimensionOrder": px["DimensionOrder"], "SizeC": px["SizeC"], "SizeZ": px["SizeZ"],
                               "SizeT": px["SizeT"], "PhysicalSizeX": px["PhysicalSizeX"],
                               "PhysicalSizeXUnit": px.get("PhysicalSizeXUnit", "µm"),
                               "Channels": [c["Name"] for c in px["Channel"]]})

hyper = np.stack([np.stack([np.stack([as_dtype(scene(t + z + 3 * c), "uint16") for c in range(2)])
                            for z in range(3)]) for t in range(2)])  # T, Z, C, Y, X
tifffile.imwrite("hyperstack.tif", hyper, imagej=True, resolution=(1 / 0.5, 1 / 0.5),
                 metadata={"axes": "TZCYX", "spacing": 2.0, "unit": "um"})
store("hyperstack.tif", planes_of("hyperstack.tif"), "tifffile")
with tifffile.TiffFile("hyperstack.tif") as tf:
    hs = tf.imagej_metadata
    meta("hyperstack.tif", hyperstack={k: hs[k] for k in ("images", "channels", "slices", "frames", "spacing", "unit")},
         resolution=[float(tf.pages[0].tags["XResolution"].value[0]) / tf.pages[0].tags["XResolution"].value[1]])

# The JSON description tifffile writes with the array's axes: a CZYX
# array of 2 channels and 3 planes, which tifffile stores as 2 pages of 3
# samples each (its series reports the axes and shape).
czyx = np.stack([np.stack([as_dtype(scene(z + 2 * c), "uint16") for z in range(3)]) for c in range(2)])
write("axes-czyx.tif", czyx, metadata={"axes": "CZYX"})
with tifffile.TiffFile("axes-czyx.tif") as tf:
    meta("axes-czyx.tif", series={"axes": tf.series[0].axes, "shape": list(tf.series[0].shape)})

tifffile.imwrite("resolution-cm.tif", u16, resolution=(10000 / 0.65, 10000 / 0.65), resolutionunit="CENTIMETER")
store("resolution-cm.tif", planes_of("resolution-cm.tif"), "tifffile")
with tifffile.TiffFile("resolution-cm.tif") as tf:
    t = tf.pages[0].tags
    meta("resolution-cm.tif", resolution=[t["XResolution"].value[0] / t["XResolution"].value[1],
                                          t["YResolution"].value[0] / t["YResolution"].value[1]],
         resolution_unit=int(t["ResolutionUnit"].value))

# old deflate code 32946 and PackBits-free deflate from tifffile
write("deflate-old.tif", u16, compression=32946)

# --- compressions and predictors re-encoded by libtiff's tiffcp -------
tifffile.imwrite("src-u16.tif", u16, rowsperstrip=8)
tifffile.imwrite("src-f32.tif", f32, rowsperstrip=8)
tifffile.imwrite("src-rgb8.tif", rgb8, photometric="rgb", rowsperstrip=8)
tifffile.imwrite("src-gray8.tif", as_dtype(BASE, "uint8"), rowsperstrip=8)
tifffile.imwrite("src-i16.tif", as_dtype(BASE, "int16"), rowsperstrip=8)
recoded = [
    ("lzw-uint16.tif", "src-u16.tif", ["-c", "lzw"]),
    ("lzw-pred2-uint16.tif", "src-u16.tif", ["-c", "lzw:2"]),
    ("lzw-pred2-int16-be.tif", "src-i16.tif", ["-c", "lzw:2", "-B"]),
    ("lzw-pred3-float32.tif", "src-f32.tif", ["-c", "lzw:3"]),
    ("zip-pred3-float32-be.tif", "src-f32.tif", ["-c", "zip:3", "-B"]),
    ("zip-pred2-rgb8.tif", "src-rgb8.tif", ["-c", "zip:2"]),
    ("packbits-uint16.tif", "src-u16.tif", ["-c", "packbits"]),
    ("packbits-rgb8-tiled.tif", "src-rgb8.tif", ["-c", "packbits", "-t", "-w", "16", "-l", "16"]),
    ("zstd-uint16.tif", "src-u16.tif", ["-c", "zstd"]),
    ("zstd-pred3-float32-tiled.tif", "src-f32.tif", ["-c", "zstd:3", "-t", "-w", "16", "-l", "16"]),
    ("lzw-rgb8-planar-bigtiff.tif", "src-rgb8.tif", ["-c", "lzw:2", "-p", "separate", "-8"]),
    ("jpeg-gray8.tif", "src-gray8.tif", ["-c", "jpeg:90", "-r", "16"]),
    ("jpeg-rgb8-ycbcr.tif", "src-rgb8.tif", ["-c", "jpeg:90", "-r", "16"]),
]
for name, src, args in recoded:
    subprocess.run(["tiffcp"] + args + [src, name], check=True)
    if name.startswith("jpeg"):
        im = np.asarray(PIL.Image.open(name).convert("RGB" if "rgb" in name else "L"))
        planes = [np.moveaxis(im, -1, 0)] if im.ndim == 3 else [im[np.newaxis]]
        store(name, planes, "Pillow (libtiff and libjpeg); a conforming JPEG decoder may differ by a little", tolerance=3)
        if "rgb" in name:
            # Chroma is stored at half resolution; libjpeg interpolates it
            # back ("fancy upsampling"), other decoders repeat it, so colour
            # edges differ by tens of levels. BT.601 luma (0.299 R + 0.587 G
            # + 0.114 B) recovers the full-resolution Y whatever the chroma,
            # up to rounding and the clipping of R, G, B to 0..255 where the
            # chroma differs: 5 levels (the largest seen was 4.2).
            meta(name, compare="luma601", tolerance=5)
        continue
    want = planes_of(src)
    try:
        got = planes_of(name)
        note = "tifffile"
    except Exception:
        got = None
        note = "tifffile reading of %s (tiffcp %s is lossless), checked against Pillow's decoding" % (src, " ".join(args))
    if got is not None:
        assert all(np.array_equal(a, b, equal_nan=True) for a, b in zip(got, want)), name
    else:
        im = PIL.Image.open(name)
        pil = np.asarray(im)
        ref = want[0]
        pil = np.moveaxis(pil, -1, 0) if pil.ndim == 3 else pil[np.newaxis]
        assert np.array_equal(pil.astype(np.float64), ref.astype(np.float64)), name
    store(name, want, note)
for _, src, _ in recoded:
    if os.path.exists(src):
        os.remove(src)

# --- label maps: 32-bit integers above 65535, as array software saves them
# truth: a 6 x 5 grid of blocks numbered from 70000 (uint32) and the same
# partition with one block split in two and labels renumbered (int32);
# sklearn's adjusted_rand_score of the two is the reference for cleave
# score.
gy, gx = np.mgrid[0:H, 0:W]
truth = (70000 + (gy * 5 // H) * 6 + (gx * 6 // W)).astype(np.uint32)
pred = (truth.astype(np.int64) * 7 % 1000 + 100000).astype(np.int32)
pred[(truth == truth[0, 0]) & (gx < 3)] = 123456
tifffile.imwrite("labels-uint32.tif", truth)
store("labels-uint32.tif", planes_of("labels-uint32.tif"), "tifffile")
tifffile.imwrite("labels-int32-zlib.tif", pred, compression="zlib", predictor=2)
store("labels-int32-zlib.tif", planes_of("labels-int32-zlib.tif"), "tifffile")
try:
    import sklearn
    import sklearn.metrics
    meta("labels-int32-zlib.tif", ari_against_labels_uint32=float(sklearn.metrics.adjusted_rand_score(truth.ravel(), pred.ravel())),
         sklearn=sklearn.__version__)
except ImportError:
    print("python3-sklearn missing: no ARI reference for the label TIFFs")

# --- refused with the feature named ------------------------------------
subprocess.run(["tifffile", "--version"], capture_output=True)
tifffile.imwrite("src-u16.tif", u16, rowsperstrip=8)
subprocess.run(["tiffcp", "-c", "lzma", "src-u16.tif", "lzma-uint16.tif"], check=True)
os.remove("src-u16.tif")
meta("lzma-uint16.tif", error="LZMA compression")
tifffile.imwrite("palette.tif", as_dtype(BASE, "uint8"), photometric="palette",
                 colormap=np.stack([np.arange(256) * 257] * 3).astype(np.uint16))
meta("palette.tif", fallback=True)
store("palette.tif", planes_of("palette.tif"), "tifffile (palette indices)")

with open("manifest.json", "w") as f:
    json.dump(manifest, f, indent=1, sort_keys=True, ensure_ascii=False)
    f.write("\n")
