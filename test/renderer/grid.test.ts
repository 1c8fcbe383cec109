import { describe, expect, it } from 'vitest';
import { columnMaxima, differenceOnGrid, interpolateOnto } from '../../renderer/chart/grid.js';

describe('patterns on one 2θ grid', () => {
  it('interpolates linearly between measured points, NaN beyond them', () => {
    const x = Float64Array.of(10, 10.5, 11, 12);
    const y = Float64Array.of(0, 10, 20, 0);
    const out = interpolateOnto(x, y, Float64Array.of(9.9, 10, 10.25, 11, 11.5, 12, 12.1));
    expect([...out.slice(1, 6)]).toEqual([0, 5, 20, 10, 0]);
    expect(Number.isNaN(out[0]!)).toBe(true);
    expect(Number.isNaN(out[6]!)).toBe(true);
  });

  it('is exact for a straight line whatever the two steps', () => {
    const x = Float64Array.from({ length: 301 }, (_, i) => 5 + i * 0.05);
    const y = Float64Array.from(x, (v) => 3 * v - 7);
    const grid = Float64Array.from({ length: 500 }, (_, i) => 6 + i * 0.0173);
    const out = interpolateOnto(x, y, grid);
    grid.forEach((g, k) => expect(out[k]!).toBeCloseTo(3 * g - 7, 9));
  });

  it('takes A − B on A’s points over the range both cover, and says when B was interpolated', () => {
    const a = { x: Float64Array.from({ length: 11 }, (_, i) => 10 + i), y: Float64Array.from({ length: 11 }, () => 100) };
    // B on a half-step grid from 12.5: a line 2·2θ, so at A's points 13…20 it is 26…40.
    const b = { x: Float64Array.from({ length: 16 }, (_, i) => 12.5 + i * 0.5), y: Float64Array.from({ length: 16 }, (_, i) => 2 * (12.5 + i * 0.5)) };
    const d = differenceOnGrid(a, b)!;
    expect(d.from).toBe(12.5);
    expect(d.to).toBe(20);
    expect([...d.x]).toEqual([13, 14, 15, 16, 17, 18, 19, 20]);
    expect([...d.y]).toEqual([74, 72, 70, 68, 66, 64, 62, 60]);
    expect(d.interpolated).toBe(true);
    // Each side divided by its normalisation first.
    expect(differenceOnGrid(a, a, 2, 4)!.y[0]).toBe(25);
    expect(differenceOnGrid(a, a)!.interpolated).toBe(false);
    expect(differenceOnGrid(a, { x: Float64Array.of(30, 31), y: Float64Array.of(1, 1) })).toBeNull();
  });

  it('keeps a peak narrower than a pixel column: the column holds the highest point in it', () => {
    const x = Float64Array.from({ length: 1001 }, (_, i) => 10 + i * 0.01);
    const y = Float64Array.from(x, (v) => (Math.abs(v - 13.37) < 0.005 ? 5000 : 10));
    const cols = columnMaxima(x, y, 10, 20, 50);
    // 0.2° per column: 13.37° falls in column 16.
    expect(cols[16]).toBe(5000);
    expect(Math.max(...cols.filter((_, c) => c !== 16))).toBe(10);
    // Columns finer than the step take the interpolated value at their centre.
    const fine = columnMaxima(Float64Array.of(0, 1), Float64Array.of(0, 10), 0, 1, 4);
    expect([...fine]).toEqual([0, 3.75, 6.25, 8.75]);
  });
});
