#!/bin/sh
# Issue 14's targets for online adaptation, one mode per target:
#
#   sh examples/adaptdrive/measure.sh epe [DIR]      EPE after 2 minutes of storage frames (1,200 at
#                                                    10 frames/s, 240 steps as 2 steps/s would give)
#                                                    beside an offline fine-tune on the same frames
#                                                    (OFFLINE_STEPS steps at batch 4, default 1,200)
#   sh examples/adaptdrive/measure.sh memory [DIR]   resident memory over a 30-minute run, once a minute, with
#                                                    the command's default -memory-limit and (MEMORY_LIMIT=0)
#                                                    without a limit
#   sh examples/adaptdrive/measure.sh latency [DIR]  Estimate's latency without and while adapting
#
# epe and memory do not depend on the machine's load (epe steps in the frame loop, so its figures
# are reproducible; RSS does not change with load): run them niced on a shared machine. latency
# does: run it alone on an idle machine (uptime's load below 0.5). Outputs go to DIR (default
# /tmp/adaptdrive-measure): the tables, the plots and, for epe, the written drive and the
# fine-tuned weights.
set -eu
mode=${1:?usage: measure.sh epe|memory|latency [DIR]}
out=${2:-/tmp/adaptdrive-measure}
mkdir -p "$out"
go build -o "$out/adaptdrive" ./examples/adaptdrive
legs=greenhouse:40,storage:1200
case $mode in
epe)
	# The drive's storage frames, written once: the offline fine-tune trains on exactly these, and
	# -eval scores it on them with the same EPE as the drive's columns.
	go build -o "$out/finetune" ./examples/finetune
	rm -rf "$out/drive" "$out/offline.safetensors" "$out/offline.safetensors.ckpt"
	"$out/adaptdrive" -legs $legs -write "$out/drive"
	for i in $(seq 0 39); do # the greenhouse leg is frames 000000-000039
		n=$(printf %06d "$i")
		rm -f "$out/drive/left/$n.png" "$out/drive/right/$n.png" "$out/drive/truth"/*/"$n".*
	done
	# Online (frames rendered afresh, identical to the written ones) and offline side by side.
	"$out/adaptdrive" -legs $legs -steps-per-frame 0.2 -block 100 -plot "$out/epe.png" > "$out/epe.txt" &
	"$out/finetune" -data "$out/drive" -out "$out/offline.safetensors" -steps "${OFFLINE_STEPS:-1200}" -val 0 -quiet > "$out/offline.txt"
	wait
	"$out/adaptdrive" -eval "$out/drive" -weights "$out/offline.safetensors" -block 100 > "$out/offline_eval.txt"
	cat "$out/epe.txt" "$out/offline_eval.txt"
	;;
memory)
	"$out/adaptdrive" -duration 30m -fps 10 ${MEMORY_LIMIT:+-memory-limit $MEMORY_LIMIT} -rss-log "$out/rss.csv" -plot "$out/memory.png" > "$out/memory.txt"
	cat "$out/rss.csv"
	;;
latency)
	uptime
	"$out/adaptdrive" -latency 300 -fps 10 | tee "$out/latency.txt"
	;;
*)
	echo "measure.sh: unknown mode $mode (epe, memory or latency)" >&2
	exit 2
	;;
esac
