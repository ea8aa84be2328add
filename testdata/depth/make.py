#!/usr/bin/python3
"""Regenerate the fixtures of package depth in this directory.

Run with Debian's interpreter (the reference libraries live there):

    /usr/bin/python3 testdata/depth/make.py

Sources and versions (Debian bookworm packages):
  * numpy 1.24.2           metrics on a seeded random case (metrics.json)
  * python3-opencv 4.6.0   a PFM and a 16-bit PNG written by OpenCV (cv2_*.pfm, cv2_*.png, cv2.json)
  * python3-matplotlib 3.6.3  cubehelix values from matplotlib._cm._ch_helper (cubehelix.json)
  * python3-skimage 0.19.3 Middlebury 2014 Motorcycle ground-truth disparity
                           (skimage/data/motorcycle_disp.npz) turned into depth with the
                           calibration of the skimage.data.stereo_motorcycle docstring
                           (motorcycle_depth.json)

The metric formulas are the usual ones of single-image depth estimation
(common practice) and the bad-pixel rate of Scharstein & Szeliski (IJCV 2002);
they are written out again below with numpy, independently of the Go code.
"""
import os
import sys

import cv2
import numpy as np
from matplotlib import _cm

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, ".."))
import jsonfile  # noqa: E402


def f32list(a):
    # repr of a float32 widened to float64 parses back to the same float32.
    return [float(v) for v in np.asarray(a, dtype=np.float32).ravel()]


def write_json(name, obj):
    jsonfile.write_json(os.path.join(HERE, name), obj)


def depth_metrics(est, gt, mask, median_scale=False, lo=0.0, hi=0.0):
    e = est.astype(np.float64)
    g = gt.astype(np.float64)
    m = mask & (e > 0) & (g > 0)
    if lo > 0:
        m &= g > lo
    if hi > 0:
        m &= g < hi
    e, g = e[m], g[m]
    scale = 1.0
    if median_scale:
        scale = np.median(g) / np.median(e)
    e = e * scale
    if lo > 0:
        e = np.maximum(e, lo)
    if hi > 0:
        e = np.minimum(e, hi)
    ratio = np.maximum(e / g, g / e)
    return {
        "n": int(m.sum()),
        "scale": float(scale),
        "abs_rel": float(np.mean(np.abs(e - g) / g)),
        "sq_rel": float(np.mean((e - g) ** 2 / g)),
        "rmse": float(np.sqrt(np.mean((e - g) ** 2))),
        "rmse_log": float(np.sqrt(np.mean((np.log(e) - np.log(g)) ** 2))),
        "delta1": float(np.mean(ratio < 1.25)),
        "delta2": float(np.mean(ratio < 1.25 ** 2)),
        "delta3": float(np.mean(ratio < 1.25 ** 3)),
    }


def disparity_metrics(est, gt, mask):
    a = np.abs(est.astype(np.float64) - gt.astype(np.float64))[mask]
    return {
        "n": int(mask.sum()),
        "epe": float(a.mean()),
        "bad1": float(np.mean(a > 1)),
        "bad2": float(np.mean(a > 2)),
        "bad3": float(np.mean(a > 3)),
    }


def metrics_fixture():
    rng = np.random.default_rng(20261201)
    h, w = 17, 23
    gt = rng.uniform(0.5, 12.0, (h, w)).astype(np.float32)
    # An estimate off by a global scale and by multiplicative noise, so that
    # median scaling and the caps matter.
    est = (gt * 0.7 * np.exp(rng.normal(0, 0.25, (h, w)))).astype(np.float32)
    gt_valid = rng.uniform(size=(h, w)) > 0.15
    est_valid = rng.uniform(size=(h, w)) > 0.05
    both = gt_valid & est_valid
    dgt = rng.uniform(1.0, 60.0, (h, w)).astype(np.float32)
    dest = (dgt + rng.normal(0, 2.0, (h, w))).astype(np.float32)
    dest = np.maximum(dest, np.float32(0.01))
    return {
        "source": "numpy %s, seed 20261201" % np.__version__,
        "width": w, "height": h,
        "gt": f32list(gt), "est": f32list(est),
        "gt_valid": [int(v) for v in gt_valid.ravel()],
        "est_valid": [int(v) for v in est_valid.ravel()],
        "depth": {
            "plain": depth_metrics(est, gt, both),
            "median": depth_metrics(est, gt, both, median_scale=True),
            "median_capped": depth_metrics(est, gt, both, median_scale=True, lo=1.0, hi=8.0),
            "capped": depth_metrics(est, gt, both, lo=1.0, hi=8.0),
        },
        "disp_gt": f32list(dgt), "disp_est": f32list(dest),
        "disparity": disparity_metrics(dest, dgt, both),
    }


