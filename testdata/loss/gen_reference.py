#!/usr/bin/python3
"""Reference values for package loss from scikit-image and PyTorch.

Run with Debian's interpreter (python3-skimage 0.19.3, python3-torch 1.13.1,
python3-scipy 1.10.1, numpy 1.24.2); the python3 on PATH cannot see them:

    /usr/bin/python3 testdata/loss/gen_reference.py

Inputs are drawn with fixed numpy seeds and rounded to float32 (what the Go
kernels take); every reference is then computed in float64.

ssim_skimage.json
    skimage.metrics.structural_similarity(x, y, win_size=3,
    gaussian_weights=False, use_sample_covariance=False, data_range=1,
    full=True), with channel_axis=0 for (C, H, W) arrays. Its filter is
    scipy.ndimage.uniform_filter with the default mode 'reflect', so the
    full map, borders included, is what the Go kernel should give.

objective_torch.json
    The loss terms written below in PyTorch (float64, autograd), following
    the formulas of package loss, with warping written as an explicit
    two-tap gather; the script asserts that this gather equals
    torch.nn.functional.grid_sample(mode='bilinear', padding_mode='zeros',
    align_corners=True) on the same inputs, so the reference warp is tied to
    PyTorch's own sampler. Disparities whose sample position lies within
    2e-3 of an integer are drawn again: bilinear sampling has a kink there
    and the validity mask a jump at 0 and W-1, and the float32 and float64
    positions could fall on different sides.
"""
import json
import os

import numpy as np
import skimage
import torch
import torch.nn.functional as F
from skimage.metrics import structural_similarity

HERE = os.path.dirname(os.path.abspath(__file__))
ALPHA = 0.85
EPS_MEAN = 5e-6  # loss.SmoothnessMeanEpsilon


def f32(a):
    return np.asarray(a, dtype=np.float32)


def flat(a):
    return [float(v) for v in np.asarray(a, dtype=np.float64).ravel()]


# ---------------------------------------------------------------- SSIM


def ssim_cases():
    rng = np.random.default_rng(20041)
    cases = []
    # Random colour images, and a second image that is a noisy copy.
    x = f32(rng.uniform(0, 1, (3, 7, 9)))
    y = f32(np.clip(x + rng.normal(0, 0.1, x.shape), 0, 1))
    cases.append(("colour_noisy_copy", x, y))
    # Independent random single-channel images.
    x = f32(rng.uniform(0, 1, (1, 5, 6)))
    y = f32(rng.uniform(0, 1, (1, 5, 6)))
    cases.append(("gray_independent", x, y))
    # The smallest size skimage accepts (3x3), two channels.
    x = f32(rng.uniform(0, 1, (2, 3, 3)))
    y = f32(rng.uniform(0, 1, (2, 3, 3)))
    cases.append(("tiny_3x3", x, y))
    # A smooth ramp against a flat patch and a step edge.
    xx = np.linspace(0, 1, 8)[None, None, :].repeat(6, 1)
    yy = np.where(np.arange(8) < 4, 0.2, 0.7)[None, None, :].repeat(6, 1)
    cases.append(("ramp_vs_step", f32(xx), f32(yy)))
    out = []
    for name, x, y in cases:
        _, smap = structural_similarity(
            x.astype(np.float64), y.astype(np.float64), win_size=3,
            gaussian_weights=False, use_sample_covariance=False,
            data_range=1.0, full=True, channel_axis=0)
        assert smap.shape == x.shape
        c, h, w = x.shape
        out.append({"name": name, "c": c, "h": h, "w": w,
                    "x": flat(x), "y": flat(y), "ssim": flat(smap)})
    return out


# ------------------------------------------------------ torch objective


