#!/usr/bin/python3
"""Golden values for the process tests, from scipy (run with Debian's /usr/bin/python3).

Writes process-golden.json beside this script: inputs and scipy's outputs for
  - scipy.signal.savgol_filter (mode='interp') for several windows, orders and derivatives;
  - scipy.signal.find_peaks with per-point height and prominence limits;
  - scipy.optimize.curve_fit of a pseudo-Voigt on a sloping line (sigma given, absolute_sigma=False);
  - FWHM and integral breadth of pseudo-Voigt and Voigt profiles by numerical integration
    (the Voigt from scipy.special.voigt_profile).
The tests only read the JSON; they never run Python.
"""
import json
import os
import platform

import numpy as np
import scipy
from scipy.optimize import curve_fit
from scipy.signal import find_peaks, savgol_filter
from scipy.special import voigt_profile

rng = np.random.default_rng(20240601)
out = {
    "made_by": "test/golden/process/make_golden.py",
    "versions": {"python": platform.python_version(), "numpy": np.__version__, "scipy": scipy.__version__},
}

# --- Savitzky-Golay -----------------------------------------------------------------------
n = 301
t = np.arange(n)
signal = 200 * np.exp(-0.5 * ((t - 120) / 6.0) ** 2) + 80 * np.exp(-0.5 * ((t - 190) / 3.0) ** 2) + 50 + 0.1 * t
noisy = rng.poisson(signal).astype(float)
cases = []
for window, order, deriv, delta in [(5, 2, 0, 1.0), (7, 3, 0, 1.0), (11, 4, 0, 1.0), (21, 2, 0, 1.0), (9, 6, 0, 1.0),
                                    (15, 3, 1, 0.02), (15, 4, 2, 0.02), (3, 0, 0, 1.0)]:
    y = savgol_filter(noisy, window, order, deriv=deriv, delta=delta, mode="interp")
    cases.append({"window": window, "order": order, "deriv": deriv, "delta": delta, "y": y.tolist()})
out["savgol"] = {"input": noisy.tolist(), "cases": cases}

# --- find_peaks ---------------------------------------------------------------------------
m = 2000
x = np.arange(m)
base = 40 + 10 * np.sin(x / 300)
peaks_true = [(150, 60, 4), (400, 25, 5), (405, 18, 3), (900, 300, 6), (1300, 12, 4), (1700, 45, 8), (1705, 45, 8)]
clean = base.copy()
for c, h, s in peaks_true:
    clean += h * np.exp(-0.5 * ((x - c) / s) ** 2)
raw = rng.poisson(clean).astype(float)
smooth = savgol_filter(raw, 9, 3, mode="interp")
net = smooth - base
height = 3 * np.sqrt(base)
prominence = 3 * np.sqrt(np.maximum(smooth, base))
idx, props = find_peaks(net, height=height, prominence=prominence)
plateau = np.array([0, 1, 3, 3, 3, 1, 0, 2, 5, 5, 2, 2, 4, 1, 1, 6, 6, 6, 6, 0], dtype=float)
pidx, pprops = find_peaks(plateau, height=0.5, prominence=0.5)
out["find_peaks"] = {
    "signal": net.tolist(), "height": height.tolist(), "prominence": prominence.tolist(),
    "peaks": idx.tolist(), "prominences": props["prominences"].tolist(),
    "left_bases": props["left_bases"].tolist(), "right_bases": props["right_bases"].tolist(),
    "plateau": {"signal": plateau.tolist(), "peaks": pidx.tolist(), "prominences": pprops["prominences"].tolist()},
}

# --- curve_fit of a pseudo-Voigt (unit-height form, FWHM w, mixing eta) on a line ----------
LN2 = np.log(2)


LORENTZ_NORM = 2 / np.pi
GAUSS_NORM = 2 * np.sqrt(LN2 / np.pi)


def pv(x, a, b, height, pos, w, eta):
    """Line plus a pseudo-Voigt of the given height: eta mixes unit-area Lorentzian and Gaussian of FWHM w."""
    u = (x - pos) / w
    mixed = eta * LORENTZ_NORM / (1 + 4 * u * u) + (1 - eta) * GAUSS_NORM * np.exp(-4 * LN2 * u * u)
    return a + b * x + height * mixed / (eta * LORENTZ_NORM + (1 - eta) * GAUSS_NORM)


