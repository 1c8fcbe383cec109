import { describe, expect, it } from 'vitest';
import { etaFromQuarterWidth, lorentzianHeightShare, pseudoVoigtIntegralBreadth, splitPseudoVoigt, thompsonCoxHastings, thompsonCoxHastingsWithDerivatives } from '../../src/core/process/profiles.js';
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

describe('η from the width at a quarter of the height', () => {
  it('gives 0 for a Gaussian (√2 FWHM) and 1 for a Lorentzian (√3 FWHM), clamped beyond', () => {
    expect(etaFromQuarterWidth(Math.SQRT2)).toBeCloseTo(0, 9);
    expect(etaFromQuarterWidth(Math.sqrt(3))).toBeCloseTo(1, 9);
    expect(etaFromQuarterWidth(1.2)).toBe(0);
    expect(etaFromQuarterWidth(2.5)).toBe(1);
  });

  it.each([0.1, 0.3, 0.5, 0.7, 0.9])('recovers η = %s from its pseudo-Voigt’s quarter-height width', (eta) => {
    // Quarter-height half width of the unit-FWHM profile by bisection.
    const mix = lorentzianHeightShare(eta);
    let lo = 0.5;
    let hi = 1;
    for (let k = 0; k < 60; k++) {
      const mid = 0.5 * (lo + hi);
      if (splitPseudoVoigt(mid, 1, mix, 0) > 0.25) lo = mid;
      else hi = mid;
    }
    expect(etaFromQuarterWidth(2 * lo)).toBeCloseTo(eta, 6);
  });
});
