#!/usr/bin/python3
"""PyTorch walk of the stereo network (architecture parallax-stereo) for
`go test ./model -run TestStereoTorchWalk`.

Walks the layer list arch.json (written by Go) with torch operations in
float64, from the weights file weights.safetensors (read by the safetensors
specification with the reader of testdata/infer/torch_forward.py) and the
pair input.bin (float32: the left image, then the right one, 3x64x96 each).
The classical matcher (OpMatch, package sgm) has no PyTorch counterpart:
each match layer's output is read from match.bin, as Go computed it, in
layer order. Writes torch_out.bin: disp0 … disp3, each (1, 2, H, W) with
channel 0 d_L and channel 1 d_R mirrored back, float32 little-endian.

Run from the repository root with Debian's interpreter (python3-torch
1.13.1, python3-numpy 1.24.2):

    go test ./model -run TestStereoTorchWalk -update-stereo-torch   # inputs
    /usr/bin/python3 testdata/stereo/net/torch_stereo.py            # fixture
"""
import json
import os
import sys

import numpy as np
import torch
import torch.nn.functional as F

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "..", "infer"))
sys.path.insert(0, os.path.join(HERE, "..", "..", "model"))
from torch_forward import load_safetensors  # noqa: E402
from gen_st import forward as walk  # noqa: E402  the layer-list walker of the model fixtures


def correlation(a, b, disps):
    """dst[:, k, y, x] = mean over channels of a[:, :, y, x]·b[:, :, y, x−k], 0 where x−k < 0."""
    n, c, h, w = a.shape
    out = torch.zeros((n, disps, h, w), dtype=a.dtype)
    for k in range(min(disps, w)):
        out[:, k, :, k:] = (a[:, :, :, k:] * b[:, :, :, :w - k]).sum(1) / c
    return out


def warp_left(src, d):
    """src sampled at u = x − d·W along each row, bilinear, zeros outside."""
    n, c, h, w = src.shape
    xs = torch.arange(w, dtype=src.dtype).view(1, 1, w).expand(n, h, w)
    ys = torch.arange(h, dtype=src.dtype).view(1, h, 1).expand(n, h, w)
    u = xs - d[:, 0] * w
    grid = torch.stack([2 * u / (w - 1) - 1, 2 * ys / (h - 1) - 1], dim=-1)
    return F.grid_sample(src, grid, mode="bilinear", padding_mode="zeros", align_corners=True)


def pair_view(x, view):
    n = x.shape[0] // 2
    a, b = x[:n], x[n:]
    if view == "right":
        a, b = b, a
    return torch.cat([a, torch.flip(b, dims=[3])], dim=0)


def forward(arch, params, pair, matches):
    """The layer walk of testdata/model/gen_st.py with the stereo ops; each
    output's second half (the mirrored pairs) is mirrored back and stacked
    as channel 1."""
    it = iter(matches)
    ops = {
        "correlation": lambda l, ins: correlation(ins[0], ins[1], l["disps"]),
        "warp": lambda l, ins: warp_left(ins[0], ins[1]),
        "add": lambda l, ins: ins[0] + ins[1],
        "pairview": lambda l, ins: pair_view(ins[0], l["view"]),
        "match": lambda l, ins: next(it),
    }
    outs = []
    for raw in walk(arch, params, pair, ops):
        n = raw.shape[0] // 2
        outs.append(torch.cat([raw[:n], torch.flip(raw[n:], dims=[3])], dim=1))
    return outs


def main():
    with open(os.path.join(HERE, "arch.json")) as f:
        arch = json.load(f)
    meta, params = load_safetensors(os.path.join(HERE, "weights.safetensors"))
    assert json.loads(meta["config"]) == arch["config"]
    params = {k: v.double() for k, v in params.items()}
    c = arch["input"]
    h, w = c["h"], c["w"]
    x = np.fromfile(os.path.join(HERE, "input.bin"), dtype="<f4").reshape(2, 3, h, w)
    pair = torch.from_numpy(x.astype(np.float64))
    raw = np.fromfile(os.path.join(HERE, "match.bin"), dtype="<f4")
    matches, off = [], 0
    for l in arch["layers"]:
        if l["op"] == "match":
            o = l["out"]
            k = 2 * o["c"] * o["h"] * o["w"]
            matches.append(torch.from_numpy(raw[off:off + k].astype(np.float64).reshape(2, o["c"], o["h"], o["w"])))
            off += k
    assert off == raw.size
    with torch.no_grad():
        outs = forward(arch, params, pair, matches)
    with open(os.path.join(HERE, "torch_out.bin"), "wb") as f:
        for o in outs:
            f.write(o.numpy().astype("<f4").tobytes())
    for i, o in enumerate(outs):
        print("disp%d %s d·W range [%.3f, %.3f] px" % (i, tuple(o.shape), o.min() * o.shape[3], o.max() * o.shape[3]), file=sys.stderr)
    print("torch", torch.__version__, "numpy", np.__version__, file=sys.stderr)


if __name__ == "__main__":
    main()
