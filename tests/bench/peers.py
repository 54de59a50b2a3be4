#!/usr/bin/python3
"""Peers for godwit_bench throughput: the same normalized cross-correlation
through general-purpose libraries from Debian.

  scipy: scipy.signal.correlate(x, t0, mode='valid', method='fft') with the
         window energies from cumulative sums (float64).
  OpenCV: cv2.matchTemplate(x, t, cv2.TM_CCOEFF_NORMED) on 1-row images.

Usage: peers.py DIR K RATE   (DIR holds x.f32 and t0.f32 .. t{K-1}.f32)
Prints audio seconds per CPU second, overall and per template.
"""
import sys
import time

import numpy as np
import scipy.signal
import cv2


def scipy_ncc(x, t):
    t0 = t.astype(np.float64) - t.mean(dtype=np.float64)
    t0 /= np.sqrt((t0 * t0).sum())
    num = scipy.signal.correlate(x, t0, mode="valid", method="fft")
    m = len(t)
    c1 = np.concatenate(([0.0], np.cumsum(x)))
    c2 = np.concatenate(([0.0], np.cumsum(x * x)))
    s1 = c1[m:] - c1[:-m]
    s2 = c2[m:] - c2[:-m]
    e = np.maximum(s2 - s1 * s1 / m, 1e-20)
    return num / np.sqrt(e)


def main():
    d, k, rate = sys.argv[1], int(sys.argv[2]), float(sys.argv[3])
    x = np.fromfile(f"{d}/x.f32", dtype=np.float32)
    ts = [np.fromfile(f"{d}/t{i}.f32", dtype=np.float32) for i in range(k)]
    audio_s = len(x) / rate
    x64 = x.astype(np.float64)
    c0 = time.process_time()
    peaks_scipy = [float(np.max(np.abs(scipy_ncc(x64, t)))) for t in ts]
    c_scipy = time.process_time() - c0
    c0 = time.process_time()
    peaks_cv = [float(np.max(np.abs(cv2.matchTemplate(x.reshape(1, -1), t.reshape(1, -1), cv2.TM_CCOEFF_NORMED))))
                for t in ts]
    c_cv = time.process_time() - c0
    print(f"  peers on {audio_s / 60:.0f} min x {k} templates (audio-s per CPU-s; per template = x templates):")
    for name, c in (("scipy.signal.correlate(fft)+cumsum", c_scipy), ("OpenCV matchTemplate CCOEFF_NORMED", c_cv)):
        print(f"  {name:<34} {audio_s / c:14.0f} {audio_s * k / c:12.0f}")
    print(f"  (peak |r| agree: max difference {max(abs(a - b) for a, b in zip(peaks_scipy, peaks_cv)):.1e})")


if __name__ == "__main__":
    main()
