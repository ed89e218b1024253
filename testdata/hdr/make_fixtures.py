#!/usr/bin/python3
"""Writes the OpenCV-made fixtures of testdata/hdr with Debian's python3-opencv.

Run from this directory: /usr/bin/python3 make_fixtures.py
The pixel values follow fixture_value below; assets/hdr/fixture_test.go
computes the same values and checks that Patina reads these files as the
documented RGBE convention and exact PFM storage say.
"""
import cv2
import numpy as np


def fixture_value(x, y, c):
    # Exact in float32: small integers over 16 times a power of two.
    if (x, y) == (0, 0):
        return 0.0
    if (x, y) == (1, 0) and c > 0:
        return 0.0
    return ((x * 7 + y * 13 + c * 29) % 97 + 1) / 16.0 * 2.0 ** ((x + y) % 7 - 3)


def image(w, h):
    a = np.zeros((h, w, 3), np.float32)
    for y in range(h):
        for x in range(w):
            for c in range(3):
                a[y, x, c] = fixture_value(x, y, c)
    return a


def write(name, rgb):
    if rgb.ndim == 3:
        rgb = np.ascontiguousarray(rgb[:, :, ::-1])  # OpenCV is BGR
    assert cv2.imwrite(name, rgb), name


write('opencv-rle-37x5.hdr', image(37, 5))
write('opencv-flat-6x4.hdr', image(6, 4))
write('opencv-colour-7x3.pfm', image(7, 3))
write('opencv-grey-5x4.pfm', np.ascontiguousarray(image(5, 4)[:, :, 0]))
print('OpenCV', cv2.__version__)
