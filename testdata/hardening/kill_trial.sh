#!/usr/bin/env bash
# kill -9 trial of fine-tuning (issue 12): trains STEPS steps on a tiny
# synthetic data set (examples/synth) once without interruption, then again
# killing the run with SIGKILL KILLS times and resuming it with -resume after
# each kill. Every other kill waits for a checkpoint write to be under way
# (its temporary file present) and kills then; the others come at a random
# moment. A kill counts as mid-write when the killed run's temporary file
# is still there after it died (a finished write renames it). After every kill the checkpoint, if one exists yet, must load
# (train.LoadCheckpoint); at the end the run must have finished (exit 0), its
# checkpoint must hold STEPS steps, no temporary file may remain, and the
# final weights must equal the uninterrupted run's bit for bit. From the
# repository root:
#
#     nice -n 10 bash testdata/hardening/kill_trial.sh
#
# STEPS (default 60), EVERY (checkpoint interval, default 5), KILLS
# (default 10) and SEED (of the kill times, default 1) change the trial.
set -euo pipefail
cd "$(dirname "$0")/../.."
steps=${STEPS:-60} every=${EVERY:-5} kills=${KILLS:-10}
RANDOM=${SEED:-1}
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
go build -o "$tmp/synth" ./examples/synth
go build -o "$tmp/finetune" ./examples/finetune
go build -o "$tmp/killcheck" ./testdata/hardening/killcheck
"$tmp/synth" -style greenhouse -n 6 -width 128 -height 64 -seed 7 -quiet -out "$tmp/data"
args=(-data "$tmp/data" -steps "$steps" -every "$every" -batch 1 -val 0 -quiet)

mkdir -p "$tmp/ref" "$tmp/trial"
start=$SECONDS
"$tmp/finetune" "${args[@]}" -out "$tmp/ref/w.safetensors" >/dev/null
ref_time=$((SECONDS - start))
echo "uninterrupted run: $steps steps in ${ref_time} s"

out=$tmp/trial/w.safetensors ckpt=$tmp/trial/w.safetensors.ckpt
# writing reports whether a checkpoint write is under way: a temporary file
# of the checkpoint that was not there when the run started.
writing() {
	local f
	for f in "$tmp"/trial/.w.safetensors.ckpt.tmp*; do
		[[ -e $f && $'\n'$stale$'\n' != *$'\n'${f##*/}$'\n'* ]] && return 0
	done
	return 1
}
killed=0 midwrite=0 runs=0 status=
while :; do
	resume=()
	[ -e "$ckpt" ] && resume=(-resume)
	runs=$((runs + 1))
	# Temporary files a kill left, which the new run removes before step 1:
	# they do not count as a write under way.
	stale=$(ls -A "$tmp/trial" | grep '^\.w\.safetensors\.ckpt\.tmp' || true)
	"$tmp/finetune" "${args[@]}" "${resume[@]}" -out "$out" >"$tmp/trial.out" 2>"$tmp/trial.err" &
	pid=$!
	if [ "$killed" -ge "$kills" ]; then
		wait "$pid" && status=0 || status=$?
		break
	fi
	if [ $((killed % 2)) = 1 ]; then
		# Wait for a checkpoint write (its temporary file) and kill then.
		for _ in $(seq 2000); do
			if writing || ! kill -0 "$pid" 2>/dev/null; then break; fi
			sleep 0.002
		done
	else
		sleep "$(awk -v r=$RANDOM -v t="$ref_time" 'BEGIN {print 0.2 + r / 32768 * (t > 2 ? t / 2 : 1)}')"
	fi
	if ! kill -9 "$pid" 2>/dev/null; then
		# It had already ended: a finished run stops the trial early.
		wait "$pid" && status=0 || status=$?
		echo "run $runs ended before its kill (status $status)"
		break
	fi
	wait "$pid" 2>/dev/null || true
	# A temporary file of its own left behind: the kill came mid-write.
	during=0
	writing && during=1
	killed=$((killed + 1))
	midwrite=$((midwrite + during))
	if [ -e "$ckpt" ]; then
		read -r at total < <("$tmp/killcheck" step "$ckpt") || { echo "FAIL: the checkpoint does not load after kill $killed"; exit 1; }
		echo "kill $killed$( [ $during = 1 ] && echo ' (during a checkpoint write)'): checkpoint loads, step $at of $total"
	else
		echo "kill $killed$( [ $during = 1 ] && echo ' (during a checkpoint write)'): no checkpoint yet"
	fi
done
fail=0
if [ "$status" != 0 ]; then echo "FAIL: the last run exited with status $status"; cat "$tmp/trial.err"; fail=1; fi
read -r at total < <("$tmp/killcheck" step "$ckpt") || { echo "FAIL: the final checkpoint does not load"; exit 1; }
[ "$at" = "$steps" ] || { echo "FAIL: the final checkpoint is at step $at, want $steps"; fail=1; }
if compgen -G "$tmp/trial/.*.tmp*" >/dev/null; then echo "FAIL: temporary files remain:"; ls -a "$tmp/trial"; fail=1; fi
if "$tmp/killcheck" same "$out" "$tmp/ref/w.safetensors"; then
	same="equal the uninterrupted run's bit for bit"
else
	same="DIFFER from the uninterrupted run's"; fail=1
fi
echo "$killed kills ($midwrite during a checkpoint write) over $runs runs; final checkpoint at step $at of $steps; final weights $same"
[ $fail = 0 ] && echo "kill trial: PASS" || { echo "kill trial: FAIL"; exit 1; }
