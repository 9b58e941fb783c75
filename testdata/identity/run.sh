#!/bin/sh
# Produce every output of a fixed set of cleave runs into OUT, for a
# byte-for-byte comparison of two builds (compare.sh). Usage:
#   testdata/identity/run.sh BINARY OUT
# Runs: the demo; segment on the shipped examples (examples/nuclei,
# examples/plates) and on scikit-image photographs (Debian python3-skimage's
# data folder; skipped with a message when it is missing); a batch over
# examples/nuclei; tune on examples/nuclei; score of the segmented examples
# against their truth masks (text, --json and --csv); the help of every
# command. stdout and stderr of
# every run are kept too (OUT/log/NAME.out, .err, .rc).
set -u
bin=$1
out=$2
repo=$(cd "$(dirname "$0")/../.." && pwd)
sk=/usr/lib/python3/dist-packages/skimage/data
rm -rf "$out"
mkdir -p "$out/log"
run() { # NAME ARGS...
	name=$1
	shift
	"$bin" "$@" >"$out/log/$name.out" 2>"$out/log/$name.err"
	echo $? >"$out/log/$name.rc"
}
cd "$repo"
for c in segment batch score tune demo; do
	run help-$c help $c
done
run demo demo --out "$out/demo" --workers 2
run seg-nuclei segment --classes 2 --background dark --out "$out/seg-nuclei" \
	examples/nuclei/nuclei-1.png examples/nuclei/nuclei-2.png examples/nuclei/nuclei-3.png
run seg-plates segment --classes 2 --background bright --flatten 30 --grain on --out "$out/seg-plates" \
	examples/plates/plate-1.png examples/plates/plate-2.png
run seg-nuclei-kway segment --method kway --segments 4 --labels-format tiff --pixel-size 0.5 --unit um \
	--out "$out/seg-nuclei-kway" examples/nuclei/nuclei-1.png
if [ -d "$sk" ]; then
	run seg-coins segment --classes 2 --background dark --out "$out/seg-coins" "$sk/coins.png"
	run seg-camera segment --out "$out/seg-camera" "$sk/camera.png"
	run seg-gravel segment --background lines --out "$out/seg-gravel" "$sk/gravel.png"
	run seg-astronaut segment --features lab --classes 3 --out "$out/seg-astronaut" "$sk/astronaut.png"
	run seg-micro segment --classes 2 --background bright --out "$out/seg-micro" "$sk/microaneurysms.png"
else
	echo "identity: $sk missing (Debian python3-skimage); the photograph runs are SKIPPED" >&2
fi
run batch batch --classes 2 --background dark --out "$out/batch" --jobs 2 examples/nuclei
run tune tune --images examples/nuclei --truth examples/nuclei --out "$out/tune" \
	--classes 2 --background dark --budget 4 --folds 3 --workers 2
run score score "$out/seg-nuclei" examples/nuclei --paired-only
run score-json score --json --csv "$out/score.csv" "$out/seg-nuclei/nuclei-1.labels.png" examples/nuclei/nuclei-1.truth.png
run score-dir-json score --json --paired-only "$out/seg-nuclei" examples/nuclei
exit 0
