#!/usr/bin/python3
"""Photometric errors of the Motorcycle pair rebuilt by warping, from SciPy.

Run with Debian's interpreter (python3-scipy 1.10.1, python3-skimage 0.19.3,
numpy 1.24.2):

    /usr/bin/python3 testdata/warp/gen_motorcycle.py

Reads testdata/motorcycle/{left,right}.png and disp_left.pfm (left-view
disparity in pixels, +inf unknown), samples the right image at
u = x - s*d(x) with scipy.ndimage.map_coordinates (order=1: bilinear, pixel
centres at integer coordinates) for each scale s, and writes the mean
absolute difference to the left image (values /255, mean over R, G, B and
over the pixels where d is known and 0 <= u <= W-1 for every scale) to
motorcycle_errors.json.
"""
import os
import sys

import numpy as np
import scipy
from scipy import ndimage
from skimage import io

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, ".."))
from jsonfile import write_json  # noqa: E402
from pfm import read_pfm  # noqa: E402  (the PFM reader of every fixture script)
PAIR = os.path.join(HERE, "..", "motorcycle")
SCALES = [0.0, 0.9, 1.0, 1.1]


def main():
    left = io.imread(os.path.join(PAIR, "left.png"))[..., :3].astype(np.float64) / 255
    right = io.imread(os.path.join(PAIR, "right.png"))[..., :3].astype(np.float64) / 255
    d = read_pfm(os.path.join(PAIR, "disp_left.pfm")).astype(np.float64)
    h, w = d.shape
    known = np.isfinite(d)
    d0 = np.where(known, d, 0.0)
    ys, xs = np.mgrid[0:h, 0:w].astype(np.float64)
    common = known.copy()
    for s in SCALES:
        u = xs - s * d0
        common &= (u >= 0) & (u <= w - 1)
    errors = []
    for s in SCALES:
        u = xs - s * d0
        err = np.zeros((h, w))
        for c in range(3):
            rebuilt = ndimage.map_coordinates(right[..., c], [ys, u], order=1, mode="nearest")
            err += np.abs(rebuilt - left[..., c])
        errors.append(float((err / 3)[common].mean()))
    out = {
        "source": "scipy.ndimage.map_coordinates order=1, mean |right(x - s*d) - left| over R,G,B",
        "scipy": scipy.__version__,
        "numpy": np.__version__,
        "width": w, "height": h,
        "pixels": int(common.sum()),
        "scales": SCALES,
        "mean_abs_error": errors,
    }
    write_json(os.path.join(HERE, "motorcycle_errors.json"), out)
    print(out)


if __name__ == "__main__":
    main()
