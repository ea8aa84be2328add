#!/usr/bin/python3
"""Regenerate the reduced Motorcycle stereo pair in this directory.

Source: Debian python3-skimage 0.19.3 ships the Middlebury 2014 "Motorcycle"
pair (already down-sampled by 4 by scikit-image) with its left-view
ground-truth disparity in pixels. This script halves it again so the fixture
stays small:

  * crop to an even size (741x500 -> 740x500, the last column is dropped),
  * images: 2x2 block mean of the 8-bit values, rounded to nearest -> PNG,
  * disparity: 2x2 block mean divided by 2 (pixels at the stored resolution)
    when all four values are known; +inf (unknown) when any of them is not.
    Written as little-endian PFM ("Pf", scale -1.0), rows bottom to top as the
    format requires; unknown pixels stay +inf.

Run with Debian's interpreter: /usr/bin/python3 testdata/motorcycle/make.py
"""
import os
import sys

import numpy as np
from skimage import io

SRC = "/usr/lib/python3/dist-packages/skimage/data"
HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, ".."))
from pfm import write_disparity  # noqa: E402  (the PFM writer of every fixture script)


def block_mean(a):
    h, w = a.shape[0] // 2 * 2, a.shape[1] // 2 * 2
    a = a[:h, :w].astype(np.float64)
    return 0.25 * (a[0::2, 0::2] + a[1::2, 0::2] + a[0::2, 1::2] + a[1::2, 1::2])


def reduce_image(name):
    im = io.imread(os.path.join(SRC, name))[..., :3]
    chans = [block_mean(im[..., c]) for c in range(3)]
    out = np.clip(np.floor(np.stack(chans, axis=-1) + 0.5), 0, 255).astype(np.uint8)
    return out


def reduce_disparity():
    d = np.load(os.path.join(SRC, "motorcycle_disp.npz"))["arr_0"].astype(np.float64)
    known = np.isfinite(d)
    d = np.where(known, d, 0.0)
    k = block_mean(known.astype(np.float64))
    m = block_mean(d) / 2.0
    return np.where(k == 1.0, m, np.inf).astype(np.float32)


def main():
    for side in ("left", "right"):
        io.imsave(os.path.join(HERE, side + ".png"), reduce_image("motorcycle_%s.png" % side),
                  check_contrast=False)
    write_disparity(os.path.join(HERE, "disp_left.pfm"), reduce_disparity())


if __name__ == "__main__":
    main()
