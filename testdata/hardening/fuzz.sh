#!/usr/bin/env bash
# Runs every Fuzz target of the module for FUZZTIME (default 60s) each, one
# after the other, with minimisation bounded by count (-fuzzminimizetime 100x,
# see DEVELOPERS.md), and prints one line per target: the package, the target,
# the inputs run ("execs") and whether it failed. A failing input is written by
# go test into the package's testdata/fuzz/TARGET/, where it stays as a
# regression case once committed. From the repository root:
#
#     nice -n 10 bash testdata/hardening/fuzz.sh > /tmp/fuzz.txt 2>&1
#
# FUZZPARALLEL (default: go test's, GOMAXPROCS) sets -parallel.
set -uo pipefail
cd "$(dirname "$0")/../.."
fuzztime=${FUZZTIME:-60s}
par=()
[ -n "${FUZZPARALLEL:-}" ] && par=(-parallel "$FUZZPARALLEL")
log=$(mktemp)
trap 'rm -f "$log"' EXIT
status=0
summary=()
while IFS=: read -r file _ line; do
	target=$(sed -E 's/^func (Fuzz[A-Za-z0-9_]*)\(.*/\1/' <<<"$line")
	pkg=$(dirname "$file")
	echo "== $pkg $target ($fuzztime)"
	go test "$pkg" -run '^$' -fuzz "^$target\$" -fuzztime "$fuzztime" -fuzzminimizetime 100x "${par[@]}" >"$log" 2>&1
	rc=$?
	tail -n 3 "$log"
	execs=$(grep -oE 'execs: [0-9]+' "$log" | tail -n 1 | awk '{print $2}')
	result=ok
	if [ $rc != 0 ]; then result="FAILED (exit $rc)"; status=1; cat "$log"; fi
	summary+=("$pkg $target execs ${execs:-?} $result")
done < <(grep -rn --include='*_test.go' -E '^func Fuzz[A-Za-z0-9_]*\(' . | sort)
echo "== summary (fuzztime $fuzztime each; $(nproc) cores; load $(cut -d' ' -f1-3 /proc/loadavg))"
printf '%s\n' "${summary[@]}"
exit $status