def warp_gather(src, disp, direction):
    """Horizontal bilinear warp with zero border: output and validity mask.

    src (N,C,H,W), disp (N,1,H,W) as a fraction of the width; the sample
    column is u = x + direction*W*disp (direction -1 rebuilds the left view).
    """
    n, c, h, w = src.shape
    xs = torch.arange(w, dtype=src.dtype).view(1, 1, 1, w)
    u = xs + direction * w * disp
    i0 = torch.floor(u)
    a = u - i0
    i0l = i0.long()
    i1l = i0l + 1
    ok0 = ((i0l >= 0) & (i0l <= w - 1)).to(src.dtype)
    ok1 = ((i1l >= 0) & (i1l <= w - 1)).to(src.dtype)
    g0 = torch.gather(src, 3, i0l.clamp(0, w - 1).expand(n, c, h, w))
    g1 = torch.gather(src, 3, i1l.clamp(0, w - 1).expand(n, c, h, w))
    out = (1 - a) * g0 * ok0 + a * g1 * ok1
    mask = ((u >= 0) & (u <= w - 1)).to(src.dtype).detach()
    return out, mask


def warp_grid_sample(src, disp, direction):
    n, c, h, w = src.shape
    xs = torch.arange(w, dtype=src.dtype).view(1, 1, w).expand(n, h, w)
    ys = torch.arange(h, dtype=src.dtype).view(1, h, 1).expand(n, h, w)
    u = xs + direction * w * disp[:, 0]
    gx = 2 * u / (w - 1) - 1
    gy = 2 * ys / (h - 1) - 1 if h > 1 else torch.zeros_like(ys)
    grid = torch.stack([gx, gy], dim=-1)
    return F.grid_sample(src, grid, mode="bilinear", padding_mode="zeros",
                         align_corners=True)


def ssim_map(x, y):
    c1, c2 = 0.01 ** 2, 0.03 ** 2
    xp = F.pad(x, (1, 1, 1, 1), mode="replicate")
    yp = F.pad(y, (1, 1, 1, 1), mode="replicate")

    def box(t):
        return F.avg_pool2d(t, 3, stride=1)
    mx, my = box(xp), box(yp)
    sxx = box(xp * xp) - mx * mx
    syy = box(yp * yp) - my * my
    sxy = box(xp * yp) - mx * my
    return ((2 * mx * my + c1) * (2 * sxy + c2)) / (
        (mx * mx + my * my + c1) * (sxx + syy + c2))


def appearance(target, recon, mask, alpha=ALPHA):
    d = torch.clamp((1 - ssim_map(target, recon)) / 2, 0, 1)
    e = alpha * d + (1 - alpha) * (target - recon).abs()
    e = e.mean(1, keepdim=True)
    if mask is None:
        return e.mean()
    return (e * mask).sum() / mask.sum()


def smoothness(disp, img, normalize=True):
    if normalize:
        mean = disp.mean(dim=(2, 3), keepdim=True)
        disp = disp / (mean + EPS_MEAN)
    dx = (disp[:, :, :, 1:] - disp[:, :, :, :-1]).abs()
    dy = (disp[:, :, 1:, :] - disp[:, :, :-1, :]).abs()
    ix = (img[:, :, :, 1:] - img[:, :, :, :-1]).abs().mean(1, keepdim=True)
    iy = (img[:, :, 1:, :] - img[:, :, :-1, :]).abs().mean(1, keepdim=True)
    return (dx * torch.exp(-ix)).mean() + (dy * torch.exp(-iy)).mean()


def consistency(dl, dr):
    total = 0
    for own, other, direction in ((dl, dr, -1), (dr, dl, +1)):
        rec, mask = warp_gather(other, own, direction)
        total = total + ((own - rec).abs() * mask).sum() / mask.sum()
    return total


def objective(scales, wa=1.0, ws=0.1, wc=1.0):
    terms = {"appearance": 0.0, "smoothness": 0.0, "consistency": 0.0}
    k = len(scales)
    for s, (il, ir, dl, dr) in enumerate(scales):
        recl, ml = warp_gather(ir, dl, -1)
        recr, mr = warp_gather(il, dr, +1)
        terms["appearance"] = terms["appearance"] + wa / k * (
            appearance(il, recl, ml) + appearance(ir, recr, mr))
        terms["smoothness"] = terms["smoothness"] + ws / k / 2 ** s * (
            smoothness(dl, il) + smoothness(dr, ir))
        terms["consistency"] = terms["consistency"] + wc / k * consistency(dl, dr)
    terms["total"] = terms["appearance"] + terms["smoothness"] + terms["consistency"]
    return terms


