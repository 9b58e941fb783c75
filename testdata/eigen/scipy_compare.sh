#!/bin/sh
# Times scipy's eigsh against segment/eigen on the coins pixel graph
# (152x192 = 29184 nodes, r = 5, sigma_I = 0.1, sigma_X = 4) and prints
# the eigenvalues side by side. Then times the whole cleave command on the
# same image (built binary, --method kway --segments K, no --save-graph)
# ROUNDS times, each round right after one more scipy "la" run, and
# prints every round's ratio: on a shared machine both slow down
# together, so a ratio from the same moment is fairer than a ratio of
# figures taken apart. Needs Debian's python3-scipy.
#
#   sh testdata/eigen/scipy_compare.sh [K [ROUNDS]]
#
# Run from the module root. scipy methods (see eigsh_check.py): "la" is
# ARPACK on M = D^-1/2 W D^-1/2 for its largest eigenvalues (tol 1e-6),
# "shift-invert" is ARPACK on (L + 1e-3 I)^-1 (sparse LU, tol 1e-6).
set -eu
K=${1:-6}
ROUNDS=${2:-3}
DIR=$(mktemp -d)
trap 'rm -rf "$DIR"' EXIT
go run ./testdata/eigen/coinsrun -mtx "$DIR/coins.mtx" -k "$K" -repeat 5 >"$DIR/cleave.json"
for m in la shift-invert; do
	/usr/bin/python3 testdata/eigen/eigsh_check.py "$DIR/coins.mtx" "$K" "$m" >"$DIR/scipy-$m.json"
done
/usr/bin/python3 - "$DIR" <<'PY'
import json, sys, os
d = sys.argv[1]
c = json.load(open(os.path.join(d, "cleave.json")))
print("graph: %d nodes, %d stored entries (pixel graph built in %.3f s)" % (c["n"], c["nnz"], c["graph_seconds"]))
print("cleave segment/eigen: best %.3f s, median %.3f s of 5 solves, %d LOBPCG steps on the input graph"
      % (c["best_seconds"], c["median_seconds"], c["iterations"]))
runs = {}
for m in ("la", "shift-invert"):
    s = json.load(open(os.path.join(d, "scipy-%s.json" % m)))
    runs[m] = s
    print("scipy eigsh %-12s: %.3f s" % (m, s["seconds"]))
print("%3s %22s %22s %22s %10s" % ("i", "cleave", "scipy la", "scipy shift-invert", "rel.diff"))
for i, v in enumerate(c["values"]):
    a, b = runs["la"]["values"][i], runs["shift-invert"]["values"][i]
    rel = abs(v - b) / abs(b) if abs(b) > 1e-12 else abs(v - b)
    print("%3d %22.15g %22.15g %22.15g %10.2g" % (i, v, a, b, rel))
PY

go build -o "$DIR/cleave" ./cmd/cleave
IMG=testdata/eigen/coins152x192.png
# The command normalizes by percentiles, so its graph differs from
# coinsrun's (intensity / 255): scipy gets the command's own export.
"$DIR/cleave" segment --force --out "$DIR/out" --superpixels 0 --radius 5 --sigma-i 0.1 --sigma-x 4 \
	--method kway --segments "$K" --save-graph "$DIR/command.mtx" "$IMG" >/dev/null
echo "whole command: cleave segment --superpixels 0 --radius 5 --sigma-i 0.1 --sigma-x 4 --method kway --segments $K $IMG"
echo "scipy: eigsh la on that command's --save-graph export"
i=0
while [ "$i" -lt "$ROUNDS" ]; do
	i=$((i + 1))
	/usr/bin/python3 testdata/eigen/eigsh_check.py "$DIR/command.mtx" "$K" la >"$DIR/round.json"
	best=
	for r in 1 2 3; do
		t0=$(date +%s.%N)
		"$DIR/cleave" segment --force --out "$DIR/out" --superpixels 0 --radius 5 --sigma-i 0.1 --sigma-x 4 \
			--method kway --segments "$K" "$IMG" >/dev/null
		t1=$(date +%s.%N)
		best=$(/usr/bin/python3 -c "import sys; a = float(sys.argv[1]) - float(sys.argv[2]); b = sys.argv[3]; print(a if b == '' else min(a, float(b)))" "$t1" "$t0" "$best")
	done
	/usr/bin/python3 - "$DIR/round.json" "$best" "$i" <<'PY'
import json, sys
s = json.load(open(sys.argv[1]))["seconds"]
c = float(sys.argv[2])
print("round %s: scipy eigsh la %.3f s, cleave command %.3f s (best of 3), ratio %.3f" % (sys.argv[3], s, c, c / s))
PY
done
