#!/usr/bin/python3
"""Regenerate the fixtures of package model from outside references.

Run from the repository root with Debian's interpreter:

    /usr/bin/python3 testdata/model/gen_st.py

Needs Debian python3-torch 1.13.1 and python3-numpy 1.24.2. Debian ships no
python3-safetensors package, so the safetensors files are written here by the
format's definition (8-byte little-endian header length, JSON header with
dtype / shape / data_offsets and a __metadata__ map of strings, then the raw
little-endian tensor bytes) with struct and json, from torch tensors' bytes.

Writes into testdata/model/:
  f16_cases.bin         float32 -> binary16 conversions by numpy (astype
                        float16, round to nearest even): records of
                        <u32 float32 bits><u16 half bits>, little-endian.
  tiny_f32.safetensors  weights for the tiny architecture in tiny_arch.json
  tiny_f16.safetensors  the same weights converted by torch .half()
  tiny_values.json      {"f32": {name: [u32 bits]}, "f16": {name: [u32 bits
                        of torch's half value widened to float32]}}
  tiny_forward.bin      a forward pass of the tiny network with the F32
                        weights, computed by walking the layer list of
                        tiny_arch.json with torch.nn.functional (float64):
                        the input batch (2x3x32x64, uniform [0, 1]) then
                        disp0, disp1, disp2, disp3 (2x2xHxW each), all
                        float32 little-endian

tiny_arch.json is written by `go test ./model -run TestTinyArchGolden -update`.
"""
import json
import os
import struct
import sys

import numpy as np
import torch

HERE = os.path.dirname(os.path.abspath(__file__))


def f16_cases():
    rng = np.random.default_rng(20240611)
    # The float32 value halfway between every positive finite half and the
    # next one (ties), and for every 8th tie the float32 neighbours just
    # below and just above it.
    h = np.arange(0, 0x7C00, dtype=np.uint16)
    lo = h.view(np.float16).astype(np.float32).astype(np.float64)
    hi = (h + 1).view(np.float16).astype(np.float32).astype(np.float64)
    mid = ((lo + hi) / 2).astype(np.float32)  # exact: halves have 11 bits
    below = np.nextafter(mid[::8], np.float32(0))
    above = np.nextafter(mid[::8], np.float32(np.inf))
    # Random float32 across the half range and beyond, both signs.
    e = rng.uniform(-27, 17, 20000)
    r = (np.exp2(e) * rng.choice([-1.0, 1.0], 20000)).astype(np.float32)
    special = np.array([0.0, -0.0, 1.0, -2.0, 65504.0, 65519.99, 65520.0, 1e6,
                        2.0**-24, 2.0**-25, 2.0**-25 * 1.0000001, 2.0**-14,
                        np.inf, -np.inf], dtype=np.float32)
    f = np.concatenate([mid, below, above, r, special]).astype(np.float32)
    with np.errstate(over="ignore"):  # overflow to inf is a case under test
        half = f.astype(np.float16).view(np.uint16)
    rec = np.zeros(len(f), dtype=[("f", "<u4"), ("h", "<u2")])
    rec["f"] = f.view(np.uint32)
    rec["h"] = half
    with open(os.path.join(HERE, "f16_cases.bin"), "wb") as out:
        out.write(rec.tobytes())
    return len(f)


def weights_metadata(config, provenance=None):
    """The __metadata__ map of a weights file (see model/doc.go): config is
    package model's Config as a dict, provenance a dict written as
    provenance.* keys."""
    meta = {
        "format": "parallax-weights",
        "format_version": "1",
        "arch": config["arch"],
        "arch_version": str(config["version"]),
        "config": json.dumps(config),
        "input_width": str(config["width"]),
        "input_height": str(config["height"]),
        "d_max": repr(float(config["d_max"])),
    }
    for k, v in (provenance or {}).items():
        meta["provenance." + k] = str(v)
    return meta


def write_safetensors(path, tensors, meta, order, keys=None):
    """tensors: name -> torch tensor (float32 or float16); order: the order
    of the data section; keys: the order of the header's keys (default
    "__metadata__", then the names in reverse order, to show that the reader
    does not rely on key order). The file is written beside path, flushed
    and renamed over it."""
    dt = {torch.float32: "F32", torch.float16: "F16"}
    header = {"__metadata__": meta}
    blobs = []
    off = 0
    for name in order:
        t = tensors[name].contiguous()
        b = t.numpy().astype(t.numpy().dtype.newbyteorder("<")).tobytes()
        header[name] = {"dtype": dt[t.dtype], "shape": list(t.shape),
                        "data_offsets": [off, off + len(b)]}
        off += len(b)
        blobs.append(b)
    if keys is None:
        keys = ["__metadata__"] + sorted(tensors, reverse=True)
    hj = json.dumps({k: header[k] for k in keys}, separators=(",", ":")).encode()
    hj += b" " * (-len(hj) % 8)
    tmp = path + ".tmp"
    with open(tmp, "wb") as out:
        out.write(struct.pack("<Q", len(hj)))
        out.write(hj)
        for b in blobs:
            out.write(b)
        out.flush()
        os.fsync(out.fileno())
    os.replace(tmp, path)


