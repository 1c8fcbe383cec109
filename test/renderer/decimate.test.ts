import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { decimateMinMax, visibleRange } from '../../src/core/model/decimate.js';

/** The bucket (pixel column) of each x, as the plot maps it: -1 left of the plot, `buckets` right of it. */
function bucketOf(v: number, low: number, high: number, buckets: number): number {
  const b = Math.floor(((v - low) / (high - low)) * buckets);
  return b < 0 ? -1 : b >= buckets ? buckets : b;
}

const series = fc
  .record({
    n: fc.integer({ min: 2, max: 3000 }),
    buckets: fc.integer({ min: 1, max: 200 }),
    descending: fc.boolean(),
    seed: fc.integer({ min: 1, max: 2 ** 30 }),
    lowFraction: fc.double({ min: -0.1, max: 0.6, noNaN: true }),
    widthFraction: fc.double({ min: 0.05, max: 1.2, noNaN: true }),
  })
  .map(({ n, buckets, descending, seed, lowFraction, widthFraction }) => {
    // A noisy pattern with spikes: a small linear congruential generator keeps it reproducible.
    let state = seed;
    const random = (): number => ((state = (state * 1103515245 + 12345) % 2 ** 31) / 2 ** 31);
    const x = new Float64Array(n);
    const y = new Float64Array(n);
    let position = 10;
    for (let i = 0; i < n; i++) {
      position += 0.001 + random() * 0.02;
      x[i] = position;
      y[i] = random() < 0.01 ? 1000 * random() : 100 + 20 * random();
    }
    if (descending) x.reverse();
    const min = Math.min(x[0]!, x[n - 1]!);
    const span = Math.abs(x[n - 1]! - x[0]!);
    const low = min + lowFraction * span;
    return { x, y, buckets, low, high: low + widthFraction * span };
  });

describe('min/max decimation per pixel column', () => {
  it('keeps the highest and lowest point of every column, and the first and last visible point', () => {
    fc.assert(
      fc.property(series, ({ x, y, buckets, low, high }) => {
        const { from, to } = visibleRange(x, low, high);
        const kept = decimateMinMax(x, y, { from, to, xLow: low, xHigh: high, buckets });
        for (let k = 1; k < kept.length; k++) expect(kept[k]!).toBeGreaterThan(kept[k - 1]!);
        if (to > from) {
          expect(kept[0]).toBe(from);
          expect(kept[kept.length - 1]).toBe(to - 1);
        }
        const extremes = new Map<number, { min: number; max: number }>();
        for (let i = from; i < to; i++) {
          const b = bucketOf(x[i]!, low, high, buckets);
          const e = extremes.get(b) ?? { min: Infinity, max: -Infinity };
          extremes.set(b, { min: Math.min(e.min, y[i]!), max: Math.max(e.max, y[i]!) });
        }
        const keptExtremes = new Map<number, { min: number; max: number }>();
        for (const i of kept) {
          const b = bucketOf(x[i]!, low, high, buckets);
          const e = keptExtremes.get(b) ?? { min: Infinity, max: -Infinity };
          keptExtremes.set(b, { min: Math.min(e.min, y[i]!), max: Math.max(e.max, y[i]!) });
        }
        expect(keptExtremes).toEqual(extremes);
        expect(kept.length).toBeLessThanOrEqual(Math.max(to - from, 0) <= 2 * buckets ? to - from : 4 * (buckets + 2));
      }),
      { numRuns: 300 },
    );
  });

  it('keeps every visible point when there are at most two per column (zoomed in)', () => {
    const x = Float64Array.from({ length: 1000 }, (_, i) => 10 + i * 0.01);
    const y = Float64Array.from({ length: 1000 }, (_, i) => Math.sin(i));
    const { from, to } = visibleRange(x, 12, 13);
    // 12° to 13° holds 101 points; the edge points on either side make 103.
    expect([from, to]).toEqual([199, 302]);
    const kept = decimateMinMax(x, y, { from, to, xLow: 12, xHigh: 13, buckets: 800 });
    expect(Array.from(kept)).toEqual(Array.from({ length: to - from }, (_, i) => from + i));
  });

  it('draws 2 000 000 points as at most four per column and keeps a one-point spike', () => {
    const n = 2_000_000;
    const x = new Float64Array(n);
    const y = new Float32Array(n);
    for (let i = 0; i < n; i++) {
      x[i] = 5 + (i * 145) / (n - 1);
      y[i] = 50 + (i % 7);
    }
    y[1_234_567] = 9000;
    y[7] = -3;
    const { from, to } = visibleRange(x, 5, 150);
    expect([from, to]).toEqual([0, n]);
    const kept = decimateMinMax(x, y, { from, to, xLow: 5, xHigh: 150, buckets: 1000 });
    expect(kept.length).toBeLessThanOrEqual(4 * 1002);
    expect(Array.from(kept)).toContain(1_234_567);
    expect(Array.from(kept)).toContain(7);
  });

  it('finds the visible range on a descending axis (d-spacing)', () => {
    const x = Float64Array.from({ length: 11 }, (_, i) => 10 - i);
    // x = 10, 9, …, 0: the values 7..4 sit at indices 3..6, widened by one each side.
    expect(visibleRange(x, 4, 7)).toEqual({ from: 2, to: 8 });
    expect(visibleRange(x, 20, 30)).toEqual({ from: 0, to: 1 });
  });
});
