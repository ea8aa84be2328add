#!/usr/bin/env bash
# Side-by-side speed figures for README: the Go benchmarks and the same work in
# PyTorch (Debian python3-torch 1.13.1, two threads), one after the other on
# this machine. Run from the repository root on an otherwise idle machine:
#
#     bash testdata/bench/side_by_side.sh > /tmp/figures.txt 2>&1
#
# PyTorch runs with glibc's allocator kept from returning memory and OpenMP
# threads that do not spin (first-touch page faults and spinning threads
# distort its timings on small VMs); Go reuses its buffers for the same reason.
set -euo pipefail
cd "$(dirname "$0")/../.."
export MALLOC_MMAP_THRESHOLD_=4000000000 MALLOC_TRIM_THRESHOLD_=4000000000
py=/usr/bin/python3
have_torch=0
if $py -c 'import torch' 2>/dev/null; then have_torch=1; fi

echo "== machine"
go version
grep -m1 'model name' /proc/cpuinfo || true
nproc
uptime

echo "== warp forward+backward, one core"
go test ./warp -run '^$' -bench ForwardBackward -cpu 1 -count 5 -benchtime 200ms

echo "== loss objective forward+backward, one core"
go test ./loss -run '^$' -bench Objective -cpu 1 -count 5 -benchtime 20x

echo "== synthetic pair, one core"
go test ./synth -run '^$' -bench . -cpu 1 -count 3 -benchtime 20x

echo "== conv and sgemm (Go), two cores"
go test ./model/internal/cpu -run '^$' -bench 'Conv3x3|Sgemm' -count 3 -benchtime 1s
if [ $have_torch = 1 ]; then
	echo "== conv and sgemm (PyTorch)"
	$py testdata/cpu/conv/bench_torch.py
fi

echo "== inference 256x128 (Go)"
go test ./model -run '^$' -bench 'Estimate256x128|Forward256x128$' -count 3 -benchtime 30x
if [ $have_torch = 1 ]; then
	echo "== inference 256x128 (PyTorch)"
	OMP_WAIT_POLICY=PASSIVE $py testdata/infer/bench_torch.py
fi

echo "== training step, batch 4, 256x128 (Go)"
go test ./model/train -run '^$' -bench Step256x128N4 -count 3 -benchtime 5x
if [ $have_torch = 1 ]; then
	echo "== training step, batch 4, 256x128 (PyTorch)"
	OMP_WAIT_POLICY=PASSIVE $py testdata/train/step_torch.py
fi
