#!/usr/bin/python3
"""Regenerate the reduced Aloe stereo pair in this directory.

Source: Debian opencv-doc 4.6.0+dfsg-12 ships the Middlebury 2006 "Aloe" pair
(full size, 1282x1110, JPEG) with its left-view ground-truth disparity as an
8-bit PNG whose value is the disparity in pixels, 0 = unknown (the Middlebury
2006 convention for full-size images; from memory, checked here by package
sgm agreeing with it, see PROVENANCE.md). This script reduces it by 4 so the
fixture stays small:

  * crop to a multiple of 4 (1282x1110 -> 1280x1108, last columns/rows dropped),
  * images: 4x4 block mean of the 8-bit values, rounded to nearest -> PNG,
  * disparity: 4x4 block mean divided by 4 (pixels at the stored resolution)
    when all sixteen values are known; +inf (unknown) when any is not.
    Written as little-endian PFM like testdata/motorcycle (testdata/pfm.py).

Run with Debian's interpreter: /usr/bin/python3 testdata/aloe/make.py
(ALOE_SRC overrides the source folder).
"""
import os
import sys

import cv2
import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, ".."))
from pfm import write_disparity  # noqa: E402  (the PFM writer of every fixture script)

SRC = os.environ.get("ALOE_SRC", "/usr/share/doc/opencv-doc/examples/data")
K = 4


def block_mean(a):
    h, w = a.shape[0] // K * K, a.shape[1] // K * K
    a = a[:h, :w].astype(np.float64)
    return a.reshape(h // K, K, w // K, K).mean(axis=(1, 3))


def reduce_image(name):
    im = cv2.imread(os.path.join(SRC, name), cv2.IMREAD_COLOR)[..., ::-1]  # BGR -> RGB
    chans = [block_mean(im[..., c]) for c in range(3)]
    return np.clip(np.floor(np.stack(chans, axis=-1) + 0.5), 0, 255).astype(np.uint8)


def reduce_disparity():
    g = cv2.imread(os.path.join(SRC, "aloeGT.png"), cv2.IMREAD_UNCHANGED).astype(np.float64)
    known = g > 0
    k = block_mean(known.astype(np.float64))
    m = block_mean(g) / K
    return np.where(k == 1.0, m, np.inf).astype(np.float32)


def main():
    for side, name in (("left", "aloeL.jpg"), ("right", "aloeR.jpg")):
        cv2.imwrite(os.path.join(HERE, side + ".png"), reduce_image(name)[..., ::-1])
    write_disparity(os.path.join(HERE, "disp_left.pfm"), reduce_disparity())


if __name__ == "__main__":
    main()
