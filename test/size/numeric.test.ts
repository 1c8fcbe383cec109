import { describe, expect, it } from 'vitest';
import { chiSquareSurvival, erf, erfc, erfcx, normalTwoSidedP, weightedLinearFit, weightedMean } from '../../src/core/numeric/numeric.js';

describe('error functions and tail probabilities', () => {
  it('erf and erfc add to one and are continuous across the method switch', () => {
    for (const x of [-3, -1, 0, 0.3, 1, 2.2, 2.5, 3, 5]) expect(erf(x) + erfc(x)).toBeCloseTo(1, 14);
    expect(erfc(2.5 - 1e-9) / erfc(2.5 + 1e-9)).toBeCloseTo(1, 7);
    expect(erfcx(2.5 - 1e-9) / erfcx(2.5 + 1e-9)).toBeCloseTo(1, 7);
  });

  it('erfcx follows its asymptote 1/(x√π) for large x', () => {
    const x = 1e4;
    expect(erfcx(x) * x * Math.sqrt(Math.PI)).toBeCloseTo(1, 7);
  });

  it('puts 5 % in the two tails beyond z = 1.959964 (common practice)', () => {
    expect(normalTwoSidedP(1.959964)).toBeCloseTo(0.05, 6);
  });

  it('χ² survival with 2 degrees of freedom is exp(−χ²/2)', () => {
    for (const c of [0.5, 3, 10, 40]) expect(chiSquareSurvival(c, 2)).toBeCloseTo(Math.exp(-c / 2), 12);
  });
});

describe('weighted least squares', () => {
  it('recovers a straight line and its textbook slope uncertainty', () => {
    const xs = [1, 2, 3, 4, 5];
    const design = new Float64Array(xs.flatMap((x) => [1, x]));
    const y = new Float64Array(xs.map((x) => 2 + 0.5 * x));
    const w = new Float64Array(xs.length).fill(4); // σ = 0.5
    const fit = weightedLinearFit(design, y, w, 2)!;
    expect(fit.coefficients[0]).toBeCloseTo(2, 12);
    expect(fit.coefficients[1]).toBeCloseTo(0.5, 12);
    // σ(slope)² = σ² / Σ(x − x̄)² = 0.25 / 10
    expect(fit.covariance[3]).toBeCloseTo(0.025, 12);
    expect(fit.r2).toBeCloseTo(1, 12);
  });

  it('weighted mean inflates its uncertainty when values scatter beyond their errors', () => {
    const tight = weightedMean([10, 10.1, 9.9], [1, 1, 1])!;
    const loose = weightedMean([5, 10, 15], [1, 1, 1])!;
    expect(tight.sigma).toBeCloseTo(1 / Math.sqrt(3), 12);
    expect(loose.sigma).toBeGreaterThan(2);
  });
});
