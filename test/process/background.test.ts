import { describe, expect, it } from 'vitest';
import { liftToNoiseMedian, snipBackground } from '../../src/core/process/snip.js';
import { stripKAlpha2 } from '../../src/core/process/kalpha2.js';
import { simulatePattern } from '../../src/core/crystal/simulate.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { poissonDeviate, seededUniform } from '../../src/core/numeric/random.js';

const CU = anodeWavelength('Cu');
const curve = (tt: number): number => 80 + 400 * Math.exp(-tt / 6);

describe('SNIP background', () => {
  it('follows a smooth curved background under narrow peaks to within 2 %', () => {
    const pattern = simulatePattern({
      phases: [{ lines: [2.5, 2.2, 1.9, 1.6, 1.3].map((d) => ({ d, intensity: 100 })), scale: 1 }],
      wavelength: CU,
      twoThetaMinDeg: 10,
      twoThetaMaxDeg: 80,
      stepDeg: 0.01,
      peakCounts: 10000,
      background: curve,
    });
    const bg = snipBackground(pattern.x, pattern.y, { clippingHalfWidthDeg: 1 });
    for (let i = 200; i < pattern.x.length - 200; i += 37) expect(Math.abs(bg[i] / curve(pattern.x[i]) - 1)).toBeLessThan(0.02);
  });

  it('never rises above the data', () => {
    const x = Float64Array.from({ length: 500 }, (_, i) => 10 + i * 0.02);
    const y = x.map((t) => 50 + 30 * Math.sin(t) + 500 * Math.exp(-((t - 15) ** 2) / 0.01));
    const bg = snipBackground(x, y, { clippingHalfWidthDeg: 0.5 });
    for (let i = 0; i < x.length; i++) expect(bg[i]).toBeLessThanOrEqual(y[i] + 1e-9);
  });

  it('is lifted back to the middle of Poisson noise (clipping alone sits below it)', () => {
    const uniform = seededUniform(9);
    const x = Float64Array.from({ length: 4000 }, (_, i) => 10 + i * 0.01);
    const y = x.map(() => poissonDeviate(100, uniform));
    const sigma = new Float64Array(x.length).fill(10);
    const clipped = snipBackground(x, y, { clippingHalfWidthDeg: 1 });
    const lifted = liftToNoiseMedian(x, y, clipped, sigma, 2);
    const mean = (a: Float64Array) => a.reduce((s, v) => s + v, 0) / a.length;
    expect(mean(clipped)).toBeLessThan(90);
    expect(Math.abs(mean(lifted) - 100)).toBeLessThan(2);
  });
});

describe('Kα2 stripping (Rachinger)', () => {
  it('removes the Kα2 partner of a simulated doublet, leaving the Kα1 peak', () => {
    const line = { d: 1.2, intensity: 100 };
    const both = simulatePattern({ phases: [{ lines: [line], scale: 1 }], wavelength: CU, twoThetaMinDeg: 75, twoThetaMaxDeg: 85, stepDeg: 0.005, peakCounts: 10000, background: () => 0 });
    const alone = simulatePattern({ phases: [{ lines: [line], scale: 1 }], wavelength: { ...CU, lambda2: null, ratio: 0 }, twoThetaMinDeg: 75, twoThetaMaxDeg: 85, stepDeg: 0.005, peakCounts: 10000, background: () => 0 });
    const stripped = stripKAlpha2(both.x, both.y, CU);
    // Kα1-only pattern is scaled to its own top, the doublet to the doublet's: compare after matching the tops.
    const scale = Math.max(...stripped) / Math.max(...alone.y);
    let worst = 0;
    for (let i = 0; i < stripped.length; i++) worst = Math.max(worst, Math.abs(stripped[i] - scale * alone.y[i]));
    expect(worst).toBeLessThan(0.02 * Math.max(...stripped));
  });

  it('leaves a single-line pattern unchanged', () => {
    const x = Float64Array.from({ length: 50 }, (_, i) => 20 + i * 0.1);
    const y = x.map((t) => t * t);
    expect(Array.from(stripKAlpha2(x, y, { label: 'Mo', lambda1: 0.7093, lambda2: null, ratio: 0 }))).toEqual(Array.from(y));
  });
});
