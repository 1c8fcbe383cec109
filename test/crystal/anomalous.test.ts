import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { ANOMALOUS_SCATTERING } from '../../src/core/crystal/anomalous-scattering.js';
import { computePowderLines, referenceFromStructure } from '../../src/core/crystal/powder.js';
import { SCATTERING_FACTORS } from '../../src/core/crystal/scattering-factors.js';
import { getSpaceGroup } from '../../src/core/crystal/space-groups.js';
import {
  dispersionForWavelength,
  expandToUnitCell,
  formFactor,
  powderStructureFactorSquared,
  structureFactorContext,
  structureFactorSquared,
} from '../../src/core/crystal/structure-factors.js';
import type { CrystalStructure } from '../../src/core/crystal/structure.js';
import { ANODE_LINES, anodeWavelength, singleWavelength, type AnodeName } from '../../src/core/model/wavelengths.js';

type Atom = [string, number, number, number, number];
type Row = [number, number, number, number, number, number, number];

// Golden values from xraylib 4.0 (Fi, Fii, Crystal_F_H_StructureFactor), made by
// test/golden/crystal/make_anomalous_golden.py.
const golden = JSON.parse(readFileSync(new URL('../golden/crystal/anomalous-scattering.json', import.meta.url), 'utf8')) as {
  lines: Record<string, { wavelengthAngstrom: number; energyKeV: number; terms: Record<string, [number, number]> }>;
  structureFactors: { wavelengthAngstrom: number; crystals: Array<{ name: string; cell: number[]; atoms: Atom[]; reflections: Row[] }> };
};

const CU_TERMS = ANOMALOUS_SCATTERING.Cu.terms;

/** Every atom of the cell as its own site of a P 1 structure, no displacement. */
function p1Structure(name: string, cell: readonly number[], atoms: ReadonlyArray<Atom>): CrystalStructure {
  const spaceGroup = getSpaceGroup('P 1');
  const [a, b, c, alpha, beta, gamma] = cell;
  return {
    name,
    formula: null,
    cell: { a, b, c, alpha, beta, gamma, spaceGroup: spaceGroup.symbol },
    spaceGroup,
    sites: atoms.map(([element, occupancy, x, y, z], i) => ({ label: `${element}${i}`, element, typeSymbol: element, x, y, z, occupancy, uIso: 0, line: 0 })),
    source: 'test',
    notes: [],
    fileName: `${name} (test)`,
  };
}

function inverseD2(cell: readonly number[], h: number, k: number, l: number): number {
  // Cubic cells only (all golden crystals are cubic).
  return (h * h + k * k + l * l) / (cell[0] * cell[0]);
}

describe("anomalous-dispersion table (f', f'')", () => {
  it('holds every element of the scattering-factor table at every anode Kα1 line of wavelengths.ts', () => {
    const elements = Object.keys(SCATTERING_FACTORS).sort();
    for (const anode of Object.keys(ANODE_LINES) as AnodeName[]) {
      expect(ANOMALOUS_SCATTERING[anode].wavelengthAngstrom, anode).toBe(ANODE_LINES[anode].kAlpha1);
      expect(Object.keys(ANOMALOUS_SCATTERING[anode].terms).sort(), anode).toEqual(elements);
    }
  });

  it("equals xraylib 4.0 Fi and -Fii to 1e-6 for every element and anode", () => {
    // xraylib 4.0 Fi(Z, E), Fii(Z, E) at E = hc/λ (golden file, versions recorded in it).
    expect(Object.keys(golden.lines).sort()).toEqual(Object.keys(ANOMALOUS_SCATTERING).sort());
    for (const [anode, line] of Object.entries(golden.lines)) {
      const ours = ANOMALOUS_SCATTERING[anode as AnodeName];
      expect(ours.wavelengthAngstrom).toBe(line.wavelengthAngstrom);
      expect(ours.energyKeV).toBeCloseTo(line.energyKeV, 9);
      for (const [element, [fp, fpp]] of Object.entries(line.terms)) {
        expect(Math.abs(ours.terms[element][0] - fp), `${anode} ${element} f'`).toBeLessThanOrEqual(1e-6);
        expect(Math.abs(ours.terms[element][1] - fpp), `${anode} ${element} f''`).toBeLessThanOrEqual(1e-6);
      }
    }
  });

  it("has the usual signs and sizes for Pb at Cu Kα: f' ≈ −4.1, f'' ≈ +8.5", () => {
    // International Tables Vol. C, Table 4.2.6.8 (from memory): Pb, Cu Kα f' = −4.08, f'' = 8.51.
    const [fp, fpp] = CU_TERMS.Pb;
    expect(Math.abs(fp - -4.08)).toBeLessThan(0.3);
    expect(Math.abs(fpp - 8.51)).toBeLessThan(0.3);
  });
});

