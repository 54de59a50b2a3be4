#!/usr/bin/python3
"""Reference score traces for tests/reference_test.cc.

Usage: pearson_reference.py X.f32 T.f32 OUT_NUMPY.f32 OUT_OPENCV.f32

Reads raw float32 signal X and template T and writes two traces of length
len(X) - len(T) + 1:
  - numpy: the Pearson correlation coefficient of T with every window of X,
    computed directly in float64 (numpy.lib.stride_tricks.sliding_window_view);
  - OpenCV: cv2.matchTemplate(X, T, cv2.TM_CCOEFF_NORMED) on 1-row images,
    OpenCV's own zero-mean normalized cross-correlation.
"""
import sys

import numpy as np
import cv2


def numpy_pearson(x, t):
    w = np.lib.stride_tricks.sliding_window_view(x.astype(np.float64), len(t))
    t0 = t.astype(np.float64) - t.mean(dtype=np.float64)
    w0 = w - w.mean(axis=1, keepdims=True)
    num = w0 @ t0
    den = np.sqrt((w0 * w0).sum(axis=1)) * np.sqrt((t0 * t0).sum())
    return np.where(den > 0, num / np.where(den > 0, den, 1), 0.0)


def main():
    x = np.fromfile(sys.argv[1], dtype=np.float32)
    t = np.fromfile(sys.argv[2], dtype=np.float32)
    numpy_pearson(x, t).astype(np.float32).tofile(sys.argv[3])
    cv = cv2.matchTemplate(x.reshape(1, -1), t.reshape(1, -1), cv2.TM_CCOEFF_NORMED)
    cv.reshape(-1).astype(np.float32).tofile(sys.argv[4])


if __name__ == "__main__":
    main()
