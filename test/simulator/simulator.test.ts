/** The accuracy-test simulator checked against outside values before anything is checked with it. */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { CU_KALPHA1, faceCentredClasses, simulateCubicPattern } from './pattern.js';
import { voigtProfile } from './voigt.js';

const golden = JSON.parse(readFileSync(new URL('../golden/simulator/voigt-profile.json', import.meta.url), 'utf8')) as {
  cases: Array<{ x: number; sigma: number; gamma: number; value: number }>;
};
const breadths = JSON.parse(readFileSync(new URL('../golden/size/voigt-breadths.json', import.meta.url), 'utf8')) as {
  cases: Array<{ sigma: number; gamma: number; fwhm: number; integralBreadth: number }>;
};

describe('test simulator', () => {
  it('its Voigt profile agrees with scipy.special.voigt_profile (scipy golden file) within 2e-4 of the peak value', () => {
    expect(golden.cases.length).toBeGreaterThan(40);
    for (const g of golden.cases) {
      const peak = voigtProfile(0, g.sigma, g.gamma);
      expect(Math.abs(voigtProfile(g.x, g.sigma, g.gamma) - g.value)).toBeLessThan(2e-4 * peak);
    }
  });

  it('its Voigt has unit area and the integral breadth scipy gives (golden voigt-breadths.json) within 0.05 %', () => {
    for (const g of breadths.cases.filter((c) => c.sigma > 0)) {
      const width = g.fwhm;
      let area = 0;
      const h = width / 400;
      for (let x = -4000 * width; x <= 4000 * width; x += h) area += voigtProfile(x, g.sigma, g.gamma) * h;
      // Truncation at ±4000 FWHM and the approximation's 1e-4 error in the far tails leave a few 1e-4.
      expect(Math.abs(area - 1)).toBeLessThan(5e-4);
      expect(Math.abs(1 / voigtProfile(0, g.sigma, g.gamma) / g.integralBreadth - 1)).toBeLessThan(5e-4);
    }
  });

  it('puts silicon 111 at 28.441° 2θ for a = 5.43123 Å (NIST SRM 640d certificate) at Cu Kα1 (Bragg\'s law; 28.44° is the usual tabulated position, from memory)', () => {
    const p = simulateCubicPattern({
      phases: [{ a: 5.43123, intensities: new Map([[3, 100]]) }],
      twoThetaMinDeg: 28,
      twoThetaMaxDeg: 29,
      stepDeg: 0.0005,
      peakCounts: 1e9,
      backgroundCounts: 0,
      seed: 1,
      instrument: { u: 0, v: 0, w: 1e-6, x: 0, y: 0.001 },
    });
    let best = 0;
    for (let i = 1; i < p.x.length; i++) if (p.y[i] > p.y[best]) best = i;
    expect(Math.abs(p.x[best] - 28.441)).toBeLessThan(0.001);
    expect(CU_KALPHA1).toBe(1.5405929);
    expect(p.source.file).toContain('(simulated)');
  });

  it('lists the face-centred cubic classes 111, 200, 220, 311, 222, 400', () => {
    expect(faceCentredClasses(16)).toEqual([3, 4, 8, 11, 12, 16]);
  });
});
