#!/usr/bin/python3
"""Regenerate the fixtures of package model/evaluation in this directory.

Run from the repository root with Debian's interpreter:

    /usr/bin/python3 testdata/evaluation/make.py

It writes, from a seeded numpy generator (numpy 1.24.2, Debian bookworm):
  * set/      a tiny data set in the layout of package dataset: four 20x10
              pairs a, b, c, d with rig.json, truth/disp_left and
              truth/depth_left. Pixel (0, 0) of each left image holds the
              pair's index in its red channel, so a test estimator knows which
              pair it is given. Truth has invalid pixels (+Inf, NaN, 0, < 0);
              pair c has no valid disparity at all, pair d no depth inside
              the rig's range.
  * estimates/NAME.disp.pfm, NAME.depth.pfm  an estimate for each pair
              (disparity in pixels, depth in metres; 0 = no estimate).
  * reference.json  the per-pair metrics and the per-pair means, computed
              here with numpy from the published formulas, independently of
              the Go code:
                EPE = mean |d^ - d|, bad-K = fraction with |d^ - d| > K px
                (Scharstein & Szeliski, IJCV 2002), over pixels valid in both;
                abs rel, sq rel, RMSE, RMSE log, delta < 1.25^k (common
                practice in single-image depth estimation) over pixels valid
                in both whose truth lies strictly inside (min, max) depth of
                the rig, the estimate clamped to [min, max].
              A pair without a counted pixel is listed as empty and left out
              of the mean of that measure.
              The disparity measures also with the estimate's holes scored
              (every pixel with truth counts): "disparity_zero" with holes as
              disparity 0, "disparity_filled" with each hole filled along its
              row by the smaller of the nearest valid estimates to its left
              and right (the one that exists at a row's end; a row without
              any estimate as 0), and their per-pair means.
PNGs are written with the standard library (zlib), PFMs by hand
(little-endian "Pf", bottom row first).
"""
import json
import os
import struct
import zlib

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
W, H = 20, 10
RIG = {"format": "parallax-rig", "version": 2, "width_px": W, "height_px": H,
       "fx_px": 30.0, "fy_px": 30.0, "cx_px": 9.5, "cy_px": 4.5, "baseline_m": 0.1,
       "delta_cx_px": 0, "min_depth_m": 0.5, "max_depth_m": 10.0}
ZMIN, ZMAX = RIG["min_depth_m"], RIG["max_depth_m"]


def write(path, data):
    os.makedirs(os.path.dirname(path), exist_ok=True)
    with open(path, "wb") as f:
        f.write(data)


def png(rgb):
    h, w, _ = rgb.shape
    raw = b"".join(b"\x00" + rgb[y].astype(np.uint8).tobytes() for y in range(h))

    def chunk(kind, data):
        c = kind + data
        return struct.pack(">I", len(data)) + c + struct.pack(">I", zlib.crc32(c) & 0xffffffff)
    return (b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", struct.pack(">IIBBBBB", w, h, 8, 2, 0, 0, 0))
            + chunk(b"IDAT", zlib.compress(raw, 9)) + chunk(b"IEND", b""))


def pfm(a):
    a = np.asarray(a, dtype="<f4")
    return b"Pf\n%d %d\n-1.0\n" % (a.shape[1], a.shape[0]) + a[::-1].tobytes()


def spoil(rng, a, frac):
    """Marks a fraction of a's pixels invalid with the values a file may hold."""
    a = a.copy()
    bad = rng.random(a.shape) < frac
    choices = np.array([np.inf, np.nan, 0.0, -1.0], dtype=np.float32)
    a[bad] = choices[rng.integers(0, 4, size=a.shape)][bad]
    return a


def valid(a):
    return np.isfinite(a) & (a > 0)


def disparity_metrics(e, g):
    """Disparity measures over the pixels where both e and g are valid."""
    return disparity_errors(e, g, valid(e) & valid(g))


def disparity_errors(e, g, m):
    """EPE and bad-1, -2, -3 rates of e against g over the mask m."""
    n = int(m.sum())
    if n == 0:
        return {"n": 0}
    a = np.abs(e[m].astype(np.float64) - g[m].astype(np.float64))
    return {"n": n, "epe": float(a.mean()), "bad1": float((a > 1).mean()),
            "bad2": float((a > 2).mean()), "bad3": float((a > 3).mean())}


def fill_rows(e):
    """The scan-line hole fill, written here from its definition."""
    e = e.copy()
    ok = valid(e)
    for y in range(e.shape[0]):
        xs = np.flatnonzero(ok[y])
        for x in range(e.shape[1]):
            if ok[y, x]:
                continue
            lefts, rights = xs[xs < x], xs[xs > x]
            cands = [e[y, lefts[-1]]] if len(lefts) else []
            cands += [e[y, rights[0]]] if len(rights) else []
            e[y, x] = min(cands) if cands else 0.0
    return e