def draw_disp(rng, n, h, w, direction, lo, hi):
    """Disparities whose sample position keeps 2e-3 away from integers."""
    d = f32(rng.uniform(lo, hi, (n, 1, h, w)))
    xs = np.arange(w)[None, None, None, :]
    while True:
        u = xs + direction * w * d.astype(np.float64)
        bad = np.abs(u - np.round(u)) < 2e-3
        if not bad.any():
            return d
        d[bad] = f32(rng.uniform(lo, hi, int(bad.sum())))


def smooth_image(rng, n, c, h, w):
    """A random image with some spatial structure (box-blurred noise)."""
    a = rng.uniform(0, 1, (n, c, h + 2, w + 2))
    a = (a[:, :, :-2, :-2] + a[:, :, 1:-1, 1:-1] + a[:, :, 2:, 2:]) / 3
    return f32(a)


def t64(a, grad=False):
    return torch.tensor(np.asarray(a, dtype=np.float64), requires_grad=grad)


def torch_cases():
    rng = np.random.default_rng(20260)
    shapes = [(2, 3, 9, 16), (2, 3, 5, 8)]
    scales_np = []
    for n, c, h, w in shapes:
        il = smooth_image(rng, n, c, h, w)
        ir = f32(np.clip(il + rng.normal(0, 0.05, il.shape), 0, 1))
        dl = draw_disp(rng, n, h, w, -1, 0.02, 0.2)
        dr = draw_disp(rng, n, h, w, +1, 0.02, 0.2)
        scales_np.append((il, ir, dl, dr))

    # The reference warp is PyTorch's own sampler.
    for il, ir, dl, dr in scales_np:
        for src, d, direction in ((ir, dl, -1), (il, dr, +1)):
            a, _ = warp_gather(t64(src), t64(d), direction)
            b = warp_grid_sample(t64(src), t64(d), direction)
            assert torch.allclose(a, b, atol=1e-12), (a - b).abs().max()

    out = {"scales": []}
    tensors = []
    for il, ir, dl, dr in scales_np:
        n, c, h, w = il.shape
        out["scales"].append({"n": n, "c": c, "h": h, "w": w,
                              "left": flat(il), "right": flat(ir),
                              "dispL": flat(dl), "dispR": flat(dr)})
        tensors.append((t64(il), t64(ir), t64(dl, True), t64(dr, True)))
    terms = objective(tensors)
    terms["total"].backward()
    out["terms"] = {k: float(v) for k, v in terms.items()}
    for sc, (_, _, dl, dr) in zip(out["scales"], tensors):
        sc["gradDispL"] = flat(dl.grad)
        sc["gradDispR"] = flat(dr.grad)

    # Single terms on scale 0, each with its own gradients.
    il, ir, dl, dr = scales_np[0]
    recl, ml = warp_gather(t64(ir), t64(dl), -1)
    target, recon = t64(il, True), t64(f32(recl.detach().numpy()), True)
    a = appearance(target, recon, ml)
    a.backward()
    out["appearance"] = {"recon": flat(recon.detach()), "mask": flat(ml),
                         "value": float(a), "gradTarget": flat(target.grad),
                         "gradRecon": flat(recon.grad)}
    out["smoothness"] = {}
    for norm in (True, False):
        d = t64(dl, True)
        v = smoothness(d, t64(il), normalize=norm)
        v.backward()
        out["smoothness"]["normalized" if norm else "raw"] = {
            "value": float(v), "grad": flat(d.grad)}
    d1, d2 = t64(dl, True), t64(dr, True)
    v = consistency(d1, d2)
    v.backward()
    out["consistency"] = {"value": float(v), "gradL": flat(d1.grad),
                          "gradR": flat(d2.grad)}
    return out


def main():
    ssim = {"source": "skimage.metrics.structural_similarity, scikit-image %s "
                      "(Debian python3-skimage 0.19.3)" % skimage.__version__,
            "cases": ssim_cases()}
    with open(os.path.join(HERE, "ssim_skimage.json"), "w") as f:
        json.dump(ssim, f)
    obj = torch_cases()
    obj["source"] = ("PyTorch %s float64 autograd (Debian python3-torch 1.13.1), "
                     "formulas of package loss" % torch.__version__)
    with open(os.path.join(HERE, "objective_torch.json"), "w") as f:
        json.dump(obj, f)


if __name__ == "__main__":
    main()
