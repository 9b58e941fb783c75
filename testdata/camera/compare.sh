#!/bin/sh
# Camera-sized frames: two cleave binaries side by side on generated
# 16-bit nuclei frames,
#
#   go run ./examples/scenes/gen -kind nuclei -n 1 -size S -tiff -seed SEED
#
# segmented with `cleave segment --classes 2 --background dark` at the
# default (automatic) superpixel count. For each size the two binaries
# run in turn, ROUNDS times (interleaved, so that a change in the
# machine's load falls on both), each under /usr/bin/time: wall seconds,
# user + system CPU seconds, peak RSS, the load average before the run,
# and the stage seconds of the record (STEM.json). After every pair the
# outputs are compared with compare.py beside this script (label and
# class maps, overlay and preview pixel by pixel with Debian's
# python3-pil and numpy, the region table and outlines byte by byte, the
# record without its seconds). Medians per binary and size at the end.
#
#   sh testdata/camera/compare.sh BEFORE AFTER [SIZES [ROUNDS [SEED]]]
#   sh testdata/camera/compare.sh /tmp/cleave-main ./cleave "1024 2048 4096" 3 14500
#
# Run from the module root. The figures in the README came from it.
set -eu
BEFORE=$1
AFTER=$2
SIZES=${3:-"1024 2048 4096"}
ROUNDS=${4:-3}
SEED=${5:-14500}
PY=/usr/bin/python3
HERE=$(dirname "$0")
DIR=$(mktemp -d)
trap 'rm -rf "$DIR"' EXIT
if ! $PY -c "import PIL, numpy" 2>/dev/null; then
	echo "SKIPPED: Debian python3-pil and python3-numpy are needed to compare the outputs" >&2
	exit 1
fi
printf 'size\tbinary\tround\twall_s\tcpu_s\tpeak_rss_mb\tload1\tstages\n'
for s in $SIZES; do
	go run ./examples/scenes/gen -kind nuclei -n 1 -size "$s" -tiff -seed "$SEED" -out "$DIR/in$s" >/dev/null
	img=$(ls "$DIR/in$s"/*.tif)
	r=0
	while [ "$r" -lt "$ROUNDS" ]; do
		r=$((r + 1))
		for b in before after; do
			bin=$BEFORE
			[ "$b" = after ] && bin=$AFTER
			load=$(cut -d' ' -f1 /proc/loadavg)
			/usr/bin/time -f "%e %U %S %M" -o "$DIR/time.txt" "$bin" segment --force --classes 2 --background dark --out "$DIR/out-$b" "$img" >/dev/null 2>&1
			read -r wall user sys rss <"$DIR/time.txt"
			stages=$($PY -c "import json,sys,glob; r=json.load(open(glob.glob(sys.argv[1]+'/*.json')[0])); print(' '.join('%s=%.2f' % kv for kv in sorted(r['seconds'].items())))" "$DIR/out-$b")
			printf '%s\t%s\t%s\t%s\t%.2f\t%.0f\t%s\t%s\n' "$s" "$b" "$r" "$wall" "$(echo "$user + $sys" | bc)" "$(echo "$rss / 1024" | bc)" "$load" "$stages"
		done
		$PY "$HERE/compare.py" "$DIR/out-before" "$DIR/out-after" | tail -1 | sed "s/^/# $s round $r: /"
	done
done | tee "$DIR/all.tsv"
echo
echo "medians (wall s / CPU s / peak RSS MB):"
grep -v '^#' "$DIR/all.tsv" | $PY -c '
import sys, statistics as st
rows = [l.rstrip("\n").split("\t") for l in sys.stdin if l.strip()]
keys = sorted({(int(r[0]), r[1]) for r in rows}, key=lambda k: (k[0], k[1] != "before"))
for k in keys:
    rs = [r for r in rows if (int(r[0]), r[1]) == k]
    med = lambda i: st.median(float(r[i]) for r in rs)
    rng = lambda i: "%g-%g" % (min(float(r[i]) for r in rs), max(float(r[i]) for r in rs))
    print("%5d %-6s %.2f (%s) / %.2f (%s) / %.0f (%s)" % (k[0], k[1], med(3), rng(3), med(4), rng(4), med(5), rng(5)))
'
