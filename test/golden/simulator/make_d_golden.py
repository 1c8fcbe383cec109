"""Golden d-spacings for the accuracy-test simulator's metric (test/simulator/cell.ts), from gemmi's
UnitCell.calculate_d (Debian package python3-gemmi). Run: /usr/bin/python3 make_d_golden.py"""
import json, gemmi
cells = [
    (5.43123, 5.43123, 5.43123, 90, 90, 90),
    (4.5937, 4.5937, 2.9587, 90, 90, 90),
    (3.2498, 3.2498, 5.2066, 90, 90, 120),
    (5.6, 7.3, 8.9, 90, 90, 90),
    (8.0026, 5.40718, 7.62429, 90, 101.9158, 90),
    (5.1, 6.2, 7.3, 81.5, 97.2, 104.9),
]
hkls = [(1, 0, 0), (1, 1, 1), (2, -1, 3), (0, 3, -2), (4, 2, 1), (-3, 1, 5), (1, -2, -2)]
rows = []
for cell in cells:
    uc = gemmi.UnitCell(*cell)
    rows.append({"cell": cell, "d": [[list(h), uc.calculate_d(list(h))] for h in hkls]})
json.dump({"source": "gemmi %s UnitCell.calculate_d" % gemmi.__version__, "cells": rows}, open("d-spacings.json", "w"), indent=1)
