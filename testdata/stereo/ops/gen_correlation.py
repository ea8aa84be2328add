#!/usr/bin/python3
"""Regenerates testdata/stereo/ops/correlation.json, the reference values of
the correlation cost volume (model/internal/cpu/correlation.go).

Source: PyTorch from Debian's python3-torch 1.13.1 (run with /usr/bin/python3,
CPU). The cost volume is written directly from its formula,

    y[n, k, y, x] = (1/c) * sum_ch left[n, ch, y, x] * right[n, ch, y, x - k]
                    for x - k >= 0, and 0 for x - k < 0,

as one shifted product per k (no library correlation routine), and both
gradients come from autograd, backpropagating a fixed random upstream
gradient "gy". Inputs are float32 values drawn from a seeded torch
generator; the arithmetic runs in float64 and the results are rounded to
float32 once, so the fixture is more accurate than the kernel under test.

Run from the repository root:

    /usr/bin/python3 testdata/stereo/ops/gen_correlation.py

Floats are written as NumPy's shortest decimal that rounds to the same
float32 (numpy 1.24.2), so parsing them back into float32 is exact.
"""
import json
import os

import numpy as np
import torch

HERE = os.path.dirname(os.path.abspath(__file__))
SOURCE = ("PyTorch %s (Debian python3-torch 1.13.1), CPU, float64 arithmetic on float32 inputs, "
          "autograd; direct formula, see gen_correlation.py" % torch.__version__)

gen = torch.Generator().manual_seed(20261202)


def randn(*shape):
    return torch.randn(*shape, generator=gen, dtype=torch.float32)


class F32List(list):
    """Values that encode writes as the shortest decimals of their float32s."""


def flat(t):
    return F32List(t.detach().to(torch.float32).reshape(-1).numpy())


def encode(v):
    if isinstance(v, F32List):
        return "[" + ",".join(str(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{" + ",".join(json.dumps(k) + ":" + encode(x) for k, x in v.items()) + "}"
    if isinstance(v, list):
        return "[" + ",".join(encode(x) for x in v) + "]"
    return json.dumps(v)


def correlation(left, right, disps):
    n, c, h, w = left.shape
    rows = []
    for k in range(disps):
        if k >= w:
            rows.append(torch.zeros(n, h, w, dtype=left.dtype))
            continue
        prod = (left[:, :, :, k:] * right[:, :, :, : w - k]).sum(dim=1) / c
        rows.append(torch.nn.functional.pad(prod, (k, 0)))
    return torch.stack(rows, dim=1)


def case(n, c, h, w, disps):
    left, right = randn(n, c, h, w), randn(n, c, h, w)
    gy = randn(n, disps, h, w)
    l64 = left.double().requires_grad_(True)
    r64 = right.double().requires_grad_(True)
    y = correlation(l64, r64, disps)
    y.backward(gy.double())
    return {
        "shape": [n, c, h, w],
        "disps": disps,
        "left": flat(left),
        "right": flat(right),
        "y": flat(y),
        "gy": flat(gy),
        "gleft": flat(l64.grad),
        "gright": flat(r64.grad),
    }


def main():
    # Single pixel; shifts past the width (disps > w); odd widths around the
    # 8-lane SIMD blocks; several items and rows; a coarse-level slice of the
    # stereo network's shape (32 channels would only make the file longer).
    shapes = [
        (1, 1, 1, 1, 1),
        (1, 1, 1, 5, 3),
        (1, 3, 2, 7, 7),
        (2, 4, 3, 9, 12),
        (1, 7, 3, 37, 9),
        (2, 5, 2, 17, 16),
        (1, 16, 2, 40, 24),
    ]
    cases = [case(*s) for s in shapes]
    path = os.path.join(HERE, "correlation.json")
    with open(path, "w") as f:
        f.write(encode({"source": SOURCE, "cases": cases}) + "\n")
    print("wrote", path, len(cases), "cases")


if __name__ == "__main__":
    main()
