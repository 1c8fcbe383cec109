import { describe, expect, it } from 'vitest';
import { fitPeakGroups, fitPeaksAt } from '../../src/core/process/fit.js';
import { pseudoVoigtIntegralBreadth } from '../../src/core/process/profiles.js';
import { anodeWavelength, singleWavelength } from '../../src/core/model/wavelengths.js';
import { simulatePattern } from '../../src/core/crystal/simulate.js';
import { golden } from './golden.js';
import { patternOf } from './helpers.js';

describe('profile fitting', () => {
  // Source: scipy.optimize.curve_fit (Levenberg–Marquardt, sigma given, absolute_sigma=False), scipy 1.10.1, golden file.
  it.each(golden.curve_fit.map((c, k) => [k, c] as const))('fit %s agrees with scipy curve_fit in values and standard uncertainties', (_k, c) => {
    const pattern = patternOf(c.x, c.y, c.sigma);
    const background = new Float64Array(c.x.length);
    const w = c.params.fwhm;
    const [peak] = fitPeaksAt(
      pattern,
      background,
      // The same starting point as the Python script: position + 0.3 w, FWHM 1.3 w, height 0.8, η 0.5.
      [{ twoTheta: c.params.position + 0.3 * w, fwhm: 1.3 * w, height: 0.8 * c.params.height, eta: 0.5 }],
      { wavelength: singleWavelength(1.5406), windowFwhm: 1000 },
    );
    const p = c.params;
    const s = c.sigmas;
    expect(peak.twoTheta).toBeCloseTo(p.position, 6);
    expect(peak.height / p.height - 1).toBeCloseTo(0, 5);
    expect(peak.fwhm / p.fwhm - 1).toBeCloseTo(0, 5);
    expect(peak.eta).toBeCloseTo(p.eta, 5);
    expect(peak.twoThetaSigma / s.position - 1).toBeCloseTo(0, 3);
    expect(peak.heightSigma / s.height - 1).toBeCloseTo(0, 3);
    expect(peak.fwhmSigma / s.fwhm - 1).toBeCloseTo(0, 3);
    expect(peak.etaSigma / s.eta - 1).toBeCloseTo(0, 3);
    expect(peak.groupChi2 / c.redchi2 - 1).toBeCloseTo(0, 5);
    expect(peak.area).toBeCloseTo(peak.height * peak.integralBreadth, 9);
  });

  it('recovers the Gaussian and Lorentzian widths of a simulated Voigt-like doublet with the TCH profile', () => {
    const wavelength = anodeWavelength('Cu');
    // Simulated with Caglioti-type instrument widths and 120 nm crystallites (TCH pseudo-Voigt peaks).
    const pattern = simulatePattern({
      phases: [{ lines: [{ d: 2.0, intensity: 100 }], scale: 1, sizeNm: 120 }],
      wavelength,
      twoThetaMinDeg: 40,
      twoThetaMaxDeg: 50,
      stepDeg: 0.005,
      peakCounts: 50000,
      background: () => 0,
    });
    const truth = JSON.parse(pattern.meta.truth).instrument;
    const tt = 2 * Math.asin(wavelength.lambda1 / 4) * (180 / Math.PI);
    const theta = (tt / 2) * (Math.PI / 180);
    const gaussian = Math.sqrt(truth.u * Math.tan(theta) ** 2 + truth.v * Math.tan(theta) + truth.w);
    const lorentzian = truth.y / Math.cos(theta) + (0.9 * wavelength.lambda1) / (1200 * Math.cos(theta)) / (Math.PI / 180);
    const [peak] = fitPeaksAt(pattern, new Float64Array(pattern.x.length), [tt + 0.01], { wavelength, profile: 'tch' });
    // The simulated Kα2 is a shade broader than its Kα1 (its own angle); the fit uses one width for both.
    expect(Math.abs(peak.twoTheta - tt)).toBeLessThan(2e-4);
    expect(peak.gaussianFwhm! / gaussian - 1).toBeCloseTo(0, 2);
    expect(peak.lorentzianFwhm! / lorentzian - 1).toBeCloseTo(0, 2);
  });

  it('measures the low-angle asymmetry of a split profile and keeps symmetric peaks symmetric', () => {
    const x = Float64Array.from({ length: 801 }, (_, i) => 20 + i * 0.005);
    const fwhm = 0.1;
    const asym = 0.25;
    const y = x.map((t) => {
      const dx = t - 22;
      const u = dx / (fwhm * (1 + (dx < 0 ? asym : -asym)));
      return 50 + 2000 * (0.5 / (1 + 4 * u * u) + 0.5 * Math.exp(-4 * Math.LN2 * u * u));
    });
    const pattern = patternOf(x, y);
    const background = new Float64Array(x.length).fill(50);
    const [peak] = fitPeaksAt(pattern, background, [22.02], { wavelength: singleWavelength(1.54), asymmetry: true });
    expect(peak.asymmetry).toBeCloseTo(asym, 3);
    expect(peak.twoTheta).toBeCloseTo(22, 4);
    expect(peak.fwhm).toBeCloseTo(fwhm, 4);
  });

  it('fits two overlapping peaks together and flags them as overlapped', () => {
    const x = Float64Array.from({ length: 601 }, (_, i) => 30 + i * 0.005);
    const shape = (dx: number, h: number): number => h * Math.exp(-4 * Math.LN2 * (dx / 0.08) ** 2);
    const y = x.map((t) => 100 + shape(t - 31.4, 3000) + shape(t - 31.48, 1500));
    const pattern = patternOf(x, y);
    const peaks = fitPeaksAt(pattern, new Float64Array(x.length).fill(100), [31.39, 31.5], { wavelength: singleWavelength(1.54) });
    expect(peaks).toHaveLength(2);
    expect(peaks[0].group).toBe(peaks[1].group);
    expect(peaks[0].twoTheta).toBeCloseTo(31.4, 4);
    expect(peaks[1].twoTheta).toBeCloseTo(31.48, 4);
    expect(peaks[1].height).toBeCloseTo(1500, 0);
    expect(peaks.every((p) => p.overlapped)).toBe(true);
  });

  it('reports area and integral breadth that match the fitted model integrated numerically', () => {
    const wavelength = singleWavelength(1.5405929);
    const tt = 2 * Math.asin(wavelength.lambda1 / 4) * (180 / Math.PI);
    // A narrow peak on a wide, fine grid: the fitted model's tails are inside the pattern to 0.2 % of the area.
    const pattern = simulatePattern({
      phases: [{ lines: [{ d: 2.0, intensity: 100 }], scale: 1, sizeNm: 60 }],
      wavelength,
      twoThetaMinDeg: tt - 25,
      twoThetaMaxDeg: tt + 25,
      stepDeg: 0.002,
      peakCounts: 10000,
      background: () => 50,
    });
    const background = new Float64Array(pattern.x.length).fill(50);
    for (const profile of ['pseudo-voigt', 'tch'] as const) {
      for (const asymmetry of [false, true]) {
        const fit = fitPeakGroups(pattern, background, [tt + 0.01], { wavelength, profile, asymmetry, windowFwhm: 1000 });
        const [peak] = fit.peaks;
        // The model above the refined background (the given one plus the fit's straight-line correction).
        const net = fit.model.map((m, i) => m - fit.background[i]);
        let area = 0;
        let top = 0;
        for (let i = 0; i < net.length; i++) {
          top = Math.max(top, net[i]);
          if (i > 0) area += 0.5 * (net[i] + net[i - 1]) * (pattern.x[i] - pattern.x[i - 1]);
        }
        expect(Math.abs(peak.area / area - 1)).toBeLessThan(3e-3);
        expect(Math.abs(top / peak.height - 1)).toBeLessThan(1e-3);
        expect(Math.abs(peak.integralBreadth / (area / top) - 1)).toBeLessThan(3e-3);
        // Unit-area pseudo-Voigt mix: β = 1 / (η·2/(πΓ) + (1 − η)·2√(ln2/π)/Γ) (common practice).
        expect(peak.integralBreadth).toBeCloseTo(pseudoVoigtIntegralBreadth(peak.fwhm, peak.eta), 12);
        expect(peak.area).toBeCloseTo(peak.height * peak.integralBreadth, 9);
      }
    }
  });
});
