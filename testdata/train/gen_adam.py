#!/usr/bin/python3
"""Regenerate adam_torch.json: torch.optim.Adam on a fixed sequence of
gradients, with a learning rate that changes at every step.

Run with Debian's interpreter, which sees python3-torch (1.13.1):
    /usr/bin/python3 testdata/train/gen_adam.py
"""
import json
import math
import os

import torch

torch.set_default_dtype(torch.float32)

SHAPES = {"layer.weight": (2, 3, 1, 2), "layer.bias": (5,)}
STEPS = 8
LRS = [1e-3, 2e-3, 5e-3, 5e-3, 1e-2, 1e-3, 3e-3, 2e-2]
CASES = [
    {"name": "defaults", "betas": (0.9, 0.999), "eps": 1e-8},
    {"name": "betas 0.8 0.99 eps 1e-6", "betas": (0.8, 0.99), "eps": 1e-6},
]


def grad(name, shape, t):
    """A fixed, varied gradient for step t: signs change, magnitudes span
    four decades, one element is always 0."""
    n = math.prod(shape)
    k = 0 if name.endswith("weight") else 100
    vals = [0.0] + [math.sin(1.3 * (i + k) + 0.7 * t) * 10 ** ((i + t) % 4 - 2) for i in range(1, n)]
    return torch.tensor(vals, dtype=torch.float32).reshape(shape)


def run(case):
    params = {}
    for j, (name, shape) in enumerate(SHAPES.items()):
        n = math.prod(shape)
        params[name] = torch.tensor([0.1 * (i - n / 2) + 0.05 * j for i in range(n)], dtype=torch.float32).reshape(shape).requires_grad_()
    init = {k: v.detach().flatten().tolist() for k, v in params.items()}
    opt = torch.optim.Adam(list(params.values()), lr=LRS[0], betas=case["betas"], eps=case["eps"])
    grads, weights = [], []
    for t in range(STEPS):
        for g in opt.param_groups:
            g["lr"] = LRS[t]
        step_grads = {}
        for name, p in params.items():
            p.grad = grad(name, SHAPES[name], t)
            step_grads[name] = p.grad.flatten().tolist()
        opt.step()
        grads.append(step_grads)
        weights.append({k: v.detach().flatten().tolist() for k, v in params.items()})
    state = {}
    for name, p in params.items():
        st = opt.state[p]
        state[name] = {"m": st["exp_avg"].flatten().tolist(), "v": st["exp_avg_sq"].flatten().tolist(), "step": int(st["step"])}
    return {"name": case["name"], "beta1": case["betas"][0], "beta2": case["betas"][1], "eps": case["eps"],
            "lr": LRS, "shapes": {k: list(v) for k, v in SHAPES.items()}, "init": init,
            "grads": grads, "weights": weights, "state": state}


out = {"source": "torch.optim.Adam, Debian python3-torch 1.13.1 (torch.__version__ %s)" % torch.__version__, "cases": [run(c) for c in CASES]}
path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "adam_torch.json")
with open(path, "w") as f:
    json.dump(out, f, indent=1)
print("wrote", path)
