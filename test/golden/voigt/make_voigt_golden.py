"""Golden values for the accuracy-test simulator's Voigt profile (test/simulator/voigt.ts).
Source: scipy.special.voigt_profile and scipy.special.erfcx. Run: /usr/bin/python3 make_voigt_golden.py"""
import json
import numpy as np
import scipy
from scipy.special import voigt_profile, erfcx

cases = []
for sigma, gamma in [(1.0, 0.0), (1.0, 0.01), (1.0, 0.3), (0.5, 1.0), (0.05, 0.02), (0.02, 0.08), (1e-3, 1.0), (0.7, 0.7)]:
    fw = 2.3548 * sigma + 2 * gamma
    for x in np.linspace(-6 * fw, 6 * fw, 13):
        v = float(voigt_profile(x, sigma, gamma))
        if v > 1e-8 * float(voigt_profile(0.0, sigma, gamma)):
            cases.append({"x": float(x), "sigma": sigma, "gamma": gamma, "value": v})
# k = βL/(√π βG) for σ = 0.05, γ = 0.03 (the integral-breadth test case) is 0.03/(0.05·√2).
erfcx_cases = [{"y": y, "value": float(erfcx(y))} for y in [0.0, 0.01, 0.1, 0.5, 1.0, 2.0, 5.0, 20.0, 0.03 / (0.05 * np.sqrt(2))]]
json.dump({"source": f"scipy {scipy.__version__} scipy.special.voigt_profile / erfcx", "voigt": cases, "erfcx": erfcx_cases},
          open("voigt-profile.json", "w"), indent=1)
