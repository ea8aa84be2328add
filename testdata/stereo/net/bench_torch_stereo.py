#!/usr/bin/python3
"""Time the stereo network with the embedded stereo weights in PyTorch, for
comparison with `go test ./model -bench EstimatePair`.

Run from the repository root (Debian python3-torch 1.13.1):

    MALLOC_MMAP_THRESHOLD_=4000000000 MALLOC_TRIM_THRESHOLD_=4000000000 OMP_WAIT_POLICY=PASSIVE \\
        /usr/bin/python3 testdata/stereo/net/bench_torch_stereo.py [weights.safetensors]

The network is the layer-list walk of torch_stereo.py in float32 on 2
threads, batch 1 (the pair and its mirrored copy), at the network sizes of a
256x128 and a 640x480 pair (256x128 and 384x288, default_arch_*.json). The
classical matcher has no PyTorch counterpart: its layers read zeros, so the
figures are the network alone; Go's EstimatePair includes the matcher and
the resampling (compare with `go test ./sgm -bench .` for the matcher).
Prints the median and the fastest of the timed runs in milliseconds.
"""
import json
import os
import sys
import time

import torch

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
sys.path.insert(0, os.path.join(HERE, "..", "..", "infer"))
from torch_forward import load_safetensors  # noqa: E402
from torch_stereo import forward  # noqa: E402


def main():
    torch.set_num_threads(2)
    path = sys.argv[1] if len(sys.argv) > 1 else os.path.join(HERE, "..", "..", "..", "model", "weights", "stereo.safetensors")
    meta, params = load_safetensors(path)
    cfg = json.loads(meta["config"])
    for w, h in ((256, 128), (384, 288)):
        with open(os.path.join(HERE, "default_arch_%dx%d.json" % (w, h))) as f:
            arch = json.load(f)
        want = {k: v for k, v in arch["config"].items() if k not in ("width", "height", "d_max")}
        got = {k: v for k, v in cfg.items() if k not in ("width", "height", "d_max")}
        assert want == got, "weights are not of the default stereo architecture: %s" % meta["config"]
        g = torch.Generator().manual_seed(3)
        pair = torch.rand((2, 3, h, w), generator=g)
        matches = [torch.zeros((2, l["out"]["c"], l["out"]["h"], l["out"]["w"])) for l in arch["layers"] if l["op"] == "match"]
        with torch.no_grad():
            for _ in range(3):
                forward(arch, params, pair, matches)
            ts = []
            for _ in range(20):
                t0 = time.perf_counter()
                forward(arch, params, pair, matches)
                ts.append((time.perf_counter() - t0) * 1000)
        ts.sort()
        print("stereo network %dx%d: median %.2f ms, fastest %.2f ms (20 runs, torch %s, %d threads)" % (
            w, h, ts[len(ts) // 2], ts[0], torch.__version__, torch.get_num_threads()))


if __name__ == "__main__":
    main()
