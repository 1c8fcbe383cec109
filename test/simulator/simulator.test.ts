/** The accuracy-test pattern simulator checked against outside values (its Voigt: voigt.test.ts). */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { seededUniform } from '../../src/core/numeric/random.js';
import { dSpacing, reflectionList, type Miller, type SimulatedCell } from './cell.js';
import { areaForHeight, CU_KALPHA1, CU_KALPHA2, faceCentredClasses, lineProfile, simulateLinePattern, simulatePowderPattern } from './pattern.js';

const golden = JSON.parse(readFileSync(new URL('../golden/simulator/d-spacings.json', import.meta.url), 'utf8')) as {
  cells: Array<{ cell: number[]; d: Array<[number[], number]> }>;
};

/** 2θ of the highest point of a simulated pattern. */
function apex(p: { x: Float64Array; y: Float64Array }): number {
  let best = 0;
  for (let i = 1; i < p.x.length; i++) if (p.y[i] > p.y[best]) best = i;
  return p.x[best];
}

describe('test simulator', () => {
  it('puts silicon 111 at 28.441° 2θ for a = 5.43123 Å (NIST SRM 640d certificate) at Cu Kα1 (Bragg\'s law; 28.44° is the usual tabulated position, from memory)', () => {
    const p = simulatePowderPattern({
      phases: [{ a: 5.43123, intensities: new Map([[3, 100]]) }],
      twoThetaMinDeg: 28,
      twoThetaMaxDeg: 29,
      stepDeg: 0.0005,
      peakCounts: 1e9,
      backgroundCounts: 0,
      seed: 1,
      instrument: { u: 0, v: 0, w: 1e-6, x: 0, y: 0.001 },
    });
    expect(Math.abs(apex(p) - 28.441)).toBeLessThan(0.001);
    expect(CU_KALPHA1).toBe(1.5405929);
    expect(p.source.file).toContain('(simulated)');
  });

  it('lists the face-centred cubic classes 111, 200, 220, 311, 222, 400', () => {
    expect(faceCentredClasses(16)).toEqual([3, 4, 8, 11, 12, 16]);
  });

  it('computes d-spacings of cubic to triclinic cells as gemmi does (golden file from gemmi UnitCell.calculate_d)', () => {
    let checked = 0;
    for (const row of golden.cells) {
      const [a, b, c, alpha, beta, gamma] = row.cell as [number, number, number, number, number, number];
      const cell: SimulatedCell = { a, b, c, alpha, beta, gamma };
      for (const [hkl, d] of row.d) {
        expect(dSpacing(cell, hkl as unknown as Miller)).toBeCloseTo(d, 10);
        checked++;
      }
    }
    expect(checked).toBe(42);
  });

  it('merges symmetry-equivalent reflections of a tetragonal cell into one line with its multiplicity', () => {
    const cell: SimulatedCell = { a: 4.5937, b: 4.5937, c: 2.9587, alpha: 90, beta: 90, gamma: 90 };
    const list = reflectionList(cell, 1.2, seededUniform(3));
    const d = list.map((r) => dSpacing(cell, r.hkl));
    for (let i = 1; i < d.length; i++) expect(d[i - 1]! - d[i]!).toBeGreaterThan(1e-7);
    // 110 and 1-10 are one line; 101 and 011 are one line.
    expect(list.filter((r) => Math.abs(dSpacing(cell, r.hkl) - dSpacing(cell, [1, 1, 0])) < 1e-9)).toHaveLength(1);
    expect(Math.max(...list.map((r) => r.intensity))).toBeCloseTo(100, 9);
  });

  it('shifts lines by the zero offset and by −2s·cosθ/R for a displaced specimen (Klug & Alexander)', () => {
    const base = { phases: [{ a: 5.43123, intensities: new Map([[3, 100]]) }], twoThetaMinDeg: 27.5, twoThetaMaxDeg: 29.5, stepDeg: 0.0002, peakCounts: 1e9, backgroundCounts: 0, seed: 1, instrument: { u: 0, v: 0, w: 1e-6, x: 0, y: 0.001 } };
    const plain = apex(simulatePowderPattern(base));
    expect(apex(simulatePowderPattern({ ...base, zeroDeg: 0.05 })) - plain).toBeCloseTo(0.05, 3);
    // s = 0.2 mm on 240 mm at θ = 14.22°: Δ2θ = −2·0.2·cos(14.22°)/240 rad = −0.0926°.
    const displaced = apex(simulatePowderPattern({ ...base, displacementMm: 0.2 }));
    expect(displaced - plain).toBeCloseTo((-2 * 0.2 * Math.cos((14.2204 * Math.PI) / 180) / 240) * (180 / Math.PI), 3);
  });

  it('gives a pseudo-Voigt of the stated FWHM and unit area (Thompson, Cox & Hastings: both parts of one FWHM)', () => {
    for (const eta of [0, 0.5, 1]) {
      const shape = { fwhmDeg: 0.2, eta };
      expect(lineProfile(0.1, shape) / lineProfile(0, shape)).toBeCloseTo(0.5, 12);
    }
    expect(lineProfile(0, { fwhmDeg: 0.2, eta: 1 })).toBeCloseTo(2 / (Math.PI * 0.2), 12);
    let area = 0;
    for (let dx = -2; dx <= 2; dx += 1e-4) area += lineProfile(dx, { fwhmDeg: 0.2, eta: 0 }) * 1e-4;
    expect(area).toBeCloseTo(1, 9);
  });

  it('puts a line given by its Kα1 2θ and its Kα2 partner where a phase of the same d puts them', () => {
    const silicon = { phases: [{ a: 5.43123, intensities: new Map([[3, 100]]) }], twoThetaMinDeg: 28, twoThetaMaxDeg: 29, stepDeg: 0.0005, peakCounts: 1e9, backgroundCounts: 0, seed: 1, instrument: { u: 0, v: 0, w: 1e-6, x: 0, y: 0.001 } };
    const kAlpha1 = apex(simulatePowderPattern({ ...silicon, beam: [{ lambda: CU_KALPHA1, weight: 1 }] }));
    const kAlpha2 = apex(simulatePowderPattern({ ...silicon, beam: [{ lambda: CU_KALPHA2, weight: 1 }] }));
    const shape = { fwhmDeg: 0.002, eta: 0.5 };
    const given = { ...silicon, lines: [{ twoThetaDeg: kAlpha1, area: areaForHeight(1e9, shape), shape }], beam: [{ lambda: CU_KALPHA1, weight: 0 }, { lambda: CU_KALPHA2, weight: 1 }] };
    expect(Math.abs(apex(simulateLinePattern(given)) - kAlpha2)).toBeLessThan(0.001);
  });

  it('counts per point in proportion to the step: the same counts per degree at 0.01° and 0.02°', () => {
    const shape = { fwhmDeg: 0.15, eta: 0.5 };
    const total = (stepDeg: number) => simulateLinePattern({ twoThetaMinDeg: 20, twoThetaMaxDeg: 40, stepDeg, backgroundCounts: 0, seed: 7, lines: [{ twoThetaDeg: 30, area: 1e6, shape }] }).y.reduce((a, b) => a + b, 0);
    // Kα1 area 10⁶ plus its Kα2 partner's 0.5 × 10⁶, counted at a 0.02° reference step: σ of the sum about 1 200.
    expect(Math.abs(total(0.02) - 1.5e6)).toBeLessThan(5000);
    expect(Math.abs(total(0.01) - 1.5e6)).toBeLessThan(5000);
  });
});
