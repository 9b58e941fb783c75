#!/bin/sh
# The whole cleave command on pixel graphs of growing size, against
# scipy's ARPACK on the same exported graph, with peak RSS and the fitted
# growth exponent. The images are testdata/eigen/coins152x192.png
# enlarged by each factor with scikit-image (transform.rescale, order 1):
# factors 1 2 4 6 give 29,184, 116,736, 466,944 and 1,050,624 nodes
# (r = 5: up to 80 neighbours a node). For each size the command
#
#   cleave segment --superpixels 0 --radius 5 --sigma-i 0.1 --sigma-x 4 \
#       --method kway --segments 6
#
# runs ROUNDS times under /usr/bin/time (wall seconds, peak RSS); the
# first run also writes the graph (--save-graph, not timed), and for
# graphs of at most SCIPY_MAX nodes scipy's eigsh (ARPACK, largest of
# D^-1/2 W D^-1/2, tol 1e-6; eigsh_check.py "la") solves it once, its
# eigenvalues compared with the command's (STEM.json). The exponent b of
# seconds = a * nodes^b is fitted by least squares on the logarithms of
# the median times, over all sizes and over sizes from 100,000 nodes on.
# Needs Debian's python3-skimage and python3-scipy. On a shared machine
# run it when it is quiet, or read the ratios within one size only.
#
#   sh testdata/eigen/pixel_scale.sh [FACTORS [ROUNDS [SCIPY_MAX]]]
#   sh testdata/eigen/pixel_scale.sh "1 2 4 6" 3 120000
#
# Run from the module root.
set -eu
FACTORS=${1:-"1 2 4 6"}
ROUNDS=${2:-3}
SCIPY_MAX=${3:-120000}
PY=/usr/bin/python3
DIR=$(mktemp -d)
trap 'rm -rf "$DIR"' EXIT
if ! $PY -c "import skimage, scipy.sparse.linalg" 2>/dev/null; then
	echo "SKIPPED: Debian python3-skimage and python3-scipy are needed (apt-get install -y python3-skimage python3-scipy)" >&2
	exit 1
fi
go build -o "$DIR/cleave" ./cmd/cleave
FLAGS="--superpixels 0 --radius 5 --sigma-i 0.1 --sigma-x 4 --method kway --segments 6"
: >"$DIR/results.txt"
for f in $FACTORS; do
	img="$DIR/coins_x$f.png"
	$PY - testdata/eigen/coins152x192.png "$f" "$img" <<'PY'
import sys
import numpy as np
from skimage import io
from skimage.transform import rescale
src, f, dst = sys.argv[1], float(sys.argv[2]), sys.argv[3]
img = io.imread(src).astype(np.float64)
out = img if f == 1 else rescale(img, f, order=1, preserve_range=True, anti_aliasing=False)
io.imsave(dst, np.clip(np.rint(out), 0, 255).astype(np.uint8), check_contrast=False)
PY
	# shellcheck disable=SC2086
	"$DIR/cleave" segment --force --out "$DIR/out" $FLAGS --save-graph "$DIR/g.mtx" "$img" >/dev/null
	n=$($PY -c "import json,sys; print(json.load(open(sys.argv[1]))['graph']['nodes'])" "$DIR/out/coins_x$f.json")
	r=0
	while [ "$r" -lt "$ROUNDS" ]; do
		r=$((r + 1))
		# shellcheck disable=SC2086
		/usr/bin/time -f "%e %M" -o "$DIR/time.txt" "$DIR/cleave" segment --force --out "$DIR/out" $FLAGS "$img" >/dev/null
		read -r secs rss <"$DIR/time.txt"
		echo "x$f nodes $n round $r: cleave $secs s, peak RSS $((rss / 1024)) MiB"
		echo "$n $secs $rss" >>"$DIR/results.txt"
	done
	if [ "$n" -le "$SCIPY_MAX" ]; then
		$PY testdata/eigen/eigsh_check.py "$DIR/g.mtx" 6 la >"$DIR/scipy.json"
		$PY - "$DIR/scipy.json" "$DIR/out/coins_x$f.json" <<'PY'
import json, sys
s = json.load(open(sys.argv[1]))
c = json.load(open(sys.argv[2]))["eigenvalues"]
worst = max(abs(a - b) / abs(b) for a, b in zip(c[1:], s["values"][1:]))
print("  scipy eigsh (ARPACK, la) %.2f s on the same graph; eigenvalues 1-5 agree to %.2g relative" % (s["seconds"], worst))
PY
	fi
	rm -f "$DIR/g.mtx"
done
$PY - "$DIR/results.txt" <<'PY'
import sys
import numpy as np
rows = [l.split() for l in open(sys.argv[1]) if l.strip()]
by = {}
for n, s, rss in rows:
    by.setdefault(int(n), []).append((float(s), int(rss)))
ns = sorted(by)
med = {n: float(np.median([s for s, _ in by[n]])) for n in ns}
for n in ns:
    print("%9d nodes: median %.2f s, peak RSS %d-%d MiB" % (n, med[n], min(r for _, r in by[n]) // 1024, max(r for _, r in by[n]) // 1024))
def fit(sel):
    if len(sel) < 2:
        return float("nan")
    return np.polyfit(np.log(sel), np.log([med[n] for n in sel]), 1)[0]
print("growth exponent, all sizes: %.2f" % fit(ns))
print("growth exponent, sizes >= 100,000 nodes: %.2f" % fit([n for n in ns if n >= 100000]))
PY
