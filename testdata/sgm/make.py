#!/usr/bin/python3
"""Regenerate the OpenCV reference disparities that package sgm is checked against.

Reference: OpenCV 4.6.0 cv2.StereoSGBM (Debian python3-opencv), semi-global
matching with the parameters of issue 15: block size 3, P1 = 8*3*3^2,
P2 = 32*3*3^2, uniqueness ratio 5, 3-way mode, speckle window 100 and range 2,
left-right check (disp12MaxDiff) 1, minimum disparity 0, on the colour images
as cv2.imread reads them (3 channels, which the "3" in P1 and P2 counts).

For each pair it writes opencv_NAME.pfm: OpenCV's left disparity in pixels
(its 1/16-pixel values divided by 16), +Inf where OpenCV marks no match or
gives 0 (package depth holds only positive disparities), PFM as in
testdata/motorcycle. opencv.json records, per pair, the parameters and the
scores of that map against the ground truth computed here in NumPy, densely
over every pixel with ground truth: holes counted as disparity 0, and holes
filled along the scan line (each takes the smaller of the nearest valid
disparities to its left and right; at a row's end the one that exists).
sgm's tests recompute these scores with sgm.FillHoles / sgm.ZeroHoles and
depth.DisparityErrors.

Pairs: testdata/motorcycle (370x250, 48 disparities) and the committed
synthetic pairs testdata/synth/{greenhouse,storage}/000000..000002
(256x128, 48 disparities).

Run from the repository root: /usr/bin/python3 testdata/sgm/make.py
"""
import json
import os
import sys

import cv2
import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
sys.path.insert(0, os.path.join(HERE, ".."))
from pfm import read_pfm, write_pfm  # noqa: E402  (the PFM reader and writer of every fixture script)

BLOCK = 3
PARAMS = dict(minDisparity=0, blockSize=BLOCK, P1=8 * 3 * BLOCK * BLOCK, P2=32 * 3 * BLOCK * BLOCK,
              disp12MaxDiff=1, uniquenessRatio=5, speckleWindowSize=100, speckleRange=2,
              mode=cv2.STEREO_SGBM_MODE_SGBM_3WAY)


def fill(d, valid):
    out = np.where(valid, d, 0).astype(np.float64)
    ok = valid.copy()
    for y in range(d.shape[0]):
        xs = np.where(valid[y])[0]
        if len(xs) == 0:
            continue
        for x in np.where(~valid[y])[0]:
            i = np.searchsorted(xs, x)
            cands = []
            if i > 0:
                cands.append(d[y, xs[i - 1]])
            if i < len(xs):
                cands.append(d[y, xs[i]])
            out[y, x] = min(cands)
            ok[y, x] = True
    return out, ok


def scores(est, gt):
    known = np.isfinite(gt)
    err = np.abs(est.astype(np.float64) - gt.astype(np.float64))[known]
    return {"pixels": int(known.sum()), "epe": float(err.mean()), "bad3": float((err > 3).mean()),
            "bad1": float((err > 1).mean())}


def one(name, left, right, truth, ndisp):
    L = cv2.imread(left, cv2.IMREAD_COLOR)
    R = cv2.imread(right, cv2.IMREAD_COLOR)
    m = cv2.StereoSGBM_create(numDisparities=ndisp, **PARAMS)
    d = m.compute(L, R).astype(np.float32) / 16
    valid = d > 0
    write_pfm(os.path.join(HERE, "opencv_%s.pfm" % name), np.where(valid, d, np.inf).astype(np.float32))
    gt = read_pfm(truth)
    filled, _ = fill(d, valid)
    return {"left": os.path.relpath(left, ROOT), "right": os.path.relpath(right, ROOT),
            "truth": os.path.relpath(truth, ROOT), "num_disparities": ndisp,
            "width": int(d.shape[1]), "height": int(d.shape[0]), "valid": int(valid.sum()),
            "holes_as_zero": scores(np.where(valid, d, 0), gt), "filled": scores(filled, gt)}


def main():
    out = {"source": "OpenCV %s cv2.StereoSGBM, Debian python3-opencv; NumPy %s" % (cv2.__version__, np.__version__),
           "params": {k: int(v) for k, v in PARAMS.items()}, "pairs": {}}
    mc = os.path.join(ROOT, "testdata", "motorcycle")
    out["pairs"]["motorcycle"] = one("motorcycle", os.path.join(mc, "left.png"), os.path.join(mc, "right.png"),
                                     os.path.join(mc, "disp_left.pfm"), 48)
    for style in ("greenhouse", "storage"):
        sd = os.path.join(ROOT, "testdata", "synth", style)
        for i in range(3):
            n = "%06d" % i
            out["pairs"]["%s_%s" % (style, n)] = one(
                "%s_%s" % (style, n), os.path.join(sd, "left", n + ".png"), os.path.join(sd, "right", n + ".png"),
                os.path.join(sd, "truth", "disp_left", n + ".pfm"), 48)
    path = os.path.join(HERE, "opencv.json")
    with open(path + ".tmp", "w") as f:
        json.dump(out, f, indent=1, sort_keys=True)
        f.write("\n")
    os.replace(path + ".tmp", path)
    for k, v in out["pairs"].items():
        print(k, "valid %d" % v["valid"], "zero EPE %.3f bad3 %.3f" % (v["holes_as_zero"]["epe"], v["holes_as_zero"]["bad3"]),
              "filled EPE %.3f bad3 %.3f" % (v["filled"]["epe"], v["filled"]["bad3"]))


if __name__ == "__main__":
    main()