def tiny_weights():
    with open(os.path.join(HERE, "tiny_arch.json")) as f:
        arch = json.load(f)
    cfg = arch["config"]
    g = torch.Generator().manual_seed(5)
    tensors = {}
    for p in arch["params"]:
        shape = p["shape"]
        # Weights scaled by 1/sqrt(fan_in) keep the activations in range, so
        # that the heads' sigmoids do not saturate in the forward fixture.
        std = (1.0 / (shape[1] * shape[2] * shape[3])) ** 0.5 if len(shape) == 4 else 0.1
        tensors[p["name"]] = torch.randn(shape, generator=g, dtype=torch.float32) * std
    meta = weights_metadata(cfg, {"source": "testdata/model/gen_st.py, torch %s" % torch.__version__})
    names = [p["name"] for p in arch["params"]]
    order = names[1::2] + names[0::2]  # biases first, then weights
    write_safetensors(os.path.join(HERE, "tiny_f32.safetensors"), tensors, meta, order)
    halves = {k: v.half() for k, v in tensors.items()}
    write_safetensors(os.path.join(HERE, "tiny_f16.safetensors"), halves, meta, order)
    values = {
        "f32": {k: v.numpy().view(np.uint32).ravel().tolist() for k, v in tensors.items()},
        "f16": {k: v.float().numpy().view(np.uint32).ravel().tolist() for k, v in halves.items()},
    }
    with open(os.path.join(HERE, "tiny_values.json"), "w") as f:
        json.dump(values, f, separators=(",", ":"))
    return arch, tensors


def scale_shift(l, w):
    """The factor and shift of a scale layer at output width w: factor
    (divided by w if per_width, times w if times_width) and shift/w."""
    f = l.get("factor", 0.0)
    if l.get("per_width"):
        f = f / w
    if l.get("times_width"):
        f = f * w
    return f, l.get("shift", 0.0) / w


def forward(arch, params, x, ops=None):
    """Walk the layer list the way package model's Net does. ops maps the
    names of further ops (the stereo network's) to functions of the layer
    and its inputs; the output shape of every layer is checked."""
    import torch.nn.functional as F
    t = {"image": x}
    for l in arch["layers"]:
        ins = [t[n] for n in l["inputs"]]
        op = l["op"]
        o = l["out"]
        if op == "conv":
            v = ins[0]
            p = l["pad"]
            if p:
                mode = {"reflect": "reflect", "zero": "constant"}[l["padding"]]
                v = F.pad(v, (p, p, p, p), mode=mode)
            v = F.conv2d(v, params[l["name"] + ".weight"], params[l["name"] + ".bias"],
                         stride=l["stride"], dilation=l["dilation"])
            v = {"elu": F.elu, "sigmoid": torch.sigmoid, "none": lambda z: z}[l["act"]](v)
        elif op == "upsample":
            if l["mode"] == "bilinear":
                v = F.interpolate(ins[0], scale_factor=2, mode="bilinear", align_corners=False)
            else:
                v = F.interpolate(ins[0], scale_factor=2, mode="nearest")
        elif op == "concat":
            v = torch.cat(ins, dim=1)
        elif op == "scale":
            f, s = scale_shift(l, o["w"])
            v = ins[0] * f
            if s:
                v = v + s
        elif ops and op in ops:
            v = ops[op](l, ins)
        else:
            raise ValueError("unknown op " + op)
        assert list(v.shape[1:]) == [o["c"], o["h"], o["w"]], (l["name"], v.shape)
        t[l["name"]] = v
    return [t[n] for n in arch["outputs"]]


def tiny_forward(arch, tensors):
    g = torch.Generator().manual_seed(11)
    c = arch["input"]
    x = torch.rand((2, c["c"], c["h"], c["w"]), generator=g, dtype=torch.float32)
    params = {k: v.double() for k, v in tensors.items()}
    outs = forward(arch, params, x.double())
    with open(os.path.join(HERE, "tiny_forward.bin"), "wb") as f:
        f.write(x.numpy().astype("<f4").tobytes())
        for o in outs:
            f.write(o.float().numpy().astype("<f4").tobytes())
    for i, o in enumerate(outs):
        print("disp%d" % i, tuple(o.shape), "min %.4f max %.4f std %.4f" % (o.min(), o.max(), o.std()), file=sys.stderr)


if __name__ == "__main__":
    print("torch", torch.__version__, "numpy", np.__version__, file=sys.stderr)
    print("f16 cases:", f16_cases(), file=sys.stderr)
    arch, tensors = tiny_weights()
    tiny_forward(arch, tensors)
