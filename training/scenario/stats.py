#!/usr/bin/python3
"""Appearance and disparity statistics of generated pairs, the measurements
behind data.DefaultAugment and loss.SmoothnessMeanEpsilon (see their doc
comments). Run by measure.sh; by hand:

    /usr/bin/python3 training/scenario/stats.py DIR STYLE ...

For each STYLE, DIR/STYLE holds pairs written by examples/synth. Per left
image (values /255): the grey level g = mean of R, G and B; its mean over
the image; each channel's mean over the grey mean; the contrast, std(g) /
mean(g); and the mean of truth/disp_left (pixels) over the width. Printed:
the 5th, 50th and 95th percentile (numpy's default linear interpolation) of
each, the mean level and the contrast also over their median, and the
smallest mean disparity. Needs Debian python3-numpy 1.24.2 and
python3-skimage 0.19.3 (PNG reading).
"""
import os
import sys

import numpy as np
from skimage import io

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "testdata"))
from pfm import read_pfm  # noqa: E402


def style_stats(d):
    names = sorted(f[:-4] for f in os.listdir(os.path.join(d, "left")) if f.endswith(".png"))
    level, chan, contrast, disp = [], [], [], []
    for n in names:
        im = io.imread(os.path.join(d, "left", n + ".png"))[..., :3].astype(np.float64) / 255
        g = im.mean(axis=2)
        level.append(g.mean())
        chan.append(im.reshape(-1, 3).mean(axis=0) / g.mean())
        contrast.append(g.std() / g.mean())
        dl = read_pfm(os.path.join(d, "truth", "disp_left", n + ".pfm")).astype(np.float64)
        dl = dl[np.isfinite(dl)]
        disp.append(dl.mean() / im.shape[1])
    return len(names), np.array(level), np.array(chan), np.array(contrast), np.array(disp)


def pct(a):
    return np.percentile(a, [5, 50, 95])


def main():
    root, styles = sys.argv[1], sys.argv[2:]
    print("numpy", np.__version__, "; percentiles 5 / 50 / 95")
    for s in styles:
        n, level, chan, contrast, disp = style_stats(os.path.join(root, s))
        print("\n%s: %d pairs" % (s, n))
        p = pct(level)
        print("  mean grey level   %.3f %.3f %.3f   over its median %.2f … %.2f" % (*p, p[0] / p[1], p[2] / p[1]))
        for k, c in enumerate("RGB"):
            print("  %s mean / grey     %.2f %.2f %.2f" % (c, *pct(chan[:, k])))
        p = pct(contrast)
        print("  contrast std/mean %.3f %.3f %.3f   over its median %.2f … %.2f" % (*p, p[0] / p[1], p[2] / p[1]))
        print("  mean disparity / width: min %.4f, percentiles %.4f %.4f %.4f" % (disp.min(), *pct(disp)))


if __name__ == "__main__":
    main()
