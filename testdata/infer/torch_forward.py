#!/usr/bin/python3
"""Run the parallax network in PyTorch from a safetensors weights file.

Interchange check: rebuilds the default architecture in PyTorch by walking
its layer list (default_arch.json, written by Go; the walker is the one of
testdata/model/gen_st.py, reused, not rewritten), loads the weights file by
the safetensors specification (8-byte little-endian header length, JSON
header, raw little-endian data) with struct and json, runs a fixed input and
writes the outputs for `go test ./model -run TestTorchInterchange`. It also
writes exported_tiny.safetensors with save_weights (the tiny weights of
testdata/model re-exported) for TestTorchExport.

Run from the repository root with Debian's interpreter (python3-torch 1.13.1,
python3-numpy 1.24.2):

    go test ./model -run TestTorchInterchange -update-interchange   # inputs
    /usr/bin/python3 testdata/infer/torch_forward.py                # fixture

Reads testdata/infer/: default_arch.json, weights_f16.safetensors (seeded
fresh weights of the default architecture, F16) and input_u8.bin (the demo
image, 3 planes of 128x256 bytes, RGB). Writes torch_forward.bin: disp0,
disp1, disp2, disp3 (1x2xHxW each) as float32 little-endian, computed in
float32 like a user's training framework would.

For users who train the same architecture elsewhere, load_safetensors and
save_weights below are the two halves of the export: parameters are named
LAYER.weight (OIHW) and LAYER.bias, and the file needs the metadata keys of
package model (see save_weights).
"""
import json
import os
import struct
import sys

import numpy as np
import torch

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "model"))
from gen_st import forward, weights_metadata, write_safetensors  # noqa: E402  the model fixtures' walker and writer

DTYPES = {"F32": (np.float32, 4), "F16": (np.float16, 2)}


def load_safetensors(path):
    """Return (metadata dict, {name: float32 torch tensor}) of a file."""
    with open(path, "rb") as f:
        raw = f.read()
    (n,) = struct.unpack("<Q", raw[:8])
    header = json.loads(raw[8:8 + n])
    data = raw[8 + n:]
    meta = header.pop("__metadata__", {})
    tensors = {}
    for name, e in header.items():
        dt, size = DTYPES[e["dtype"]]
        b, end = e["data_offsets"]
        count = int(np.prod(e["shape"])) if e["shape"] else 1
        assert end - b == count * size, name
        a = np.frombuffer(data[b:end], dtype=np.dtype(dt).newbyteorder("<"))
        tensors[name] = torch.from_numpy(a.astype(np.float32).reshape(e["shape"]))
    return meta, tensors


def save_weights(path, params, config, provenance=None, dtype=torch.float32):
    """Write params ({"enc1a.weight": tensor, ...}) as a weights file that
    model.Load reads. config is package model's Config as a dict: {"arch":
    "parallax-ed", "version": 1, "width", "height", "encoder": [5 ints],
    "decoder": [5 ints], "d_max"}. dtype is torch.float32 or torch.float16."""
    names = sorted(params)
    tensors = {n: params[n].detach().to(dtype).contiguous().cpu() for n in names}
    write_safetensors(path, tensors, weights_metadata(config, provenance), names, ["__metadata__"] + names)


def main():
    with open(os.path.join(HERE, "default_arch.json")) as f:
        arch = json.load(f)
    meta, params = load_safetensors(os.path.join(HERE, "weights_f16.safetensors"))
    cfg = json.loads(meta["config"])
    assert cfg == arch["config"], (cfg, arch["config"])
    want = {p["name"]: p["shape"] for p in arch["params"]}
    assert set(want) == set(params), set(want) ^ set(params)
    for k, s in want.items():
        assert list(params[k].shape) == s, k
    c = arch["input"]
    with open(os.path.join(HERE, "input_u8.bin"), "rb") as f:
        u8 = np.frombuffer(f.read(), dtype=np.uint8)
    x = torch.from_numpy(u8.astype(np.float32).reshape(1, c["c"], c["h"], c["w"]) / np.float32(255))
    with torch.no_grad():
        outs = forward(arch, params, x)
        ref = forward(arch, {k: v.double() for k, v in params.items()}, x.double())
    with open(os.path.join(HERE, "torch_forward.bin"), "wb") as f:
        for o in outs:
            f.write(o.numpy().astype("<f4").tobytes())
    for i, (o, r) in enumerate(zip(outs, ref)):
        print("disp%d %s range [%.4f, %.4f], float32 vs float64 %.2g" % (
            i, tuple(o.shape), o.min(), o.max(), (o.double() - r).abs().max()), file=sys.stderr)
    # The export half: the tiny weights of the model fixtures, read and
    # written back by save_weights; Go's Load must accept the result.
    tmeta, tiny = load_safetensors(os.path.join(HERE, "..", "model", "tiny_f32.safetensors"))
    save_weights(os.path.join(HERE, "exported_tiny.safetensors"), tiny, json.loads(tmeta["config"]),
                 {"source": "testdata/infer/torch_forward.py save_weights"})
    print("torch", torch.__version__, "numpy", np.__version__, file=sys.stderr)


if __name__ == "__main__":
    main()
