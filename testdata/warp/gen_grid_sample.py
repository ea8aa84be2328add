#!/usr/bin/python3
"""Reference values for package warp from PyTorch's grid_sample.

Run with Debian's interpreter (python3-torch 1.13.1, numpy 1.24.2):

    /usr/bin/python3 testdata/warp/gen_grid_sample.py

For each case it draws random source images, disparities (fractions of the
width) and an upstream gradient with a fixed numpy seed, rounds them to
float32 (what the Go kernel takes), and evaluates in float64

    u   = x + dir * W * d                 (dir = -1 rebuilds left, +1 right)
    out = grid_sample(src, grid, mode='bilinear', padding_mode=P,
                      align_corners=True)
    L   = sum(out * gout)

with grid = (2u/(W-1) - 1, 2y/(H-1) - 1), P in {'zeros', 'border'}; then
dL/dsrc and dL/dd by autograd (the disparity gradient flows through the
grid). Heights have H-1 a power of two (or H = 1), so the row coordinate
round-trips exactly and only the horizontal sampling is exercised.
Disparities whose sample position u lies within 2e-3 of an integer are drawn
again: bilinear sampling has a kink there and the float32 and float64
positions could fall on different sides.

Output: grid_sample.json (the cases, and for each the order and length of the
arrays) and one little-endian float64 file NAME.f64 per case holding the
arrays back to back: src (N*C*H*W), disp (N*H*W), gout (N*C*H*W),
out (N*C*H*W), gsrc (N*C*H*W), gdisp (N*H*W).
"""
import os
import subprocess
import sys

import numpy as np
import torch
import torch.nn.functional as F

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, ".."))
from jsonfile import write_json  # noqa: E402
SEED = 20261201

# name, N, C, H, W, direction, padding mode, disparity range in pixels (lo, hi)
CASES = [
    ("zeros_left_n2c3", 2, 3, 5, 17, -1, "zeros", (-3.0, 9.0)),
    ("border_left_n2c3", 2, 3, 5, 17, -1, "border", (-3.0, 9.0)),
    ("zeros_right_n3c1", 3, 1, 3, 33, +1, "zeros", (-2.0, 12.0)),
    ("border_right_n3c1", 3, 1, 3, 33, +1, "border", (-2.0, 12.0)),
    ("zeros_left_n1c3_h1", 1, 3, 1, 40, -1, "zeros", (0.0, 15.0)),
    ("border_right_n2c2", 2, 2, 9, 64, +1, "border", (-4.0, 20.0)),
    ("zeros_right_n2c3", 2, 3, 9, 65, +1, "zeros", (-4.0, 20.0)),
    # Kinks on purpose, to pin the one-sided derivatives and the edges: u is
    # exact in float32 and float64 and the grid round-trips exactly (W-1 is
    # a power of two). W = 17 with d = 0 puts every u on an integer; W = 2
    # with the shifts KINK_SHIFTS reaches u = -1, 0, 1, 2 and beyond.
    ("zeros_left_kinks", 1, 2, 3, 17, -1, "zeros", "zero"),
    ("border_left_kinks", 1, 2, 3, 17, -1, "border", "zero"),
    ("zeros_right_kinks", 1, 2, 3, 17, +1, "zeros", "zero"),
    ("border_right_kinks", 1, 2, 3, 17, +1, "border", "zero"),
    ("zeros_left_w2_kinks", 2, 1, 3, 2, -1, "zeros", "shifts"),
    ("border_left_w2_kinks", 2, 1, 3, 2, -1, "border", "shifts"),
    ("zeros_right_w2_kinks", 2, 1, 3, 2, +1, "zeros", "shifts"),
    ("border_right_w2_kinks", 2, 1, 3, 2, +1, "border", "shifts"),
]