describe('which dispersion a wavelength gets', () => {
  it('takes the anode line within 0.1 % of λ, none beyond, and none when switched off', () => {
    const cu = ANODE_LINES.Cu.kAlpha1;
    expect(dispersionForWavelength(cu).terms).toBe(CU_TERMS);
    expect(dispersionForWavelength(1.5406).description).toMatch(/Cu Kα1/);
    expect(dispersionForWavelength(cu * 1.0009).terms).toBe(CU_TERMS);
    expect(dispersionForWavelength(cu * 1.0011).terms).toBeNull();
    expect(dispersionForWavelength(ANODE_LINES.Mo.kAlpha1).terms).toBe(ANOMALOUS_SCATTERING.Mo.terms);
    expect(dispersionForWavelength(cu, false).terms).toBeNull();
  });

  it('names the dispersion used in a computed reference', () => {
    const gold = p1Structure('gold', [4.0782, 4.0782, 4.0782, 90, 90, 90], [['Au', 1, 0, 0, 0]]);
    expect(referenceFromStructure(gold, { wavelength: anodeWavelength('Cu') }).intensityBasis).toMatch(/anomalous dispersion f′, f″ of Cu Kα1 .*xraylib/);
    expect(referenceFromStructure(gold, { wavelength: singleWavelength(1.3) }).intensityBasis).toMatch(/no anomalous dispersion \(λ = 1\.3 Å is not within 0\.1 %/);
    expect(referenceFromStructure(gold, { wavelength: anodeWavelength('Cu'), anomalousDispersion: false }).intensityBasis).toMatch(/no anomalous dispersion \(switched off\)/);
  });
});

describe('structure factors with dispersion', () => {
  it("give |F|² = (f0 + f')² + f''² for one atom: f'' does not drop out", () => {
    const one = p1Structure('lead', [5, 5, 5, 90, 90, 90], [['Pb', 1, 0, 0, 0]]);
    const ctx = structureFactorContext(expandToUnitCell(one), [2, 2, 2], CU_TERMS);
    const s2 = inverseD2([5], 1, 1, 0) / 4;
    const [fp, fpp] = CU_TERMS.Pb;
    const f0 = formFactor(SCATTERING_FACTORS.Pb, s2);
    expect(structureFactorSquared(ctx, 1, 1, 0, s2)).toBeCloseTo((f0 + fp) ** 2 + fpp ** 2, 9);
  });

  for (const crystal of golden.structureFactors.crystals) {
    it(`${crystal.name}: |F| within 1.5 % of xraylib's Crystal_F_H_StructureFactor at Cu Kα1`, () => {
      // xraylib 4.0 (golden file). Its f0 is Hubbell's FF_Rayl, ours the International Tables Vol. C
      // Cromer–Mann fit: single atoms differ by up to ~1 %, so |F| can agree no closer than that, and a
      // difference reflection (zinc-blende 200 = 4(f_A − f_B)) only to a part of the atoms' summed |f|.
      const structure = p1Structure(crystal.name, crystal.cell, crystal.atoms);
      const limit = Math.max(...crystal.reflections.flatMap((r) => r.slice(0, 3).map(Math.abs)));
      const atoms = expandToUnitCell(structure);
      const ctx = structureFactorContext(atoms, [limit, limit, limit], CU_TERMS);
      const plain = structureFactorContext(atoms, [limit, limit, limit]);
      for (const [h, k, l, re, im, re0, im0] of crystal.reflections) {
        const s2 = inverseD2(crystal.cell, h, k, l) / 4;
        const summed = crystal.atoms.reduce((sum, [element, occupancy]) => {
          const [fp, fpp] = CU_TERMS[element];
          return sum + occupancy * Math.hypot(formFactor(SCATTERING_FACTORS[element], s2) + fp, fpp);
        }, 0);
        const tolerance = (theirs: number): number => Math.max(0.015 * theirs, 0.001 * summed);
        const theirs = Math.hypot(re, im);
        const ours = Math.sqrt(structureFactorSquared(ctx, h, k, l, s2));
        expect(Math.abs(ours - theirs), `${h} ${k} ${l}: ours ${ours.toFixed(3)}, xraylib ${theirs.toFixed(3)}`).toBeLessThan(tolerance(theirs));
        const theirs0 = Math.hypot(re0, im0);
        expect(Math.abs(Math.sqrt(structureFactorSquared(plain, h, k, l, s2)) - theirs0), `${h} ${k} ${l} f0 only`).toBeLessThan(tolerance(theirs0));
      }
    });
  }

  it('break Friedel\'s law in GaAs and InSb as xraylib does, and the powder line carries the mean of hkl and −h−k−l', () => {
    // xraylib 4.0 (golden file): |F(111)|² − |F(−1−1−1)|² comes from f'' alone, so it checks the sign convention.
    for (const name of ['GaAs', 'InSb']) {
      const crystal = golden.structureFactors.crystals.find((c) => c.name === name)!;
      const ctx = structureFactorContext(expandToUnitCell(p1Structure(name, crystal.cell, crystal.atoms)), [3, 3, 3], CU_TERMS);
      const theirs = new Map(crystal.reflections.map(([h, k, l, re, im]) => [`${h} ${k} ${l}`, re * re + im * im]));
      for (const [h, k, l] of [[1, 1, 1], [3, 1, 1]]) {
        const s2 = inverseD2(crystal.cell, h, k, l) / 4;
        const plus = theirs.get(`${h} ${k} ${l}`)!;
        const minus = theirs.get(`${-h} ${-k} ${-l}`)!;
        const ourDifference = structureFactorSquared(ctx, h, k, l, s2) - structureFactorSquared(ctx, -h, -k, -l, s2);
        expect(Math.abs(plus - minus), `${name} ${h}${k}${l}`).toBeGreaterThan(0.01 * plus);
        expect(Math.abs(ourDifference / (plus - minus) - 1), `${name} ${h}${k}${l} Friedel difference`).toBeLessThan(0.02);
        expect(Math.abs(powderStructureFactorSquared(ctx, h, k, l, s2) / ((plus + minus) / 2) - 1), `${name} ${h}${k}${l} mean`).toBeLessThan(0.03);
      }
    }
  });

  it('leave a centrosymmetric structure obeying Friedel\'s law, and computePowderLines uses the mean', () => {
    const nacl = golden.structureFactors.crystals.find((c) => c.name === 'NaCl')!;
    const structure = p1Structure('NaCl', nacl.cell, nacl.atoms);
    const ctx = structureFactorContext(expandToUnitCell(structure), [3, 3, 3], CU_TERMS);
    const s2 = inverseD2(nacl.cell, 3, 1, 1) / 4;
    expect(structureFactorSquared(ctx, 3, 1, 1, s2)).toBeCloseTo(structureFactorSquared(ctx, -3, -1, -1, s2), 9);
    const gaas = golden.structureFactors.crystals.find((c) => c.name === 'GaAs')!;
    const gaasStructure = p1Structure('GaAs', gaas.cell, gaas.atoms);
    const lines = computePowderLines(gaasStructure, { wavelength: anodeWavelength('Cu'), dMinAngstrom: 1.5 });
    const line111 = lines.find((line) => line.hkl.every((v) => Math.abs(v) === 1))!;
    const gctx = structureFactorContext(expandToUnitCell(gaasStructure), [1, 1, 1], CU_TERMS);
    const s111 = inverseD2(gaas.cell, 1, 1, 1) / 4;
    const mean = (structureFactorSquared(gctx, 1, 1, 1, s111) + structureFactorSquared(gctx, -1, -1, -1, s111)) / 2;
    expect(line111.fSquared).toBeCloseTo(mean, 6);
  });
});
