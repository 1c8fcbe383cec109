import { describe, expect, it } from 'vitest';
import { pseudoVoigtIntegralBreadth, thompsonCoxHastings, thompsonCoxHastingsWithDerivatives } from '../../src/core/process/profiles.js';
import { golden } from './golden.js';

describe('profile widths', () => {
  // Source: numerical integration of the pseudo-Voigt in numpy (golden file, make_golden.py).
  it.each(golden.widths.pseudoVoigt.map((c) => [c.fwhm, c.eta, c] as const))(
    'pseudo-Voigt FWHM %s, η %s: FWHM and integral breadth agree with numerical integration to 0.5 %',
    (fwhm, eta, c) => {
      expect(Math.abs(fwhm / c.numericFwhm - 1)).toBeLessThan(0.005);
      expect(Math.abs(pseudoVoigtIntegralBreadth(fwhm, eta) / c.numericIntegralBreadth - 1)).toBeLessThan(0.005);
    },
  );

  // Source: scipy.special.voigt_profile, numerically (scipy 1.10.1, golden file); TCH approximation,
  // Thompson, Cox & Hastings, J. Appl. Cryst. 20, 79 (1987).
  it.each(golden.widths.voigt.map((c) => [c.gaussianFwhm, c.lorentzianFwhm, c] as const))(
    'Voigt with Gaussian FWHM %s and Lorentzian FWHM %s: TCH FWHM and integral breadth within 0.5 %',
    (gG, gL, c) => {
      const { fwhm, eta } = thompsonCoxHastings(gG, gL);
      expect(Math.abs(fwhm / c.numericFwhm - 1)).toBeLessThan(0.005);
      expect(Math.abs(pseudoVoigtIntegralBreadth(fwhm, eta) / c.integralBreadth - 1)).toBeLessThan(0.005);
    },
  );

  it('gives TCH derivatives that match finite differences', () => {
    for (const [g, l] of [[0.08, 0.03], [0.02, 0.1], [0.1, 0.0001]]) {
      const t = thompsonCoxHastingsWithDerivatives(g, l);
      const h = 1e-7;
      const dg = thompsonCoxHastingsWithDerivatives(g + h, l);
      const dl = thompsonCoxHastingsWithDerivatives(g, l + h);
      expect(t.dFwhmDGaussian).toBeCloseTo((dg.fwhm - t.fwhm) / h, 5);
      expect(t.dFwhmDLorentzian).toBeCloseTo((dl.fwhm - t.fwhm) / h, 5);
      expect(t.dEtaDGaussian).toBeCloseTo((dg.eta - t.eta) / h, 4);
      expect(t.dEtaDLorentzian).toBeCloseTo((dl.eta - t.eta) / h, 4);
    }
  });
});
