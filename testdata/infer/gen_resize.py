#!/usr/bin/python3
"""Reference values for model's resizeBilinear (the Estimator's resampling of
disparity and confidence from the network's size to the input's).

OpenCV 4.6.0 cv2.resize with INTER_LINEAR on float32 maps destination pixel
x to source position (x + 0.5)·sw/dw − 0.5, clamped to [0, sw − 1], and
interpolates linearly: the convention resizeBilinear documents. Scale
factors are kept away from exactly 1/2 (OpenCV then switches to INTER_AREA).
The source map is seeded random data (numpy 1.24.2).

Run from the repository root with Debian's interpreter:

    /usr/bin/python3 testdata/infer/gen_resize.py

Writes testdata/infer/resize_cv2.json.
"""
import json

import cv2
import numpy as np

rng = np.random.default_rng(7)
sw, sh = 9, 6
src = rng.random((sh, sw), dtype=np.float32)
cases = []
for dw, dh in [(23, 14), (4, 5), (13, 3), (9, 11), (1, 1)]:
    dst = cv2.resize(src, (dw, dh), interpolation=cv2.INTER_LINEAR)
    cases.append({"dw": dw, "dh": dh, "dst": [float(v) for v in dst.reshape(-1)]})
with open("testdata/infer/resize_cv2.json", "w") as f:
    json.dump({"source": "OpenCV %s cv2.resize INTER_LINEAR, float32" % cv2.__version__,
               "sw": sw, "sh": sh, "src": [float(v) for v in src.reshape(-1)], "cases": cases}, f)
