#!/bin/sh
# Does the huge-page advice at start-up (cmd/cleave/internal/hugepages)
# pay? Builds cleave twice, with the build tag hugepages (advised) and as
# shipped (plain, no advice), and runs the two builds in turn ROUNDS times on the coins
# pixel graph (152x192, --superpixels 0) and on a generated 1024 x 1024
# nuclei scene (seed 13600, --classes 2 --background dark), printing per
# build the mean wall, CPU (user + system) and system seconds, minor page
# faults and peak RSS (/usr/bin/time). Alternating the builds lets a busy
# machine slow both alike.
#
#   sh testdata/hugepages/compare.sh [ROUNDS]
#
# Run from the module root.
set -eu
ROUNDS=${1:-8}
DIR=$(mktemp -d)
trap 'rm -rf "$DIR"' EXIT
go build -tags hugepages -o "$DIR/advised" ./cmd/cleave
go build -o "$DIR/plain" ./cmd/cleave
go run ./examples/scenes/gen -out "$DIR/img" -kind nuclei -n 1 -seed 13600 -size 1024 >/dev/null
run() { # CASE IMAGE ARGS...
	name=$1 img=$2
	shift 2
	i=0
	while [ "$i" -lt "$ROUNDS" ]; do
		i=$((i + 1))
		for b in advised plain; do
			/usr/bin/time -f "$name $b %e %U %S %R %M" -a -o "$DIR/times" \
				"$DIR/$b" segment --force --out "$DIR/out" "$@" "$img" >/dev/null
		done
	done
}
run coins testdata/eigen/coins152x192.png --superpixels 0 --radius 5 --sigma-i 0.1 --sigma-x 4 --method kway --segments 6
run nuclei1024 "$DIR/img/nuclei-13600.png" --classes 2 --background dark
awk '{k = $1 " " $2; n[k]++; w[k] += $3; c[k] += $4 + $5; s[k] += $5; f[k] += $6; if ($7 > m[k]) m[k] = $7}
END {for (k in n) printf "%-18s %d runs: wall %.3f s, cpu %.3f s, system %.3f s, minor faults %d, peak RSS %d MB (means; RSS the largest)\n",
	k, n[k], w[k] / n[k], c[k] / n[k], s[k] / n[k], f[k] / n[k], m[k] / 1024}' "$DIR/times" | sort
