#!/usr/bin/env bash
# Side-by-side speed figures for README: the Go benchmarks and the same work in
# PyTorch (Debian python3-torch 1.13.1, two threads), one after the other on
# this machine. Run from the repository root on an otherwise idle machine:
#
#     bash testdata/bench/side_by_side.sh > /tmp/figures.txt 2>&1
#
# With SMOKE=1 every step runs as briefly as it can (Go benchmarks once, the
# PyTorch scripts stopped after 60 s), to check that the script runs to the
# end; its figures mean nothing.
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
smoke=${SMOKE:-0}

# gobench PKG PATTERN COUNT BENCHTIME [FLAGS...] runs Go benchmarks.
gobench() {
	local pkg=$1 pattern=$2 count=$3 benchtime=$4
	shift 4
	if [ "$smoke" = 1 ]; then count=1 benchtime=1x; fi
	go test "$pkg" -run '^$' -bench "$pattern" -count "$count" -benchtime "$benchtime" "$@"
}

# torchrun SCRIPT runs a PyTorch timing script (60 s at most with SMOKE=1).
torchrun() {
	if [ "$smoke" = 1 ]; then
		timeout 60 "$@" || [ $? = 124 ]
	else
		"$@"
	fi
}

echo "== machine"
go version
grep -m1 'model name' /proc/cpuinfo || true
nproc
uptime

echo "== warp forward+backward, one core"
gobench ./warp ForwardBackward 5 200ms -cpu 1

echo "== loss objective forward+backward, one core"
gobench ./loss Objective 5 20x -cpu 1

echo "== synthetic pair, one core"
gobench ./synth . 3 20x -cpu 1

echo "== conv and sgemm (Go), two cores"
gobench ./model/internal/cpu 'Conv3x3|Sgemm' 3 1s
if [ $have_torch = 1 ]; then
	echo "== conv and sgemm (PyTorch)"
	torchrun $py testdata/cpu/conv/bench_torch.py
fi

echo "== inference 256x128 (Go)"
gobench ./model 'Estimate256x128|Forward256x128$' 3 30x
if [ $have_torch = 1 ]; then
	echo "== inference 256x128 (PyTorch)"
	OMP_WAIT_POLICY=PASSIVE torchrun $py testdata/infer/bench_torch.py
fi

echo "== stereo inference: pairs of 256x128 and 640x480 (network 256x128 and 384x288), beside the one-image network at 640x480 (Go)"
gobench ./model 'EstimatePair|EstimateOne640x480' 3 10x
if [ $have_torch = 1 ]; then
	echo "== stereo network alone at 256x128 and 384x288 (PyTorch; the matcher has no PyTorch counterpart)"
	OMP_WAIT_POLICY=PASSIVE torchrun $py testdata/stereo/net/bench_torch_stereo.py
fi

echo "== training step, batch 4, 256x128 (Go)"
gobench ./model/train 'Step256x128N4' 3 5x
if [ $have_torch = 1 ]; then
	echo "== training step, batch 4, 256x128 (PyTorch)"
	OMP_WAIT_POLICY=PASSIVE torchrun $py testdata/train/step_torch.py
fi

echo "== done"