def dense_disparity_metrics(e, g):
    """Disparity measures over every pixel with truth, e's holes as given."""
    return disparity_errors(e, g, valid(g))


def depth_metrics(e, g):
    m = valid(e) & valid(g)
    m &= (g > ZMIN) & (g < ZMAX)
    n = int(m.sum())
    if n == 0:
        return {"n": 0}
    ee = np.clip(e[m].astype(np.float64), ZMIN, ZMAX)
    gg = g[m].astype(np.float64)
    d = ee - gg
    r = np.maximum(ee / gg, gg / ee)
    return {"n": n, "abs_rel": float(np.mean(np.abs(d) / gg)), "sq_rel": float(np.mean(d * d / gg)),
            "rmse": float(np.sqrt(np.mean(d * d))), "rmse_log": float(np.sqrt(np.mean((np.log(ee) - np.log(gg)) ** 2))),
            "delta1": float(np.mean(r < 1.25)), "delta2": float(np.mean(r < 1.25 ** 2)),
            "delta3": float(np.mean(r < 1.25 ** 3))}


def mean(rows):
    counted = [r for r in rows if r["n"] > 0]
    out = {"n": sum(r["n"] for r in counted), "pairs": len(counted)}
    for k in counted[0]:
        if k != "n":
            out[k] = float(np.mean([r[k] for r in counted]))
    return out


def main():
    rng = np.random.default_rng(20261202)
    names = ["a", "b", "c", "d"]
    write(os.path.join(HERE, "set", "rig.json"), (json.dumps(RIG, indent=2) + "\n").encode())
    pairs, disp_rows, depth_rows, zero_rows, filled_rows = [], [], [], [], []
    for i, name in enumerate(names):
        left = rng.integers(0, 256, size=(H, W, 3))
        left[0, 0, 0] = i
        right = rng.integers(0, 256, size=(H, W, 3))
        write(os.path.join(HERE, "set", "left", name + ".png"), png(left))
        write(os.path.join(HERE, "set", "right", name + ".png"), png(right))

        gd = rng.uniform(0.5, 8.0, size=(H, W)).astype(np.float32)
        gd = spoil(rng, gd, 0.15)
        if name == "c":
            gd[:] = np.inf  # no disparity truth at all
        gz = rng.uniform(0.3, 12.0, size=(H, W)).astype(np.float32)  # some outside (0.5, 10)
        gz = spoil(rng, gz, 0.15)
        if name == "d":
            gz[:] = rng.uniform(10.5, 30.0, size=(H, W)).astype(np.float32)  # all beyond the rig's range
        write(os.path.join(HERE, "set", "truth", "disp_left", name + ".pfm"), pfm(gd))
        write(os.path.join(HERE, "set", "truth", "depth_left", name + ".pfm"), pfm(gz))

        # Estimates: the truth plus errors of a few pixels (some beyond 3 px),
        # some pixels without an estimate; depth estimates partly outside the
        # range, to exercise the clamping.
        base = np.where(valid(gd), gd, 4.0)
        ed = (base + rng.normal(0, 1.5, size=(H, W)) + (rng.random((H, W)) < 0.1) * 5).astype(np.float32)
        ed[rng.random((H, W)) < 0.08] = 0
        ez = (np.where(valid(gz), gz, 3.0) * rng.uniform(0.6, 1.5, size=(H, W))).astype(np.float32)
        ez[rng.random((H, W)) < 0.08] = 0
        ez[0, 1], ez[0, 2] = 0.2, 40.0  # below and above the range
        write(os.path.join(HERE, "estimates", name + ".disp.pfm"), pfm(ed))
        write(os.path.join(HERE, "estimates", name + ".depth.pfm"), pfm(ez))

        dm, zm = disparity_metrics(ed, gd), depth_metrics(ez, gz)
        disp_rows.append(dm)
        depth_rows.append(zm)
        dz = dense_disparity_metrics(np.where(valid(ed), ed, 0.0), gd)
        df = dense_disparity_metrics(fill_rows(ed), gd)
        zero_rows.append(dz)
        filled_rows.append(df)
        pairs.append({"name": name, "disparity": dm, "depth": zm, "disparity_zero": dz, "disparity_filled": df})
    ref = {
        "source": "numpy 1.24.2, testdata/evaluation/make.py",
        "pairs": pairs,
        "mean_disparity": mean(disp_rows),
        "mean_depth": mean(depth_rows),
        "mean_disparity_zero": mean(zero_rows),
        "mean_disparity_filled": mean(filled_rows),
        "empty_disparity": [p["name"] for p in pairs if p["disparity"]["n"] == 0],
        "empty_depth": [p["name"] for p in pairs if p["depth"]["n"] == 0],
    }
    write(os.path.join(HERE, "reference.json"), (json.dumps(ref, indent=1) + "\n").encode())


if __name__ == "__main__":
    main()
