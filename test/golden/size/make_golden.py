"""Make voigt-breadths.json: FWHM and integral breadth of Voigt profiles of known Gaussian and
Lorentzian parts, computed with scipy.special.voigt_profile, to check the de Keijser et al. (1982)
decomposition and the Voigt breadth formulas used in src/size/voigt.ts.

Run with the Debian Python: /usr/bin/python3 test/golden/size/make_golden.py
"""
import json
import os
import platform

import numpy as np
import scipy
from scipy.optimize import brentq
from scipy.special import voigt_profile

cases = []
# sigma: Gaussian standard deviation; gamma: Lorentzian half width at half maximum (scipy's parameters).
ratios = [0.0, 0.02, 0.05, 0.1, 0.2, 0.35, 0.5, 0.75, 1.0, 1.5, 2.0, 3.0, 5.0, 10.0, 30.0]
for r in ratios:
    sigma = 1.0 if r <= 1 else 1.0 / r
    gamma = r * sigma
    height = float(voigt_profile(0.0, sigma, gamma))
    half = brentq(lambda x: voigt_profile(x, sigma, gamma) - height / 2, 0.0, 1e3, xtol=1e-14, rtol=1e-14)
    cases.append({
        "sigma": sigma,
        "gamma": gamma,
        "fwhm": 2 * half,
        "integralBreadth": 1.0 / height,
        "lorentzianIntegralBreadth": float(np.pi * gamma),
        "gaussianIntegralBreadth": float(sigma * np.sqrt(2 * np.pi)),
    })

out = {
    "made_by": "test/golden/size/make_golden.py",
    "python": platform.python_version(),
    "numpy": np.__version__,
    "scipy": scipy.__version__,
    "function": "scipy.special.voigt_profile(x, sigma, gamma); FWHM by scipy.optimize.brentq; integral breadth = 1 / peak height (unit area)",
    "cases": cases,
}
path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "voigt-breadths.json")
with open(path, "w") as f:
    json.dump(out, f, indent=1)
    f.write("\n")
print(f"wrote {len(cases)} cases to {path}")
