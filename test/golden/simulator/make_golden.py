"""Make voigt-profile.json: values of the unit-area Voigt profile from scipy.special.voigt_profile, to
check the test simulator's own Voigt (test/simulator/voigt.ts, Humlicek 1982).

Run with the Debian Python: /usr/bin/python3 test/golden/simulator/make_golden.py
"""
import json
import os
import platform

import scipy
from scipy.special import voigt_profile

cases = []
# sigma: Gaussian standard deviation; gamma: Lorentzian half width at half maximum (scipy's parameters).
for sigma, gamma in [(1.0, 0.0), (1.0, 0.05), (1.0, 0.3), (1.0, 1.0), (0.5, 2.0), (0.1, 1.0), (0.02, 0.5), (0.3, 0.001)]:
    for x in [0.0, 0.3, 1.0, 2.5, 6.0, 20.0]:
        cases.append({"x": x, "sigma": sigma, "gamma": gamma, "value": float(voigt_profile(x, sigma, gamma))})

out = {
    "source": f"scipy {scipy.__version__} scipy.special.voigt_profile, Python {platform.python_version()}",
    "cases": cases,
}
with open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "voigt-profile.json"), "w") as f:
    json.dump(out, f, indent=1)
