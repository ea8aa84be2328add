#!/usr/bin/python3
"""Downsampling reference for `go test ./loss -run TestDownsample2Torch`.

Run from the repository root with Debian's interpreter (python3-torch
1.13.1, numpy 1.24.2):

    /usr/bin/python3 testdata/loss/gen_downsample.py

Writes downsample_torch.json: an input of shape (N, C, H, W) = (2, 3, 7, 10)
(an odd height, to check that its last row is dropped) drawn uniformly in
[0, 1] with a fixed numpy seed and rounded to float32, and
torch.nn.functional.avg_pool2d(x, kernel_size=2, stride=2) (ceil_mode False:
an odd last row or column is dropped) on it in float32 and in float64.
"""
import json
import os

import numpy as np
import torch
import torch.nn.functional as F

HERE = os.path.dirname(os.path.abspath(__file__))
SHAPE = (2, 3, 7, 10)


def main():
    rng = np.random.default_rng(20261202)
    x = rng.uniform(0, 1, SHAPE).astype(np.float32)
    t = torch.from_numpy(x)
    p32 = F.avg_pool2d(t, kernel_size=2, stride=2)
    p64 = F.avg_pool2d(t.double(), kernel_size=2, stride=2)
    out = {
        "source": "torch.nn.functional.avg_pool2d(x, kernel_size=2, stride=2)",
        "torch": torch.__version__,
        "numpy": np.__version__,
        "shape": list(SHAPE),
        "out_shape": list(p32.shape),
        "input": [float(v) for v in x.ravel()],
        "float32": [float(v) for v in p32.numpy().ravel()],
        "float64": [float(v) for v in p64.numpy().ravel()],
    }
    tmp = os.path.join(HERE, "downsample_torch.json.tmp")
    with open(tmp, "w") as f:
        json.dump(out, f, separators=(",", ":"))
        f.write("\n")
    os.replace(tmp, os.path.join(HERE, "downsample_torch.json"))
    print("out", tuple(p32.shape), "max |f32 - f64| %.3g" % (p32.double() - p64).abs().max().item())
    print("torch", torch.__version__, "numpy", np.__version__)


if __name__ == "__main__":
    main()
