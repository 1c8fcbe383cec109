import { describe, expect, it } from 'vitest';
import { compareSizes } from '../../src/core/series/compare.js';

describe('pairwise size comparison', () => {
  it('calls 20 ± 0.5 nm and 40 ± 0.8 nm different and names its test', () => {
    const r = compareSizes([
      { label: 'a', sizeNm: 20, sizeSigmaNm: 0.5, lowerBound: false },
      { label: 'b', sizeNm: 40, sizeSigmaNm: 0.8, lowerBound: false },
    ]);
    expect(r.pairs[0].differs).toBe(true);
    expect(r.test).toMatch(/z-test/);
    expect(r.test).toMatch(/Holm/);
    expect(r.alpha).toBe(0.05);
  });

  it('does not call a difference inside the uncertainty real', () => {
    const r = compareSizes([
      { label: 'as made', sizeNm: 30.2, sizeSigmaNm: 0.6, lowerBound: false },
      { label: 'ground', sizeNm: 29.5, sizeSigmaNm: 0.7, lowerBound: false },
      { label: 'washed', sizeNm: 30.9, sizeSigmaNm: 0.5, lowerBound: false },
    ]);
    expect(r.pairs).toHaveLength(3);
    expect(r.pairs.every((p) => !p.differs && p.testable)).toBe(true);
  });

  it('holds the family of pairs to α: Holm adjusts the smallest p by the number of pairs', () => {
    // z = 2.2 alone gives p ≈ 0.028 < 0.05; with three pairs Holm multiplies it by 3.
    const r = compareSizes([
      { label: 'a', sizeNm: 30, sizeSigmaNm: 1 / Math.SQRT2, lowerBound: false },
      { label: 'b', sizeNm: 32.2, sizeSigmaNm: 1 / Math.SQRT2, lowerBound: false },
      { label: 'c', sizeNm: 31.1, sizeSigmaNm: 1 / Math.SQRT2, lowerBound: false },
    ], { preparationSpreadRelative: 0 }); // Holm's arithmetic on the fit σ alone
    const ab = r.pairs.find((p) => p.a === 'a' && p.b === 'b')!;
    expect(ab.pValue!).toBeLessThan(0.05);
    expect(ab.pAdjusted!).toBeCloseTo(3 * ab.pValue!, 12);
    expect(ab.differs).toBe(false);
  });

  it('does not test a lower bound', () => {
    const r = compareSizes([
      { label: 'a', sizeNm: 30, sizeSigmaNm: 1, lowerBound: false },
      { label: 'b', sizeNm: 250, sizeSigmaNm: null, lowerBound: true },
    ]);
    expect(r.pairs[0].testable).toBe(false);
    expect(r.pairs[0].differs).toBe(false);
    expect(r.pairs[0].statement).toMatch(/lower bound/);
  });
});
