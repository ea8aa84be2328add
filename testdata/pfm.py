"""PFM reading and writing for the fixture scripts of testdata/ (one
grey channel, "Pf"): the header "Pf", "W H" and the scale, whose sign gives
the byte order (negative: little-endian), then float32 rows from the
bottom of the image to the top. Written little-endian (scale -1.0),
atomically; unknown values stay +inf.

Import it from a script in a folder of testdata/ with

    sys.path.insert(0, os.path.join(HERE, ".."))
    from pfm import read_pfm, write_pfm, write_disparity
"""
import os

import numpy as np


def read_pfm(path):
    """The image of a grey PFM file as float32, top row first."""
    with open(path, "rb") as f:
        magic = f.readline().strip()
        assert magic == b"Pf", (path, magic)
        w, h = map(int, f.readline().split())
        scale = float(f.readline())
        dt = "<f4" if scale < 0 else ">f4"
        return np.frombuffer(f.read(w * h * 4), dtype=dt).reshape(h, w)[::-1].astype(np.float32)


def write_pfm(path, a):
    """Write the 2-D array a (top row first) to path as a little-endian grey
    PFM, through a temporary file renamed into place."""
    h, w = a.shape
    tmp = path + ".tmp"
    with open(tmp, "wb") as f:
        f.write(b"Pf\n%d %d\n-1.0\n" % (w, h))
        f.write(np.ascontiguousarray(a[::-1], dtype="<f4").tobytes())
        f.flush()
        os.fsync(f.fileno())
    os.replace(tmp, path)


def write_disparity(path, d):
    """Write the disparity map d (pixels, +inf unknown) with write_pfm and
    print its size, how many pixels are known and unknown, and its range."""
    write_pfm(path, d)
    fin = d[np.isfinite(d)]
    print("disparity %dx%d: %d known, %d unknown, range %.4f..%.4f px"
          % (d.shape[1], d.shape[0], fin.size, d.size - fin.size, fin.min(), fin.max()))
