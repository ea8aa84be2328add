#!/usr/bin/env bash
# Peak resident memory (/usr/bin/time -v, "Maximum resident set size") of
# estimating depth for one 4000x3000 image, which the Estimator scales down
# to the network's size (384x288 by default): through the library
# (testdata/hardening/peakrss: Estimator.Estimate on the demo image scaled
# up, with its rig), with and without flip, and through the estimate command
# on the same image written as a PNG, with and without -flip -pfm -ply.
# Memory does not depend on the machine's load. From the repository root:
#
#     bash testdata/hardening/peak_rss.sh
#
# WIDTH and HEIGHT change the image size.
set -euo pipefail
cd "$(dirname "$0")/../.."
w=${WIDTH:-4000} h=${HEIGHT:-3000}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
go build -o "$tmp/peakrss" ./testdata/hardening/peakrss
go build -o "$tmp/estimate" ./examples/estimate

# peak LABEL COMMAND... runs COMMAND under /usr/bin/time -v and prints its
# peak RSS in MB (10^6 bytes) and its wall time.
peak() {
	local label=$1
	shift
	/usr/bin/time -v -o "$tmp/time.txt" "$@" >"$tmp/out.txt" 2>&1 || { cat "$tmp/out.txt" "$tmp/time.txt"; exit 1; }
	local kb wall
	kb=$(awk -F': ' '/Maximum resident set size/ {print $2}' "$tmp/time.txt")
	wall=$(awk -F': ' '/Elapsed \(wall clock\)/ {print $2}' "$tmp/time.txt")
	printf '%-48s peak RSS %6.0f MB, wall %s\n' "$label" "$(awk -v kb="$kb" 'BEGIN {print kb * 1024 / 1e6}')" "$wall"
	grep -h 'network' "$tmp/out.txt" | sed 's/^/    /' || true
}

echo "== $(uname -m), $(nproc) cores, $(awk '/MemTotal/ {printf "%.0f GiB", $2/1048576}' /proc/meminfo), $(go version | cut -d' ' -f3)"
peak "library, ${w}x${h}" "$tmp/peakrss" -width "$w" -height "$h"
peak "library, ${w}x${h}, flip" "$tmp/peakrss" -width "$w" -height "$h" -flip
"$tmp/peakrss" -width "$w" -height "$h" -png "$tmp/big.png"
peak "estimate command, ${w}x${h}" "$tmp/estimate" -quiet -rig "$tmp/big.rig.json" -out "$tmp/out" "$tmp/big.png"
peak "estimate command, ${w}x${h}, -flip -pfm -ply" "$tmp/estimate" -quiet -rig "$tmp/big.rig.json" -flip -pfm -ply -out "$tmp/out" "$tmp/big.png"
