import { describe, expect, it } from 'vitest';
import { areaBetween, heightNear, NORMALISED_LEVEL, normalisationFactor, scaledSeries, sharedRange } from '../../renderer/chart/normalise.js';

const grid = (from: number, to: number, step: number) => Float32Array.from({ length: Math.round((to - from) / step) + 1 }, (_, i) => from + i * step);

describe('normalised overlays', () => {
  it('brings the highest point to 100', () => {
    const x = grid(10, 20, 0.5);
    const y = Float32Array.from(x, (v) => (v === 14 ? 800 : 50));
    const f = normalisationFactor(x, y, 'max');
    expect(f).toEqual({ factor: 8 });
    expect(Math.max(...scaledSeries({ y }, 8).y)).toBeCloseTo(NORMALISED_LEVEL, 6);
  });

  it('by a chosen peak: the highest point within the window around the 2θ picked, not the pattern’s maximum', () => {
    const x = grid(10, 40, 0.02);
    // Two Gaussian peaks: 1000 counts at 12.70°, 4000 at 25.00°; the pick is 0.1° off the first.
    const y = Float32Array.from(x, (v) => 20 + 1000 * Math.exp(-(((v - 12.7) / 0.05) ** 2)) + 4000 * Math.exp(-(((v - 25) / 0.05) ** 2)));
    expect(heightNear(x, y, 12.6, 0.3)).toBeCloseTo(1020, 0);
    const f = normalisationFactor(x, y, 'peak', { peakTwoTheta: 12.6 });
    expect('factor' in f && f.factor).toBeCloseTo(1020 / 100, 1);
    expect(normalisationFactor(x, y, 'peak', { peakTwoTheta: 60 })).toEqual({ problem: 'no point within 0.3° of 60° 2θ' });
    expect(normalisationFactor(x, y, 'peak', { peakTwoTheta: null })).toEqual({ problem: 'choose the 2θ of the peak to normalise by' });
  });

  it('by area: the trapezoid area over the shared range, with the ends interpolated', () => {
    // y = 2θ on 0–10: ∫ from 2.5 to 7.5 of t dt = (7.5² − 2.5²)/2 = 25, exact for a straight line.
    const x = grid(0, 10, 1);
    const y = Float32Array.from(x);
    expect(areaBetween(x, y, 2.5, 7.5)).toBeCloseTo(25, 10);
    // The mean over 2.5–7.5 is 5; brought to 100, the factor is 5/100.
    const f = normalisationFactor(x, y, 'area', { range: { from: 2.5, to: 7.5 } });
    expect('factor' in f && f.factor).toBeCloseTo(0.05, 10);
  });

  it('gives two patterns of one shape, counted for different times, the same curve by area', () => {
    const x = grid(5, 60, 0.02);
    const shape = (v: number) => 100 + 3000 * Math.exp(-(((v - 28.4) / 0.08) ** 2)) + 1200 * Math.exp(-(((v - 47.3) / 0.1) ** 2));
    const short = Float32Array.from(x, shape);
    const long = Float32Array.from(x, (v) => 3.7 * shape(v));
    const range = sharedRange([{ x }, { x }])!;
    const fs = normalisationFactor(x, short, 'area', { range });
    const fl = normalisationFactor(x, long, 'area', { range });
    if (!('factor' in fs) || !('factor' in fl)) throw new Error('no factor');
    expect(fl.factor / fs.factor).toBeCloseTo(3.7, 4);
    const a = scaledSeries({ y: short }, fs.factor).y;
    const b = scaledSeries({ y: long }, fl.factor).y;
    for (let i = 0; i < a.length; i += 97) expect(b[i]!).toBeCloseTo(a[i]!, 3);
  });

  it('shares only the 2θ range every pattern covers, and says when there is none', () => {
    expect(sharedRange([{ x: grid(5, 60, 1) }, { x: grid(10, 80, 1) }])).toEqual({ from: 10, to: 60 });
    expect(sharedRange([{ x: grid(5, 20, 1) }, { x: grid(30, 80, 1) }])).toBeNull();
    expect(normalisationFactor(grid(0, 5, 1), new Float32Array(6), 'area')).toEqual({ problem: 'its area is not positive' });
  });

  it('scales background and fit with the counts and leaves the input as it was', () => {
    const y = Float32Array.of(10, 20);
    const s = scaledSeries({ y, background: Float32Array.of(2, 4), model: null }, 2);
    expect([...s.y]).toEqual([5, 10]);
    expect([...s.background!]).toEqual([1, 2]);
    expect(s.model).toBeNull();
    expect([...y]).toEqual([10, 20]);
  });
});
