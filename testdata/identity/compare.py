#!/usr/bin/python3
"""Compare two output trees of testdata/identity/run.sh byte for byte.

    testdata/identity/compare.py A B

Every file must exist in both trees and be byte-identical after these
fields, which legitimately vary from run to run, are blanked (and only
them):
  - each tree's own root path (the runs write into different folders);
  - JSON keys "seconds" and "seconds_per_image" (wall times; in records a
    map of stage times), anywhere in a .json file;
  - the columns "seconds" and "seconds_per_image" of tune.csv and
    manifest.csv;
  - the seconds cells of report.html (<td class="n">1.23</td>) and the
    date it was written (2026-12-03 00:45 UTC);
  - the holder line of .cleave-batch.lock (pid, host, start time);
  - times in the logs of stdout/stderr ("2.2 s", "0.247 s per image"),
    and batch's periodic progress lines ("cleave batch: 0/3 images done"),
    printed on a clock.
Prints one line per differing file and a summary; exit 1 when any differ.
"""
import csv, io, json, os, re, sys

TIME_KEYS = {"seconds", "seconds_per_image"}


def blank_json(v):
    if isinstance(v, dict):
        return {k: (None if k in TIME_KEYS else blank_json(x)) for k, x in v.items()}
    if isinstance(v, list):
        return [blank_json(x) for x in v]
    return v


def normalize(rel, data, root):
    name = os.path.basename(rel)
    if name.endswith(".png") or name.endswith(".tif") or name.endswith(".tiff"):
        return data
    text = data.decode("utf-8", "surrogateescape").replace(root, "$OUT")
    if name == ".cleave-batch.lock":
        text = re.sub(r"pid \d+ on \S+, since \S+", "pid P on H, since T", text)
    elif name.endswith(".json") and not rel.startswith("log/"):
        # Keep the bytes but for the values of the time keys.
        text = re.sub(r'("(?:seconds|seconds_per_image)": )(\{[^{}]*\}|[-0-9.eE+]+|null)', r"\1T", text)
    elif name in ("tune.csv", "manifest.csv"):
        rows = list(csv.reader(io.StringIO(text)))
        if rows:
            cols = [i for i, h in enumerate(rows[0]) if h in TIME_KEYS]
            for r in rows[1:]:
                for i in cols:
                    if i < len(r):
                        r[i] = "T"
            out = io.StringIO()
            csv.writer(out, lineterminator="\n").writerows(rows)
            text = out.getvalue()
    elif name == "report.html":
        text = re.sub(r'<td class="n">\d+\.\d\d</td>', '<td class="n">T</td>', text)
        text = re.sub(r"\d{4}-\d\d-\d\d \d\d:\d\d UTC", "DATE", text)
    if rel.startswith("log/"):
        # batch's periodic progress lines come on a clock.
        text = re.sub(r"(?m)^cleave batch: \d+/\d+ images done.*\n", "", text)
        text = re.sub(r"\b\d+(\.\d+)? s\b", "T s", text)
    return text.encode("utf-8", "surrogateescape")


def files(root):
    out = set()
    for d, _, fs in os.walk(root):
        for f in fs:
            out.add(os.path.relpath(os.path.join(d, f), root))
    return out


def main():
    a, b = os.path.abspath(sys.argv[1]), os.path.abspath(sys.argv[2])
    fa, fb = files(a), files(b)
    bad = 0
    for rel in sorted(fa ^ fb):
        print(f"only in {'A' if rel in fa else 'B'}: {rel}")
        bad += 1
    same = 0
    for rel in sorted(fa & fb):
        da = open(os.path.join(a, rel), "rb").read()
        db = open(os.path.join(b, rel), "rb").read()
        if da == db or normalize(rel, da, a) == normalize(rel, db, b):
            same += 1
        else:
            print(f"differs: {rel}")
            bad += 1
    print(f"identity: {same} files identical (after blanking the varying fields), {bad} differ or missing")
    sys.exit(1 if bad else 0)


main()
