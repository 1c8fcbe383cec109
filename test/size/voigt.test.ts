import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { sampleBreadths, voigtBreadths, voigtFwhm, voigtIntegralBreadth, voigtParts } from '../../src/core/size/voigt.js';

interface GoldenCase {
  sigma: number;
  gamma: number;
  fwhm: number;
  integralBreadth: number;
  lorentzianIntegralBreadth: number;
  gaussianIntegralBreadth: number;
}
// Voigt breadths computed with scipy.special.voigt_profile (scipy 1.10, Debian) by test/golden/size/make_golden.py.
const golden = JSON.parse(readFileSync(new URL('../golden/size/voigt-breadths.json', import.meta.url), 'utf8')) as {
  scipy: string;
  cases: GoldenCase[];
};

describe('Voigt breadths against scipy.special.voigt_profile', () => {
  it('the golden file was made with scipy', () => {
    expect(golden.scipy).toMatch(/^1\./);
    expect(golden.cases.length).toBeGreaterThan(10);
  });

  it('splits a Voigt into Lorentzian and Gaussian parts within 1 % of its breadth (de Keijser et al. 1982)', () => {
    for (const c of golden.cases) {
      const parts = voigtParts({ fwhm: c.fwhm, integralBreadth: c.integralBreadth });
      expect(Math.abs(parts.lorentzian - c.lorentzianIntegralBreadth)).toBeLessThan(0.01 * c.integralBreadth);
      expect(Math.abs(parts.gaussian - c.gaussianIntegralBreadth)).toBeLessThan(0.01 * c.integralBreadth);
    }
  });

  it('rebuilds the integral breadth exactly from the parts', () => {
    for (const c of golden.cases) {
      const beta = voigtIntegralBreadth({ lorentzian: c.lorentzianIntegralBreadth, gaussian: c.gaussianIntegralBreadth });
      expect(beta / c.integralBreadth).toBeCloseTo(1, 9);
    }
  });

  it('rebuilds the FWHM from the parts within 0.03 % (Olivero & Longbothum 1977)', () => {
    for (const c of golden.cases) {
      const fwhm = voigtFwhm({ lorentzian: c.lorentzianIntegralBreadth, gaussian: c.gaussianIntegralBreadth });
      expect(Math.abs(fwhm / c.fwhm - 1)).toBeLessThan(3e-4);
    }
  });
});

describe('instrument correction of breadths', () => {
  it('subtracts Lorentzian breadths and Gaussian breadths in quadrature', () => {
    const observed = { fwhm: 0.3, integralBreadth: 0.4 };
    const instrument = { fwhm: 0.1, integralBreadth: 0.15 };
    expect(sampleBreadths(observed, instrument, 'lorentzian').fwhm).toBeCloseTo(0.2, 12);
    expect(sampleBreadths(observed, instrument, 'lorentzian').integralBreadth).toBeCloseTo(0.25, 12);
    expect(sampleBreadths(observed, instrument, 'gaussian').fwhm).toBeCloseTo(Math.sqrt(0.09 - 0.01), 12);
  });

  it('recovers the sample Voigt when observed and instrument are Voigts of known parts', () => {
    const instrumentParts = { lorentzian: 0.03, gaussian: 0.05 };
    const sampleParts = { lorentzian: 0.12, gaussian: 0.04 };
    const observedParts = {
      lorentzian: instrumentParts.lorentzian + sampleParts.lorentzian,
      gaussian: Math.hypot(instrumentParts.gaussian, sampleParts.gaussian),
    };
    const sample = sampleBreadths(voigtBreadths(observedParts), voigtBreadths(instrumentParts), 'voigt');
    // The decomposition formulas are approximate (about 1 % of β): the sample's Lorentzian part comes back within 3 %.
    expect(sample.parts!.lorentzian / sampleParts.lorentzian).toBeCloseTo(1, 1);
    expect(Math.abs(sample.fwhm / voigtFwhm(sampleParts) - 1)).toBeLessThan(0.03);
  });

  it('never returns a negative breadth when the instrument is broader than the observation', () => {
    const s = sampleBreadths({ fwhm: 0.05, integralBreadth: 0.06 }, { fwhm: 0.06, integralBreadth: 0.08 }, 'voigt');
    expect(s.fwhm).toBeGreaterThanOrEqual(0);
    expect(s.integralBreadth).toBeGreaterThanOrEqual(0);
  });
});
