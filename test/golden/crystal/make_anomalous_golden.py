#!/usr/bin/python3
"""Golden values for anomalous dispersion, computed with xraylib (an outside reference).

Writes anomalous-scattering.json beside this script:
  lines      for each anode Kα1 of src/pattern/wavelengths.ts: wavelength, energy E = hc/λ
             (hc = 12.398419843320026 keV·Å) and, for each element of src/crystal/scattering-factors.ts,
             f' = xraylib.Fi(Z, E) and f'' = -xraylib.Fii(Z, E) (xraylib's structure factor uses
             f0 + Fi - i·Fii with exp(+2πi h·x), so f'' > 0 in the usual convention)
  crystals   crystals of xraylib's own list (Crystal_GetCrystal): cell, every atom of the cell, and for
             a few hkl at Cu Kα1 the complex F_H of Crystal_F_H_StructureFactor (debye factor 1,
             rel_angle 1: f0 + f' + i f'' with no displacement) and the f0-only F_H of
             Crystal_F_H_StructureFactor_Partial(..., 2, 0, 0). xraylib's f0 is FF_Rayl (Hubbell's
             tables), not the International Tables Cromer–Mann fit, so |F| agrees to about 1 %, not exactly.

Run with Debian's python (xraylib 4.0): /usr/bin/python3 test/golden/crystal/make_anomalous_golden.py
CI never runs this script; it only reads the JSON file.
"""
import importlib.util
import json
import os
import sys

import xraylib

HERE = os.path.dirname(os.path.abspath(__file__))
spec = importlib.util.spec_from_file_location('export_anomalous_table', os.path.join(HERE, 'export_anomalous_table.py'))
exporter = importlib.util.module_from_spec(spec)
spec.loader.exec_module(exporter)

CRYSTALS = {
    # name in xraylib: reflections (both hkl and -h-k-l for the non-centrosymmetric ones)
    'Diamond': [(1, 1, 1), (2, 2, 0), (3, 1, 1), (4, 0, 0)],
    'Si': [(1, 1, 1), (2, 2, 0), (3, 1, 1), (4, 0, 0), (3, 3, 1), (4, 2, 2)],
    'Ge': [(1, 1, 1), (2, 2, 0), (3, 1, 1), (4, 0, 0), (3, 3, 1)],
    'LiF': [(1, 1, 1), (2, 0, 0), (2, 2, 0), (3, 1, 1), (2, 2, 2)],
    'NaCl': [(1, 1, 1), (2, 0, 0), (2, 2, 0), (3, 1, 1), (2, 2, 2), (4, 0, 0)],
    'GaAs': [(1, 1, 1), (-1, -1, -1), (2, 0, 0), (-2, 0, 0), (2, 2, 0), (3, 1, 1), (-3, -1, -1), (4, 0, 0)],
    'InSb': [(1, 1, 1), (-1, -1, -1), (2, 0, 0), (-2, 0, 0), (2, 2, 0), (3, 1, 1), (-3, -1, -1)],
    'Gold': [(1, 1, 1), (2, 0, 0), (2, 2, 0), (3, 1, 1), (2, 2, 2)],
}


def crystal_case(name, hkls, energy):
    c = xraylib.Crystal_GetCrystal(name)
    atoms = [[xraylib.AtomicNumberToSymbol(a['Zatom']), a['fraction'], a['x'], a['y'], a['z']] for a in c['atom']]
    rows = []
    for h, k, l in hkls:
        full = xraylib.Crystal_F_H_StructureFactor(c, energy, h, k, l, 1.0, 1.0)
        f0_only = xraylib.Crystal_F_H_StructureFactor_Partial(c, energy, h, k, l, 1.0, 1.0, 2, 0, 0)
        rows.append([h, k, l, full.real, full.imag, f0_only.real, f0_only.imag])
    return {
        'name': name,
        'cell': [c['a'], c['b'], c['c'], c['alpha'], c['beta'], c['gamma']],
        'atoms': atoms,
        'reflections': rows,
    }


def main():
    lines = {}
    symbols = exporter.elements()
    for anode, wavelength in exporter.anode_lines().items():
        energy = exporter.HC_KEV_ANGSTROM / wavelength
        terms = {}
        for symbol in symbols:
            z = xraylib.SymbolToAtomicNumber(symbol)
            terms[symbol] = [xraylib.Fi(z, energy), -xraylib.Fii(z, energy)]
        lines[anode] = {'wavelengthAngstrom': wavelength, 'energyKeV': energy, 'terms': terms}
    cu_energy = lines['Cu']['energyKeV']
    payload = {
        'generatedBy': 'test/golden/crystal/make_anomalous_golden.py',
        'versions': {'xraylib': xraylib.__version__, 'python': sys.version.split()[0]},
        'hcKeVAngstrom': exporter.HC_KEV_ANGSTROM,
        'lines': lines,
        'structureFactors': {
            'source': 'xraylib Crystal_F_H_StructureFactor (f0 = FF_Rayl, + Fi - i·Fii), debye factor 1, rel_angle 1, Cu Kα1',
            'energyKeV': cu_energy,
            'wavelengthAngstrom': lines['Cu']['wavelengthAngstrom'],
            'atomFormat': '[element, fraction, x, y, z]',
            'rowFormat': '[h, k, l, Re F, Im F (f0 + f\' + i f\'\'), Re F, Im F (f0 only)]',
            'crystals': [crystal_case(name, hkls, cu_energy) for name, hkls in CRYSTALS.items()],
        },
    }
    path = os.path.join(HERE, 'anomalous-scattering.json')
    with open(path, 'w') as f:
        json.dump(payload, f, indent=None, separators=(',', ':'))
        f.write('\n')
    print('wrote', path)


if __name__ == '__main__':
    main()
