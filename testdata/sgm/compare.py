#!/usr/bin/python3
"""Side by side: OpenCV 4.6 StereoSGBM and package sgm on Motorcycle, for the README.

Run on an idle machine from the repository root:

    /usr/bin/python3 testdata/sgm/compare.py

Pairs: testdata/motorcycle (370x250, 48 disparities) and the Middlebury 2014
Motorcycle pair shipped by Debian python3-skimage 0.19.3 (741x500) resized to
640x480 with cv2.resize INTER_AREA (images) and INTER_NEAREST (ground truth,
disparities scaled by 640/741; unknown stays unknown), 80 disparities.
OpenCV: the parameters of issue 15 (testdata/sgm/make.py), colour input,
cv2.setNumThreads(2). sgm: its defaults with the same disparity range, grey
input, GOMAXPROCS=2, through `go run ./testdata/sgm/compare`. Both scored
densely over every pixel with ground truth: holes counted as disparity 0, and
holes filled along the scan line (the smaller of the nearest valid
disparities to the left and right). Times: median wall time of 30 calls after
one warm-up call, images already decoded.
"""
import json
import os
import subprocess
import sys
import tempfile
import time

import cv2
import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import make  # noqa: E402  (same directory: the parameters, PFM and the fill)

ROOT = make.ROOT
SK = "/usr/lib/python3/dist-packages/skimage/data"


def opencv(left, right, gt, ndisp, runs=30):
    L = cv2.imread(left, cv2.IMREAD_COLOR)
    R = cv2.imread(right, cv2.IMREAD_COLOR)
    m = cv2.StereoSGBM_create(numDisparities=ndisp, **make.PARAMS)
    d = m.compute(L, R)
    times = []
    for _ in range(runs):
        t = time.perf_counter()
        d = m.compute(L, R)
        times.append((time.perf_counter() - t) * 1000)
    d = d.astype(np.float32) / 16
    valid = d > 0
    filled, _ = make.fill(d, valid)
    z = make.scores(np.where(valid, d, 0), gt)
    f = make.scores(filled, gt)
    return {"valid": float(valid.mean()), "epe_zero": z["epe"], "bad3_zero": z["bad3"], "epe_filled": f["epe"],
            "bad3_filled": f["bad3"], "ms_median": float(np.median(times))}


def ours(left, right, truth, ndisp):
    env = dict(os.environ, GOMAXPROCS="2")
    out = subprocess.run(["go", "run", "./testdata/sgm/compare", "-left", left, "-right", right, "-truth", truth,
                          "-dmax", str(ndisp - 1)], cwd=ROOT, env=env, check=True, capture_output=True, text=True)
    return json.loads(out.stdout)


def main():
    cv2.setNumThreads(2)
    tmp = tempfile.mkdtemp(prefix="sgm_compare_")
    mc = os.path.join(ROOT, "testdata", "motorcycle")
    pairs = [("370x250", os.path.join(mc, "left.png"), os.path.join(mc, "right.png"), os.path.join(mc, "disp_left.pfm"), 48)]
    L = cv2.imread(os.path.join(SK, "motorcycle_left.png"), cv2.IMREAD_COLOR)
    R = cv2.imread(os.path.join(SK, "motorcycle_right.png"), cv2.IMREAD_COLOR)
    D = np.load(os.path.join(SK, "motorcycle_disp.npz"))["arr_0"].astype(np.float32)
    sx = 640 / L.shape[1]
    for name, im in (("left", L), ("right", R)):
        cv2.imwrite(os.path.join(tmp, name + ".png"), cv2.resize(im, (640, 480), interpolation=cv2.INTER_AREA))
    known = np.isfinite(D)
    Dn = cv2.resize(np.where(known, D, -1), (640, 480), interpolation=cv2.INTER_NEAREST)
    make.write_pfm(os.path.join(tmp, "disp.pfm"), np.where(Dn >= 0, Dn * sx, np.inf).astype(np.float32))
    pairs.append(("640x480", os.path.join(tmp, "left.png"), os.path.join(tmp, "right.png"), os.path.join(tmp, "disp.pfm"), 80))

    print("| size, disparities | method | valid | holes as 0: EPE, bad-3 | filled: EPE, bad-3 | time (2 threads) |")
    print("|---|---|---|---|---|---|")
    for size, left, right, truth, nd in pairs:
        gt = make.read_pfm(truth)
        for name, r in (("OpenCV %s StereoSGBM" % cv2.__version__, opencv(left, right, gt, nd)),
                        ("sgm (ours)", ours(left, right, truth, nd))):
            print("| %s, %d | %s | %.1f %% | %.2f px, %.1f %% | %.2f px, %.1f %% | %.1f ms |" % (
                size, nd, name, 100 * r["valid"], r["epe_zero"], 100 * r["bad3_zero"], r["epe_filled"],
                100 * r["bad3_filled"], r["ms_median"]))
    print("\nScored densely over every pixel with ground truth; pairs in", tmp)


if __name__ == "__main__":
    main()
