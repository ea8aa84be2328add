#!/usr/bin/python3
"""Flip post-processing reference for `go test ./model -run TestFlipBlendTorch`.

Run from the repository root with Debian's interpreter (python3-torch
1.13.1, numpy 1.24.2):

    /usr/bin/python3 testdata/model/gen_flipblend.py

Writes flipblend_torch.json: H x W maps orig (the left disparity predicted on
an image) and mirrored (channel 0 predicted on the mirrored image, mirrored
back), fractions of the width, drawn uniformly in [0, 0.3] with a fixed
numpy seed and rounded to float32, and the blend that model.FlipBlend must
give, bit for bit.

Support comes from PyTorch's sampler, not from our formula: a prediction
has support at a pixel when torch.nn.functional.grid_sample (bilinear,
padding_mode='zeros', align_corners=True, float64) of an all-ones image at
the pixel's match gives full weight, i.e. the match lies inside the other
view. Each prediction's match is found with the other prediction's
disparity (see model.FlipBlend): orig's pixel x looks at x - mirrored(x)*W
in the original frame; the mirrored prediction lives in the mirrored image,
so its support is computed there, at x' - flip(orig)(x')*W, and flipped
back. A pixel where exactly one prediction lacks support takes the other;
otherwise it takes (orig + mirrored)/2 in float32. Values whose match lies
within 1e-3 px of the image's edge are drawn again, so that float32 (Go) and
float64 (here) positions cannot fall on different sides of it. The last row
is all zeros (matches exactly on the edge columns, which have support).
"""
import json
import os

import numpy as np
import torch
import torch.nn.functional as F

HERE = os.path.dirname(os.path.abspath(__file__))
H, W = 6, 40


def support(d):
    """Where an H x W disparity map d (fractions of W) has its match inside the
    image: grid_sample of ones at x - d*W gives weight 1."""
    h, w = d.shape
    xs = torch.arange(w, dtype=torch.float64).view(1, w).expand(h, w)
    ys = torch.arange(h, dtype=torch.float64).view(h, 1).expand(h, w)
    u = xs - d * w
    grid = torch.stack([2 * u / (w - 1) - 1, 2 * ys / (h - 1) - 1], dim=-1).unsqueeze(0)
    ones = torch.ones((1, 1, h, w), dtype=torch.float64)
    s = F.grid_sample(ones, grid, mode="bilinear", padding_mode="zeros", align_corners=True)[0, 0]
    return s >= 1 - 1e-12


def draw(rng):
    x = np.arange(W, dtype=np.float64)
    orig = rng.uniform(0, 0.3, (H, W)).astype(np.float32)
    mirr = rng.uniform(0, 0.3, (H, W)).astype(np.float32)
    for _ in range(100):
        near_o = np.abs(x - mirr.astype(np.float64) * W) < 1e-3
        near_m = np.abs(x + orig.astype(np.float64) * W - (W - 1)) < 1e-3
        if not (near_o.any() or near_m.any()):
            break
        mirr[near_o] = rng.uniform(0, 0.3, near_o.sum()).astype(np.float32)
        orig[near_m] = rng.uniform(0, 0.3, near_m.sum()).astype(np.float32)
    orig[-1], mirr[-1] = 0, 0
    return orig, mirr


def main():
    rng = np.random.default_rng(20261202)
    orig, mirr = draw(rng)
    o64 = torch.from_numpy(orig.astype(np.float64))
    m64 = torch.from_numpy(mirr.astype(np.float64))
    orig_ok = support(m64)
    mirr_ok = torch.flip(support(torch.flip(o64, dims=[1])), dims=[1])
    o32, m32 = torch.from_numpy(orig), torch.from_numpy(mirr)
    mean = (o32 + m32) / 2
    blend = torch.where(~orig_ok & mirr_ok, m32, torch.where(~mirr_ok & orig_ok, o32, mean))
    case = np.where((~orig_ok & mirr_ok).numpy(), 1, np.where((~mirr_ok & orig_ok).numpy(), 2, 0))
    out = {
        "source": "torch.nn.functional.grid_sample support (bilinear, zeros, align_corners=True) in float64; blend in float32",
        "torch": torch.__version__,
        "numpy": np.__version__,
        "h": H,
        "w": W,
        "orig": [float(v) for v in orig.ravel()],
        "mirrored": [float(v) for v in mirr.ravel()],
        "blend": [float(v) for v in blend.numpy().ravel()],
        "case": case.ravel().tolist(),
    }
    tmp = os.path.join(HERE, "flipblend_torch.json.tmp")
    with open(tmp, "w") as f:
        json.dump(out, f, separators=(",", ":"))
        f.write("\n")
    os.replace(tmp, os.path.join(HERE, "flipblend_torch.json"))
    print("pixels: %d mirrored only, %d orig only, %d mean" % ((case == 1).sum(), (case == 2).sum(), (case == 0).sum()))
    print("torch", torch.__version__, "numpy", np.__version__)


if __name__ == "__main__":
    main()
