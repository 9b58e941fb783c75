#!/bin/sh
# peak_rss.sh measures the peak resident memory (VmHWM, by GNU time's
# %M) of cleave on the hostile corpus and on generated scenes, and checks
# that every run under --max-memory stays within 1.25 times the limit.
# Run from the repository root (needs /usr/bin/time):
#
#   sh testdata/hostile/peak_rss.sh
#
# It builds the binary, makes a 60000 x 60000 TIFF header padded to 2 GB
# (a sparse file) and three generated nuclei scenes in a temporary folder
# (the third a 4096 x 4096 16-bit TIFF frame), and prints one line per
# run: case, limit, exit status, peak RSS, ratio; then the 16 MP frame's
# peak against the speed issue's 1 GB target.
set -eu
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
go build -o "$tmp/cleave" ./cmd/cleave
cp testdata/hostile/huge-tiff-60000.tif "$tmp/padded-2g.tif"
truncate -s 2G "$tmp/padded-2g.tif"
go run ./examples/scenes/gen -out "$tmp/s1" -kind nuclei -n 1 -seed 9990 -size 1024 >/dev/null
go run ./examples/scenes/gen -out "$tmp/s2" -kind nuclei -n 1 -seed 9991 -size 2048 >/dev/null
# The 16 MP 16-bit camera frame of the speed issue's memory target (1 GB
# peak RSS with --classes 2 --background dark at the defaults).
go run ./examples/scenes/gen -out "$tmp/s3" -kind nuclei -n 1 -seed 15111 -size 4096 -tiff >/dev/null
fail=0
run() { # name limit args...
	name=$1 limit=$2
	shift 2
	set +e
	/usr/bin/time -f %M -o "$tmp/rss" "$tmp/cleave" segment --force --out "$tmp/out" --max-memory "$limit" "$@" >/dev/null 2>"$tmp/err"
	code=$?
	set -e
	kb=$(tail -n 1 "$tmp/rss")
	lmib=$(echo "$limit" | sed 's/MiB$//; s/GiB$/*1024/' | bc)
	ratio=$(echo "scale=3; $kb / 1024 / $lmib" | bc)
	ok=yes
	if [ "$(echo "$ratio > 1.25" | bc)" = 1 ]; then ok=NO; fail=1; fi
	printf '%-34s %-7s exit %-3s peak %7.1f MiB  %s x limit  within 1.25x: %s\n' "$name" "$limit" "$code" "$(echo "scale=1; $kb/1024" | bc)" "$ratio" "$ok"
	if [ "$code" != 0 ]; then sed 's/^/    /' "$tmp/err" | head -n 2; fi
}
for l in 400MiB 2GiB; do
	run bomb-png-9999.png "$l" testdata/hostile/bomb-png-9999.png
	run padded-2g.tif "$l" "$tmp/padded-2g.tif"
	run huge-png-60000.png "$l" testdata/hostile/huge-png-60000.png
done
run bomb-png-3000.png 1GiB testdata/hostile/bomb-png-3000.png
run nuclei-1024.png 400MiB --classes 2 --background dark "$tmp/s1/nuclei-9990.png"
run nuclei-2048.png 1GiB --classes 2 --background dark "$tmp/s2/nuclei-9991.png"
run nuclei-2048.png 400MiB --classes 2 --background dark "$tmp/s2/nuclei-9991.png"
run "nuclei-1024.png (defaults)" 8GiB --classes 2 --background dark "$tmp/s1/nuclei-9990.png"
run "nuclei-2048.png (defaults)" 8GiB --classes 2 --background dark "$tmp/s2/nuclei-9991.png"
run "nuclei-4096.tif (defaults)" 8GiB --classes 2 --background dark "$tmp/s3/nuclei-15111.tif"
# The issue's target for that frame, 1 GB = 10^9 bytes = 976,562 KiB;
# reported, not failed on: the peak moves with the collector's timing
# (DEVELOPERS.md, the class stage's memory, gives the spread measured).
kb=$(tail -n 1 "$tmp/rss")
if [ "$kb" -le 976562 ]; then t=yes; else t=NO; fi
printf '%-34s peak %d KiB, within the 1 GB (976,562 KiB) target: %s\n' "nuclei-4096.tif (defaults)" "$kb" "$t"
exit $fail