# Shifts d*W in pixels for the W = 2 kink cases (d = shift/2 is exact in
# float32); the integer ones are kinks, the halves sit between two taps.
KINK_SHIFTS = np.array([-2.0, -1.0, -0.5, 0.0, 0.5, 1.0, 2.0, 3.0])


def draw_disparity(rng, n, h, w, direction, lo, hi):
    d = (rng.uniform(lo, hi, size=(n, h, w)) / w).astype(np.float32)
    x = np.arange(w, dtype=np.float64)[None, None, :]
    while True:
        u = x + direction * w * d.astype(np.float64)
        bad = np.abs(u - np.round(u)) < 2e-3
        if not bad.any():
            return d
        d[bad] = (rng.uniform(lo, hi, size=int(bad.sum())) / w).astype(np.float32)


def run_case(rng, name, n, c, h, w, direction, padding, drange):
    src = rng.uniform(0.0, 1.0, size=(n, c, h, w)).astype(np.float32)
    if drange == "zero":
        disp = np.zeros((n, h, w), dtype=np.float32)
    elif drange == "shifts":
        disp = (rng.choice(KINK_SHIFTS, size=(n, h, w)) / w).astype(np.float32)
    else:
        disp = draw_disparity(rng, n, h, w, direction, *drange)
    gout = rng.uniform(-1.0, 1.0, size=(n, c, h, w)).astype(np.float32)

    s = torch.tensor(src, dtype=torch.float64, requires_grad=True)
    d = torch.tensor(disp, dtype=torch.float64, requires_grad=True)
    xs = torch.arange(w, dtype=torch.float64).view(1, 1, w)
    u = xs + direction * w * d
    gx = u * (2.0 / (w - 1)) - 1.0
    if h > 1:
        ys = torch.arange(h, dtype=torch.float64) * (2.0 / (h - 1)) - 1.0
    else:
        ys = torch.full((1,), -1.0, dtype=torch.float64)
    gy = ys.view(1, h, 1).expand(n, h, w)
    grid = torch.stack([gx, gy], dim=-1)
    out = F.grid_sample(s, grid, mode="bilinear", padding_mode=padding, align_corners=True)
    (out * torch.tensor(gout, dtype=torch.float64)).sum().backward()

    arrays = [
        ("src", src.astype(np.float64)),
        ("disp", disp.astype(np.float64)),
        ("gout", gout.astype(np.float64)),
        ("out", out.detach().numpy()),
        ("gsrc", s.grad.numpy()),
        ("gdisp", d.grad.numpy()),
    ]
    path = os.path.join(HERE, name + ".f64")
    with open(path + ".tmp", "wb") as f:
        for _, a in arrays:
            f.write(np.ascontiguousarray(a, dtype="<f8").tobytes())
        f.flush()
        os.fsync(f.fileno())
    os.replace(path + ".tmp", path)
    return {
        "name": name, "file": name + ".f64",
        "n": n, "c": c, "h": h, "w": w,
        "direction": "RebuildLeft" if direction < 0 else "RebuildRight",
        "padding_mode": padding,
        "arrays": [{"name": k, "len": int(a.size)} for k, a in arrays],
    }


def debian_version(pkg):
    try:
        return subprocess.run(["dpkg-query", "-W", "-f=${Version}", pkg],
                              capture_output=True, text=True, check=True).stdout
    except (OSError, subprocess.CalledProcessError):
        return "unknown"


def main():
    rng = np.random.RandomState(SEED)
    cases = [run_case(rng, *c) for c in CASES]
    meta = {
        "source": "torch.nn.functional.grid_sample, mode='bilinear', align_corners=True, float64",
        "torch": torch.__version__,
        "debian_python3_torch": debian_version("python3-torch"),
        "numpy": np.__version__,
        "seed": SEED,
        "cases": cases,
    }
    write_json(os.path.join(HERE, "grid_sample.json"), meta)
    print("wrote %d cases with torch %s" % (len(cases), torch.__version__))


if __name__ == "__main__":
    main()
