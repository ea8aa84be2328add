#!/bin/sh
# Builds the stereo run's training set and its held-out sets from the
# synthetic scenario (package synth), byte for byte from the seeds:
#   OUT/train                 4 styles x 600 pairs (seed 1), each pair's own
#                             rig (-vary all), names prefixed by the style
#   OUT/heldout_STYLE         25 pairs per style of seed 1001, never trained on
# The training set is one folder of hard links to the per-style folders
# (the synth command writes one style per folder). Run from the repository
# root: sh training/stereo/make_data.sh /tmp/stereo_data
set -eu
OUT=${1:?usage: make_data.sh OUTDIR}
go build -o "$OUT/synth" ./examples/synth
for s in greenhouse storage orchard workshop; do
	nice -n 10 "$OUT/synth" -style $s -vary all -n 600 -seed 1 -workers 1 -out "$OUT/$s" -quiet
	nice -n 10 "$OUT/synth" -style $s -vary all -n 25 -seed 1001 -workers 1 -out "$OUT/heldout_$s" -quiet
done
T="$OUT/train"
rm -rf "$T"
for s in greenhouse storage orchard workshop; do
	(cd "$OUT/$s" && find . -type f ! -name rig.json) | while read -r f; do
		d=$(dirname "$f")
		mkdir -p "$T/$d"
		ln "$OUT/$s/$f" "$T/$d/${s}_$(basename "$f")"
	done
done
echo "training set: $(ls "$T/left" | wc -l) pairs in $T"
