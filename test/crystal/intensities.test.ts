import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { computePowderLines, lorentzPolarization, referenceFromStructure } from '../../src/core/crystal/powder.js';
import { representativeHkl } from '../../src/core/crystal/reflections.js';
import { readCifStructure } from '../../src/core/crystal/structure.js';
import { formFactor } from '../../src/core/crystal/structure-factors.js';
import { SCATTERING_FACTORS } from '../../src/core/crystal/scattering-factors.js';
import { anodeWavelength, singleWavelength } from '../../src/core/model/wavelengths.js';

type Row = [number, number, number, number, number, number, number];

// Golden powder intensities from gemmi 0.5.7 structure factors (IT92 = International Tables Vol. C,
// Table 6.1.1.4) with the Bragg–Brentano LP factor, made by test/golden/crystal/make_golden.py.
const golden = JSON.parse(readFileSync(new URL('../golden/crystal/intensities.json', import.meta.url), 'utf8')) as {
  wavelengthAngstrom: number;
  cases: Array<{ file: string; xhm: string; monochromatorTwoThetaDeg: number | null; dMin: number; reflections: Row[] }>;
};

function fixture(name: string): string {
  return readFileSync(new URL(`../fixtures/cif/${name}`, import.meta.url), 'utf8');
}

describe('powder intensities against gemmi structure factors', () => {
  it('covers the eight fixture structures', () => {
    expect(new Set(golden.cases.map((c) => c.file)).size).toBeGreaterThanOrEqual(8);
  });

  for (const c of golden.cases) {
    const label = `${c.file}${c.monochromatorTwoThetaDeg === null ? '' : ` with monochromator at ${c.monochromatorTwoThetaDeg}°`}`;
    it(`${label}: every line within 1 % of the strongest, |F|² within 0.1 %`, () => {
      const structure = readCifStructure(fixture(c.file), c.file);
      expect(structure.spaceGroup.symbol).toBe(c.xhm);
      const lines = computePowderLines(structure, {
        wavelength: singleWavelength(golden.wavelengthAngstrom),
        dMinAngstrom: c.dMin,
        // gemmi's IT92 structure factors carry no f′, f″; the dispersion is checked against xraylib in anomalous.test.ts.
        anomalousDispersion: false,
        ...(c.monochromatorTwoThetaDeg === null ? {} : { monochromatorTwoThetaDeg: c.monochromatorTwoThetaDeg }),
      });
      expect(lines.length).toBe(c.reflections.length);
      const byHkl = new Map(lines.map((l) => [l.hkl.join(' '), l]));
      for (const [h, k, l, d, m, f2, intensity] of c.reflections) {
        const line = byHkl.get(representativeHkl(structure.spaceGroup, [h, k, l]).join(' '));
        expect(line, `${h} ${k} ${l}`).toBeDefined();
        expect(line!.d).toBeCloseTo(d, 5);
        expect(line!.multiplicity).toBe(m);
        expect(Math.abs(line!.fSquared - f2)).toBeLessThanOrEqual(1e-3 * Math.max(f2, 1));
        expect(Math.abs(line!.relativeIntensity - intensity)).toBeLessThanOrEqual(1);
      }
    });
  }
});

describe('Lorentz–polarization factor', () => {
  it('follows (1+cos²2θ)/(sin²θ cosθ) without a monochromator (International Tables Vol. C)', () => {
    const t = (40 / 2) * (Math.PI / 180);
    expect(lorentzPolarization(40)).toBeCloseTo((1 + Math.cos(2 * t) ** 2) / (Math.sin(t) ** 2 * Math.cos(t)), 10);
  });

  it('with a monochromator at 0° differs from the plain factor only by a constant (relative intensities unchanged)', () => {
    for (const tt of [20, 63.2, 120]) expect(lorentzPolarization(tt, 0) / lorentzPolarization(tt)).toBeCloseTo(0.5, 12);
  });

  it('with a graphite monochromator (26.6°) weakens high angles less than low angles relative to none', () => {
    const ratio = (tt: number): number => lorentzPolarization(tt, 26.6) / lorentzPolarization(tt);
    expect(ratio(90)).toBeGreaterThan(ratio(20));
  });
});

describe('form factors', () => {
  it('give the atomic number at sinθ/λ = 0 (International Tables Vol. C, Table 6.1.1.4: Σa + c ≈ Z)', () => {
    const z: Record<string, number> = { H: 1, C: 6, O: 8, Si: 14, Cl: 17, Pb: 82 };
    for (const [el, n] of Object.entries(z)) expect(Math.abs(formFactor(SCATTERING_FACTORS[el], 0) - n)).toBeLessThan(0.1);
  });
});

describe('references from structures', () => {
  it('scales the strongest merged line of silicon to 100 and records the basis', () => {
    const ref = referenceFromStructure(readCifStructure(fixture('si.cif'), 'si.cif'), { wavelength: anodeWavelength('Cu') });
    expect(Math.max(...ref.lines.map((l) => l.intensity ?? 0))).toBe(100);
    expect(ref.lines[0].hkl).toEqual([1, 1, 1]);
    // 222 is allowed by Fd-3m but zero for atoms on 8a (common practice): it is left out.
    expect(ref.lines.some((l) => l.hkl?.join('') === '222')).toBe(false);
    expect(ref.intensityBasis).toMatch(/Bragg–Brentano/);
    expect(ref.intensityBasis).toMatch(/1\.5405929/);
    expect(ref.source).toMatch(/si\.cif/);
  });

  it('merges the coincident 333 and 511 lines of silicon into one line', () => {
    const ref = referenceFromStructure(readCifStructure(fixture('si.cif'), 'si.cif'), { wavelength: anodeWavelength('Mo'), dMinAngstrom: 1 });
    const near = ref.lines.filter((l) => Math.abs(l.d - 5.431020511 / Math.sqrt(27)) < 1e-4);
    expect(near).toHaveLength(1);
    expect(near[0].multiplicity).toBe(24 + 8);
  });

  it('stops at the wavelength limit d = λ/2 whatever d-minimum is asked for', () => {
    const ref = referenceFromStructure(readCifStructure(fixture('nacl.cif'), 'nacl.cif'), { wavelength: anodeWavelength('Cu'), dMinAngstrom: 0.1 });
    expect(Math.min(...ref.lines.map((l) => l.d))).toBeGreaterThan(1.5405929 / 2);
  });
});
