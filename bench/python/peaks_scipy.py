#!/usr/bin/env python3
"""The peak search alone, in numpy/scipy, for comparison with findPeaks (bench/process.ts): the same
steps as ours, taken from whole_job_scipy.py (Kα2-stripped find_peaks, grouped pseudo-Voigt + Kα2 fits
by least_squares with an analytic Jacobian, the same acceptance rules).

Usage: peaks_scipy.py PATTERN.xy LAMBDA1 LAMBDA2 RATIO [REPEATS]
Prints one JSON object: medianMs, minMs, maxMs over the repeats (after one warm-up run), peaks found,
and the package versions.
"""
import json
import os
import statistics
import sys
import time

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import numpy as np  # noqa: E402
import scipy  # noqa: E402
import whole_job_scipy as peer  # noqa: E402


def main():
    path = sys.argv[1]
    peer.LAMBDA1, peer.LAMBDA2, peer.KA2_RATIO = float(sys.argv[2]), float(sys.argv[3]), float(sys.argv[4])
    repeats = int(sys.argv[5]) if len(sys.argv) > 5 else 7
    x, y = peer.read_pattern(path)
    peaks, _ = peer.find_and_fit_peaks(x, y)  # warm-up
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        peaks, _ = peer.find_and_fit_peaks(x, y)
        times.append((time.perf_counter() - t0) * 1000)
    print(json.dumps({"medianMs": statistics.median(times), "minMs": min(times), "maxMs": max(times),
                      "peaks": len(peaks), "numpy": np.__version__, "scipy": scipy.__version__}))


if __name__ == "__main__":
    main()