def opencv_fixtures():
    rng = np.random.default_rng(7)
    a = rng.normal(0, 10, (4, 5)).astype(np.float32)
    a[1, 2] = np.inf
    cv2.imwrite(os.path.join(HERE, "cv2_gray.pfm"), a)
    mm = rng.integers(0, 65536, (6, 7), dtype=np.uint16)
    mm[0, 0], mm[0, 1], mm[5, 6] = 0, 65535, 1
    cv2.imwrite(os.path.join(HERE, "cv2_depth_mm.png"), mm)
    return {
        "source": "OpenCV %s cv2.imwrite" % cv2.__version__,
        "pfm": {"file": "cv2_gray.pfm", "width": 5, "height": 4, "pix": [repr(float(v)) for v in a.ravel()]},
        "png16": {"file": "cv2_depth_mm.png", "width": 7, "height": 6, "mm": [int(v) for v in mm.ravel()]},
    }


def cubehelix_fixture():
    import matplotlib
    lam = [0.0, 0.1, 0.25, 0.4, 0.5, 0.6, 0.75, 0.9, 1.0]
    cases = []
    # (gamma, start, rotations, hue): the package default and the example
    # parameters of matplotlib's cubehelix.
    for gamma, s, r, h in [(0.9, 2.6, -1.1, 1.1), (1.0, 0.5, -1.5, 1.0), (1.0, 1.0, 0.7, 0.8)]:
        rgb = []
        for ch in ((-0.14861, 1.78277), (-0.29227, -0.90649), (1.97294, 0.0)):
            rgb.append([float(_cm._ch_helper(gamma, s, r, h, ch[0], ch[1], np.float64(x))) for x in lam])
        cases.append({"gamma": gamma, "start": s, "rotations": r, "hue": h,
                      "r": rgb[0], "g": rgb[1], "b": rgb[2]})
    return {"source": "matplotlib %s matplotlib._cm._ch_helper (unclipped)" % matplotlib.__version__,
            "lambda": lam, "cases": cases}


def motorcycle_fixture():
    # Calibration from the docstring of skimage.data.stereo_motorcycle,
    # /usr/lib/python3/dist-packages/skimage/data/_fetchers.py lines 1076-1080.
    f, delta_cx, baseline_m = 994.978, 31.086, 0.193001
    d = np.load("/usr/lib/python3/dist-packages/skimage/data/motorcycle_disp.npz")["arr_0"].astype(np.float64)
    known = np.isfinite(d) & (d > 0)
    z = np.where(known, f * baseline_m / np.where(known, d + delta_cx, 1.0), 0.0)
    rng = np.random.default_rng(3)
    ys, xs = np.nonzero(known)
    pick = rng.choice(len(ys), 40, replace=False)
    return {
        "source": "python3-skimage 0.19.3 motorcycle_disp.npz, numpy %s" % np.__version__,
        "width": int(d.shape[1]), "height": int(d.shape[0]),
        "valid": int(known.sum()),
        "mean_depth_m": float(z[known].mean()),
        "min_depth_m": float(z[known].min()),
        "max_depth_m": float(z[known].max()),
        "samples": [{"x": int(xs[i]), "y": int(ys[i]), "disp_px": float(d[ys[i], xs[i]]),
                     "depth_m": float(z[ys[i], xs[i]])} for i in pick],
    }


def main():
    write_json("metrics.json", metrics_fixture())
    write_json("cv2.json", opencv_fixtures())
    write_json("cubehelix.json", cubehelix_fixture())
    write_json("motorcycle_depth.json", motorcycle_fixture())


if __name__ == "__main__":
    main()
