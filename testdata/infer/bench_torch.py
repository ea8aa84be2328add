#!/usr/bin/python3
"""Time the default architecture with the embedded weights in PyTorch, for
comparison with `go test ./model -bench Estimate256x128|Forward256x128`.

Run from the repository root (Debian python3-torch 1.13.1):

    MALLOC_MMAP_THRESHOLD_=4000000000 MALLOC_TRIM_THRESHOLD_=4000000000 \\
        /usr/bin/python3 testdata/infer/bench_torch.py [weights.safetensors]

The network is the layer-list walk of testdata/model/gen_st.py in float32
(F.pad reflect + F.conv2d, F.elu, sigmoid, interpolate, cat) on 2 threads,
batch 1, 256x128, under torch.no_grad. "flip" adds the forward pass of the
mirrored image and the blend, as the Go estimator does (model.FlipBlend). Prints the median
and the fastest of the timed runs in milliseconds.

On a machine shared with other busy processes, libgomp's spinning threads
lose most of their time to each other (a 2-thread forward pass measured
0.2 to 1.4 s here); add OMP_WAIT_POLICY=passive to the environment for
figures that mean something, and say which setting was used.
"""
import json
import os
import sys
import time

import torch

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "model"))
sys.path.insert(0, HERE)
from gen_st import forward  # noqa: E402
from torch_forward import load_safetensors  # noqa: E402


def main():
    torch.set_num_threads(2)
    path = sys.argv[1] if len(sys.argv) > 1 else os.path.join(HERE, "..", "..", "model", "weights", "default.safetensors")
    meta, params = load_safetensors(path)
    with open(os.path.join(HERE, "default_arch.json")) as f:
        arch = json.load(f)
    # The layer list is that of the default Config; d_max, which trained
    # weights take from their rig, only sets the factor of the output
    # scale layers, so it is taken from the weights.
    cfg = json.loads(meta["config"])
    same = {k: v for k, v in cfg.items() if k != "d_max"} == {k: v for k, v in arch["config"].items() if k != "d_max"}
    assert same, "weights are not of the default architecture: %s" % meta["config"]
    for layer in arch["layers"]:
        if layer["op"] == "scale":
            layer["factor"] = float(cfg["d_max"])
    c = arch["input"]
    x = torch.rand((1, c["c"], c["h"], c["w"]), generator=torch.Generator().manual_seed(3))
    w = c["w"]
    col = torch.arange(w, dtype=torch.float32)

    def plain():
        return forward(arch, params, x)[0]

    def flipped():
        # model.FlipBlend: the mean, except where one prediction has no
        # match in the other view (judged with the other's disparity).
        d = forward(arch, params, x)[0][:, 0]
        m = torch.flip(forward(arch, params, torch.flip(x, [3]))[0][:, 0], [2])
        orig_blind = col - m * w < 0
        mirr_blind = col + d * w > w - 1
        mean = (d + m) / 2
        return torch.where(orig_blind & ~mirr_blind, m, torch.where(mirr_blind & ~orig_blind, d, mean))

    with torch.no_grad():
        for name, fn in (("forward", plain), ("forward+flip", flipped)):
            for _ in range(5):
                fn()
            ts = []
            for _ in range(40):
                t0 = time.perf_counter()
                fn()
                ts.append((time.perf_counter() - t0) * 1000)
            ts.sort()
            print("%-13s median %.2f ms, fastest %.2f ms (40 runs, torch %s, %d threads)" % (
                name, ts[len(ts) // 2], ts[0], torch.__version__, torch.get_num_threads()))


if __name__ == "__main__":
    main()
