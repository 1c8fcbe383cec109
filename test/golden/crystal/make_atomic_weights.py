#!/usr/bin/python3
"""Write atomic-weights.json: gemmi's atomic weights for the elements of the project's tables.

Run with Debian's python: /usr/bin/python3 test/golden/crystal/make_atomic_weights.py
"""
import json
import os

import gemmi

ELEMENTS = (
    "H He Li Be B C N O F Ne Na Mg Al Si P S Cl Ar K Ca Sc Ti V Cr Mn Fe Co Ni Cu Zn Ga Ge As Se Br Kr "
    "Rb Sr Y Zr Nb Mo Tc Ru Rh Pd Ag Cd In Sn Sb Te I Xe Cs Ba La Ce Pr Nd Pm Sm Eu Gd Tb Dy Ho Er Tm Yb "
    "Lu Hf Ta W Re Os Ir Pt Au Hg Tl Pb Bi Po At Rn Fr Ra Ac Th Pa U Np Pu Am Cm Bk Cf"
).split()

out = {
    "source": "gemmi.Element(symbol).weight",
    "versions": {"gemmi": gemmi.__version__},
    "weights": {symbol: gemmi.Element(symbol).weight for symbol in ELEMENTS},
}
path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "atomic-weights.json")
with open(path, "w") as f:
    json.dump(out, f, indent=1)
    f.write("\n")
print("wrote", path)
