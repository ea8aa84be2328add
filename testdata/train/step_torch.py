#!/usr/bin/python3
"""Time one training step of the default network in PyTorch, for the
side-by-side figure with the Go trainer (BenchmarkStep256x128N4 in
model/train).

Run from the repository root with Debian's interpreter (python3-torch
1.13.1, numpy 1.24.2; the python3 on PATH cannot see them), with glibc's
allocator kept from returning memory to the system between steps:

    MALLOC_MMAP_THRESHOLD_=4000000000 MALLOC_TRIM_THRESHOLD_=4000000000 \
        /usr/bin/time -v /usr/bin/python3 testdata/train/step_torch.py

On a shared machine add OMP_WAIT_POLICY=PASSIVE: torch's OpenMP threads
otherwise spin while they wait and lose their cores to other processes (seen
here: median 3.6 s per step with the default policy, 0.52 s with PASSIVE,
minutes apart under a load average of 4 to 6 on 2 cores).

The network is built by walking testdata/train/default_arch.json (the
default architecture's layer list, written by `go test ./model/train -run
TestDefaultArchFile -update-arch`) with the same forward walk as
testdata/model/gen_st.py, whose output package model's tests compare with
the Go forward pass. The loss is the objective of
testdata/loss/gen_reference.py (appearance 0.85·(1−SSIM)/2 + 0.15·L1 both
ways, edge-aware smoothness, left-right consistency, four scales, each at
its own resolution against a 2×2 area-averaged image pyramid), which
package loss's tests compare with the Go kernels. The step is forward,
backward and torch.optim.Adam at batch 4, 256×128, float32, on 2 threads:
what the Go benchmark times. Inputs are uniform random images, as in the
Go benchmark. Prints the time of each step and the median; nothing is
written.
"""
import argparse
import importlib.util
import json
import os
import statistics
import sys
import time

import torch
import torch.nn.functional as F

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))


def load(name, path):
    spec = importlib.util.spec_from_file_location(name, os.path.join(ROOT, path))
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--batch", type=int, default=4)
    ap.add_argument("--steps", type=int, default=6, help="timed steps after 2 untimed ones")
    ap.add_argument("--threads", type=int, default=2)
    args = ap.parse_args()
    torch.set_num_threads(args.threads)
    torch.manual_seed(1)

    net = load("gen_st", "testdata/model/gen_st.py")
    ref = load("gen_reference", "testdata/loss/gen_reference.py")
    with open(os.path.join(ROOT, "testdata", "train", "default_arch.json")) as f:
        arch = json.load(f)

    params = {}
    for p in arch["params"]:
        shape = p["shape"]
        if len(shape) == 4:  # He initialisation, as model.NewWeights
            std = (2.0 / (shape[1] * shape[2] * shape[3])) ** 0.5
            params[p["name"]] = (torch.randn(shape) * std).requires_grad_()
        else:
            params[p["name"]] = torch.zeros(shape, requires_grad=True)
    n_params = sum(v.numel() for v in params.values())
    opt = torch.optim.Adam(params.values(), lr=3e-4)

    c = arch["input"]
    left = torch.rand(args.batch, c["c"], c["h"], c["w"])
    right = torch.rand(args.batch, c["c"], c["h"], c["w"])

    def step():
        opt.zero_grad(set_to_none=False)
        outs = net.forward(arch, params, left)
        scales, il, ir = [], left, right
        for s, d in enumerate(outs):
            if s > 0:
                il, ir = F.avg_pool2d(il, 2), F.avg_pool2d(ir, 2)
            scales.append((il, ir, d[:, 0:1], d[:, 1:2]))
        terms = ref.objective(scales)
        terms["total"].backward()
        opt.step()
        return float(terms["total"])

    for _ in range(2):
        step()
    times = []
    for _ in range(args.steps):
        t0 = time.perf_counter()
        total = step()
        times.append(time.perf_counter() - t0)
    print("torch %s, %d threads, batch %d, %dx%d, %d parameters, loss %.4f" % (
        torch.__version__, torch.get_num_threads(), args.batch, c["w"], c["h"], n_params, total))
    print("step times (s): " + " ".join("%.3f" % t for t in times))
    print("median %.3f s/step, %.2f steps/s" % (statistics.median(times), 1 / statistics.median(times)))


if __name__ == "__main__":
    sys.exit(main())
