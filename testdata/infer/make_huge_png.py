#!/usr/bin/python3
"""Writes testdata/infer/huge_header.png: a valid PNG header (IHDR, CRC
correct) claiming 60000x60000 8-bit grey pixels, with one tiny IDAT chunk.
Decoding it would allocate 3.6 GB; the commands must refuse it from the
header (TestHugeImageHeader in examples/estimate, TestFramesHugeHeader in
model/demo). Python standard library only:

    /usr/bin/python3 testdata/infer/make_huge_png.py
"""
import struct
import zlib


def chunk(kind, data):
    return struct.pack(">I", len(data)) + kind + data + struct.pack(">I", zlib.crc32(kind + data) & 0xFFFFFFFF)


ihdr = struct.pack(">IIBBBBB", 60000, 60000, 8, 0, 0, 0, 0)
with open("testdata/infer/huge_header.png", "wb") as f:
    f.write(b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", ihdr) + chunk(b"IDAT", zlib.compress(b"\x00" * 16)) + chunk(b"IEND", b""))
