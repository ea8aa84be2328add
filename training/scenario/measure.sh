#!/bin/sh
# Regenerates training/scenario/stats.txt: 100 pairs of the greenhouse, storage and orchard styles
# (seed 1001, 256x128, each style's default variation: fixed camera for the first two, varied
# captures for the orchard) and their statistics (stats.py). Run from the repository root:
#     sh training/scenario/measure.sh [WORKDIR]
set -eu
W=${1:-/tmp/parallax-scenario}
mkdir -p "$W"
go build -o "$W/synth" ./examples/synth
for s in greenhouse storage orchard; do
	nice -n 10 "$W/synth" -style $s -n 100 -seed 1001 -width 256 -height 128 -out "$W/$s" -quiet
done
/usr/bin/python3 training/scenario/stats.py "$W" greenhouse storage orchard > training/scenario/stats.txt
cat training/scenario/stats.txt
