#!/usr/bin/python3
"""The peak-search job done the way a scientist would in Python, for comparison with findPeaks.

Usage: peaks_scipy.py PATTERN.xy LAMBDA1 LAMBDA2 RATIO [REPEATS]
Steps: savgol_filter smoothing, SNIP background (LLS operator, decreasing window) in numpy, find_peaks
with a 3-sigma height and prominence (sigma = sqrt(background counts)), then curve_fit of a
pseudo-Voigt with its K-alpha2 partner and a straight line, one peak at a time in its own window.
Prints one JSON object: medianMs, minMs, maxMs over the repeats (after one warm-up run), peaks found,
and the package versions.
"""
import json
import statistics
import sys
import time

import numpy as np
import scipy
from scipy.optimize import curve_fit
from scipy.signal import find_peaks, savgol_filter

LN2 = np.log(2)
L_NORM = 2 / np.pi
G_NORM = 2 * np.sqrt(LN2 / np.pi)


def snip(x, y, half_width_deg=1.0):
    v = np.log(np.log(np.sqrt(np.maximum(y, 0) + 1) + 1) + 1)
    step = np.gradient(x)
    p_max = int(round(half_width_deg / np.median(step)))
    n = len(v)
    for p in range(p_max, 0, -1):
        mean = 0.5 * (v[: n - 2 * p] + v[2 * p:])
        v[p: n - p] = np.minimum(v[p: n - p], mean)
    return (np.exp(np.exp(v) - 1) - 1) ** 2 - 1


def make_model(lambda1, lambda2, ratio):
    def pv(x, pos, w, eta):
        u = (x - pos) / w
        mixed = eta * L_NORM / (1 + 4 * u * u) + (1 - eta) * G_NORM * np.exp(-4 * LN2 * u * u)
        return mixed / (eta * L_NORM + (1 - eta) * G_NORM)

    def model(x, a, b, height, pos, w, eta):
        pos2 = 2 * np.degrees(np.arcsin(np.clip(lambda2 / lambda1 * np.sin(np.radians(pos / 2)), -1, 1)))
        return a + b * (x - pos) + height * (pv(x, pos, w, eta) + ratio * pv(x, pos2, w, eta))

    return model


def job(x, y, lambda1, lambda2, ratio):
    smooth = savgol_filter(y, 5, 3)
    background = snip(x, savgol_filter(y, 25, 2))
    sigma = np.sqrt(np.maximum(background, 1))
    net = smooth - background
    idx, _ = find_peaks(net, height=3 * sigma, prominence=3 * np.sqrt(np.maximum(smooth, 1)))
    model = make_model(lambda1, lambda2, ratio)
    step = x[1] - x[0]
    found = []
    for i in idx:
        pos = x[i]
        w = 0.08
        lo = np.searchsorted(x, pos - 15 * w)
        hi = np.searchsorted(x, pos + 0.6 + 15 * w)
        xs, ys = x[lo:hi], y[lo:hi]
        p0 = [background[i], 0.0, max(net[i], 1.0), pos, w, 0.5]
        try:
            popt, _ = curve_fit(model, xs, ys, p0=p0, sigma=np.sqrt(np.maximum(ys, 1)), maxfev=2000)
            found.append(popt[3])
        except RuntimeError:
            pass
    return found


def main():
    path, lambda1, lambda2, ratio = sys.argv[1], float(sys.argv[2]), float(sys.argv[3]), float(sys.argv[4])
    repeats = int(sys.argv[5]) if len(sys.argv) > 5 else 7
    data = np.loadtxt(path)
    x, y = data[:, 0], data[:, 1]
    found = job(x, y, lambda1, lambda2, ratio)  # warm-up
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        found = job(x, y, lambda1, lambda2, ratio)
        times.append((time.perf_counter() - t0) * 1000)
    print(json.dumps({"medianMs": statistics.median(times), "minMs": min(times), "maxMs": max(times),
                      "peaks": len(found), "numpy": np.__version__, "scipy": scipy.__version__}))


if __name__ == "__main__":
    main()