fits = []
for pos, w, eta, height, bg, step in [(30.0, 0.12, 0.4, 900.0, 120.0, 0.01), (45.5, 0.3, 0.7, 150.0, 40.0, 0.02), (70.2, 0.08, 0.2, 5000.0, 300.0, 0.005)]:
    xf = np.arange(pos - 12 * w, pos + 12 * w + step / 2, step)
    mean = pv(xf, bg, -0.5, height, pos, w, eta)
    yf = rng.poisson(mean).astype(float)
    sig = np.sqrt(np.maximum(yf, 1))
    p0 = [bg * 0.9, 0.0, height * 0.8, pos + 0.3 * w, w * 1.3, 0.5]
    popt, pcov = curve_fit(pv, xf, yf, p0=p0, sigma=sig, absolute_sigma=False, maxfev=20000)
    psig = np.sqrt(np.diag(pcov))
    fits.append({
        "x": xf.tolist(), "y": yf.tolist(), "sigma": sig.tolist(),
        "params": dict(zip(["a", "b", "height", "position", "fwhm", "eta"], popt.tolist())),
        "sigmas": dict(zip(["a", "b", "height", "position", "fwhm", "eta"], psig.tolist())),
        "redchi2": float(np.sum(((yf - pv(xf, *popt)) / sig) ** 2) / (len(xf) - 6)),
    })
out["curve_fit"] = fits

# --- FWHM and integral breadth by numerical integration -----------------------------------
def numeric_fwhm(xs, ys):
    """FWHM of a symmetric profile centred at 0 sampled on xs, half-maximum crossing interpolated."""
    top = ys[len(ys) // 2]
    i_hi = np.nonzero(ys >= top / 2)[0][-1]
    x1, x2, y1, y2 = xs[i_hi], xs[i_hi + 1], ys[i_hi], ys[i_hi + 1]
    return float(2 * (x1 + (top / 2 - y1) * (x2 - x1) / (y2 - y1)))


pv_cases = []
for fwhm, eta in [(0.1, 0.0), (0.1, 0.3), (0.2, 0.6), (0.05, 1.0)]:
    def f(xx, fwhm=fwhm, eta=eta):
        return pv(xx, 0.0, 0.0, 1.0, 0.0, fwhm, eta)
    # Lorentzian tails: integrate far out, plus the tail beyond ±R in closed form.
    R = 2000 * fwhm
    xs = np.linspace(-R, R, 4000001)
    ys = f(xs)
    lorentz_height_share = eta * LORENTZ_NORM / (eta * LORENTZ_NORM + (1 - eta) * GAUSS_NORM)
    area = np.trapz(ys, xs) + lorentz_height_share * fwhm * (np.pi / 2 - np.arctan(2 * R / fwhm))
    fw = numeric_fwhm(xs, ys)
    pv_cases.append({"fwhm": fwhm, "eta": eta, "numericFwhm": fw, "numericIntegralBreadth": float(area)})

voigt_cases = []
for gG, gL in [(0.1, 0.0), (0.1, 0.02), (0.1, 0.05), (0.08, 0.08), (0.05, 0.1), (0.02, 0.1), (0.001, 0.1)]:
    sigma = gG / (2 * np.sqrt(2 * LN2))
    gamma = gL / 2
    R = 4000 * max(gG, gL)
    xs = np.linspace(-R, R, 8000001)
    ys = voigt_profile(xs, sigma, gamma)
    top = float(voigt_profile(0.0, sigma, gamma))
    fw = numeric_fwhm(xs, ys)
    # voigt_profile has unit area, so integral breadth = 1 / peak height (the numerical area is recorded too).
    area = float(np.trapz(ys, xs))
    voigt_cases.append({"gaussianFwhm": gG, "lorentzianFwhm": gL, "numericFwhm": float(fw),
                        "numericArea": area, "integralBreadth": 1.0 / top})
out["widths"] = {"pseudoVoigt": pv_cases, "voigt": voigt_cases}

path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "process-golden.json")
with open(path, "w") as fh:
    json.dump(out, fh)
print("wrote", path)
