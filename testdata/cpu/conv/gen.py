#!/usr/bin/python3
"""Writes the convolution fixtures that model/internal/cpu tests compare with.

Reference: Debian python3-torch 1.13.1 (torch.nn.functional.conv2d, with
torch.nn.functional.pad(mode="reflect") for reflection padding, gradients by
torch.autograd.grad). Inputs are float32 values from a seeded numpy 1.24.2
generator; torch computes in float64 and results are stored as float32.

Run from the repository root or anywhere:  /usr/bin/python3 testdata/cpu/conv/gen.py

Output: cases.json (one entry per case: layer, shapes, file name) and one
little-endian float32 file per case holding, in order, x, weight, bias, dy,
y, dx, dweight, dbias.
"""
import json
import os

import numpy as np
import torch
import torch.nn.functional as F

HERE = os.path.dirname(os.path.abspath(__file__))

# name, N, Cin, H, W, Cout, kernel, stride, dilation, pad, padding
CASES = [
    ("k3s1zero", 2, 3, 9, 11, 4, 3, 1, 1, 1, "zero"),
    ("k3s2zero", 2, 5, 10, 13, 6, 3, 2, 1, 1, "zero"),
    ("k3s1reflect", 2, 4, 8, 12, 5, 3, 1, 1, 1, "reflect"),
    ("k3s2reflect", 3, 3, 11, 9, 8, 3, 2, 1, 1, "reflect"),
    ("k3d2zero", 2, 3, 12, 10, 5, 3, 1, 2, 2, "zero"),
    ("k3d2reflect", 2, 4, 9, 11, 3, 3, 1, 2, 2, "reflect"),
    ("k3s2d2reflect", 2, 3, 12, 14, 4, 3, 2, 2, 2, "reflect"),
    ("k3valid", 2, 3, 7, 8, 5, 3, 1, 1, 0, "zero"),
    ("k1s1", 2, 16, 7, 10, 9, 1, 1, 1, 0, "zero"),
    ("k1s2", 2, 6, 9, 8, 7, 1, 2, 1, 0, "zero"),
    ("k1pad1reflect", 2, 5, 6, 7, 4, 1, 1, 1, 1, "reflect"),
    ("k3s1zeroLarge", 2, 32, 20, 37, 20, 3, 1, 1, 1, "zero"),
    ("k3s2reflectLarge", 1, 40, 23, 30, 37, 3, 2, 1, 1, "reflect"),
]


def main():
    rng = np.random.default_rng(20261201)
    out = []
    for name, n, cin, h, w, cout, k, s, d, pad, mode in CASES:
        x = rng.uniform(-1, 1, (n, cin, h, w)).astype(np.float32)
        wt = (rng.uniform(-1, 1, (cout, cin, k, k)) / np.sqrt(cin * k * k)).astype(np.float32)
        b = rng.uniform(-1, 1, (cout,)).astype(np.float32)
        tx = torch.tensor(x, dtype=torch.float64, requires_grad=True)
        tw = torch.tensor(wt, dtype=torch.float64, requires_grad=True)
        tb = torch.tensor(b, dtype=torch.float64, requires_grad=True)
        if mode == "reflect":
            y = F.conv2d(F.pad(tx, (pad, pad, pad, pad), mode="reflect"), tw, tb, stride=s, dilation=d)
        else:
            y = F.conv2d(tx, tw, tb, stride=s, padding=pad, dilation=d)
        dy = rng.uniform(-1, 1, tuple(y.shape)).astype(np.float32)
        gx, gw, gb = torch.autograd.grad(y, [tx, tw, tb], torch.tensor(dy, dtype=torch.float64))
        arrays = [x, wt, b, dy, y.detach().numpy(), gx.numpy(), gw.numpy(), gb.numpy()]
        fname = name + ".f32"
        with open(os.path.join(HERE, fname), "wb") as f:
            for a in arrays:
                f.write(np.ascontiguousarray(a, dtype="<f4").tobytes())
        out.append({
            "name": name, "file": fname,
            "n": n, "inC": cin, "h": h, "w": w, "outC": cout,
            "kernel": k, "stride": s, "dilation": d, "pad": pad, "padding": mode,
            "outH": int(y.shape[2]), "outW": int(y.shape[3]),
        })
    with open(os.path.join(HERE, "cases.json"), "w") as f:
        json.dump({"source": "torch " + torch.__version__ + ", numpy " + np.__version__, "cases": out}, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
