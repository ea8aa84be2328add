#!/usr/bin/python3
"""Regenerates the reference fixtures for the CPU engine's operators
(model/internal/cpu: upsample*, concat*, activation*, bias*,
elementwise*).

Source: PyTorch from Debian's python3-torch 1.13.1 (run with /usr/bin/python3,
CPU, float32). Every forward value comes from the torch function named in
"op"; every gradient comes from autograd, backpropagating a fixed random
upstream gradient "gy" through that function.

Run from the repository root:

    /usr/bin/python3 testdata/cpu/ops/gen.py

It rewrites testdata/cpu/ops/*.json. Inputs are drawn from a seeded torch
generator, so the files are reproducible with the same torch version.
Floats are written as the shortest decimal of the float64 that equals the
float32 value, so parsing them back into float32 is exact.
"""
import json
import os

import torch
import torch.nn.functional as F

HERE = os.path.dirname(os.path.abspath(__file__))
SOURCE = "PyTorch %s (Debian python3-torch 1.13.1), CPU float32, autograd" % torch.__version__

gen = torch.Generator().manual_seed(20261201)


def randn(*shape, scale=1.0):
    return torch.randn(*shape, generator=gen, dtype=torch.float32) * scale


def flat(t):
    return [float(v) for v in t.detach().reshape(-1).tolist()]


def run(fn, inputs):
    """Applies fn to leaf copies of inputs, backpropagates a random upstream
    gradient and returns (y, gy, [grad of each input])."""
    leaves = [x.clone().requires_grad_(True) for x in inputs]
    y = fn(*leaves)
    gy = randn(*y.shape)
    y.backward(gy)
    return y, gy, [l.grad for l in leaves]


def write(name, cases):
    path = os.path.join(HERE, name)
    with open(path, "w") as f:
        json.dump({"source": SOURCE, "cases": cases}, f, separators=(",", ":"))
        f.write("\n")
    print("wrote", path, len(cases), "cases")


def upsample():
    cases = []
    shapes = [(1, 1, 1, 1), (1, 1, 1, 4), (1, 1, 3, 1), (2, 3, 4, 5), (1, 2, 3, 21), (2, 1, 4, 40),
              (1, 2, 7, 3), (3, 1, 2, 9), (1, 1, 5, 6)]
    for mode in ("bilinear", "nearest"):
        for shape in shapes:
            x = randn(*shape)
            if mode == "bilinear":
                fn = lambda t: F.interpolate(t, scale_factor=2, mode="bilinear", align_corners=False)
            else:
                fn = lambda t: F.interpolate(t, scale_factor=2, mode="nearest")
            y, gy, (gx,) = run(fn, [x])
            cases.append({"op": "interpolate_" + mode, "shape": list(shape),
                          "x": flat(x), "y": flat(y), "gy": flat(gy), "gx": flat(gx)})
    write("upsample.json", cases)


def concat():
    cases = []
    for n, h, w, chans in [(2, 3, 5, [2, 3]), (1, 4, 4, [1, 1, 4]), (3, 2, 1, [3])]:
        xs = [randn(n, c, h, w) for c in chans]
        y, gy, gxs = run(lambda *ts: torch.cat(ts, dim=1), xs)
        cases.append({"op": "cat_dim1", "shape": [n, sum(chans), h, w], "chans": chans,
                      "xs": [flat(x) for x in xs], "y": flat(y), "gy": flat(gy),
                      "gxs": [flat(g) for g in gxs]})
    write("concat.json", cases)


def activation():
    special = torch.tensor([0.0, -0.0, 1e-8, -1e-8, 1e-3, -1e-3, 0.5, -0.5, -0.34, -0.35,
                            -1.0, -3.0, -10.0, -17.0, -20.0, -30.0, -86.0, -87.5,
                            -88.0, -90.0, -100.0, 3.0, 10.0, 16.0, 17.0, 18.0, 20.0,
                            30.0, 88.0, 100.0], dtype=torch.float32).reshape(1, 1, 1, -1)
    inputs = [("random", randn(2, 3, 4, 5, scale=3.0)), ("special", special)]
    cases = []
    for label, x in inputs:
        for op, fn, params in [
            ("elu", lambda t: F.elu(t, alpha=1.0), {}),
            ("sigmoid", torch.sigmoid, {}),
            ("scaled_sigmoid", lambda t: 0.3 * torch.sigmoid(t), {"scale": 0.3}),
        ]:
            y, gy, (gx,) = run(fn, [x])
            case = {"op": op, "input": label, "shape": list(x.shape),
                    "x": flat(x), "y": flat(y), "gy": flat(gy), "gx": flat(gx)}
            case.update(params)
            cases.append(case)
    write("activation.json", cases)


def bias():
    cases = []
    for shape in [(2, 3, 4, 5), (1, 4, 1, 7), (3, 2, 6, 1), (1, 2, 24, 30)]:
        x = randn(*shape)
        b = randn(shape[1])
        y, gy, (gx, gb) = run(lambda t, bb: t + bb.reshape(1, -1, 1, 1), [x, b])
        cases.append({"op": "add_broadcast_bias", "shape": list(shape), "x": flat(x),
                      "bias": flat(b), "y": flat(y), "gy": flat(gy), "gx": flat(gx),
                      "gbias": flat(gb)})
    write("bias.json", cases)


def elementwise():
    cases = []
    shape = (2, 3, 4, 5)
    a, b = randn(*shape), randn(*shape)
    y, gy, (ga, gb) = run(lambda s, t: s + t, [a, b])
    cases.append({"op": "add", "shape": list(shape), "a": flat(a), "b": flat(b),
                  "y": flat(y), "gy": flat(gy), "ga": flat(ga), "gb": flat(gb)})
    x = randn(*shape)
    y, gy, (gx,) = run(lambda t: 0.75 * t - 1.5, [x])
    cases.append({"op": "mul_add", "shape": list(shape), "scale": 0.75, "shift": -1.5,
                  "x": flat(x), "y": flat(y), "gy": flat(gy), "gx": flat(gx)})
    write("elementwise.json", cases)


if __name__ == "__main__":
    torch.set_num_threads(1)
    upsample()
    concat()
    activation()
    bias()
    elementwise()
