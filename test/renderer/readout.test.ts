import { describe, expect, it } from 'vitest';
import { nearestIndex, readingAt, readingText } from '../../renderer/chart/readout.js';
import { twoThetaFromDisplay } from '../../renderer/chart/units.js';

// Silicon 111 under Cu Kα1 (λ 1.540593 Å): 28.443° 2θ, d 3.1356 Å — NIST SRM 640 certificate, from memory.
const CU_KA1 = 1.540593;

describe('cursor readout', () => {
  it('reads d and Q at the silicon 111 line and the counts of the nearest measured point', () => {
    const x = Float32Array.from({ length: 101 }, (_, i) => 28 + i * 0.01);
    const y = Float32Array.from(x, (v) => 100 + 1000 * Math.exp(-(((v - 28.443) / 0.05) ** 2)));
    const r = readingAt(28.443, CU_KA1, x, y)!;
    expect(r.d).toBeCloseTo(3.1356, 3);
    // Q = 2π / d.
    expect(r.q).toBeCloseTo((2 * Math.PI) / 3.1356, 3);
    expect(r.nearestTwoTheta).toBeCloseTo(28.44, 5);
    expect(r.counts).toBeCloseTo(y[44]!, 3);
    expect(readingText(r)).toMatch(/^2θ 28\.443°\s+·\s+d 3\.135\d Å\s+·\s+Q 2\.00\d\d Å⁻¹\s+·\s+counts \d+ \(point at 28\.440°\)$/);
    // A normalised pattern or a difference says what its values are instead of counts.
    expect(readingText(r, 'A − B counts')).toMatch(/·\s+A − B counts \d+ \(point at 28\.440°\)$/);
  });

  it('reads nothing outside 0–180° or on an empty pattern', () => {
    const x = Float32Array.of(10, 20);
    expect(readingAt(-1, CU_KA1, x, x)).toBeNull();
    expect(readingAt(Number.NaN, CU_KA1, x, x)).toBeNull();
    expect(readingAt(15, CU_KA1, new Float32Array(0), new Float32Array(0))).toBeNull();
  });

  it('turns a d or Q axis value back into 2θ', () => {
    expect(twoThetaFromDisplay(3.1356, 'd', CU_KA1)).toBeCloseTo(28.443, 2);
    expect(twoThetaFromDisplay((2 * Math.PI) / 3.1356, 'q', CU_KA1)).toBeCloseTo(28.443, 2);
    expect(twoThetaFromDisplay(0.5, 'd', CU_KA1)).toBeNaN();
  });

  it('finds the nearest index at the ends and between points', () => {
    const x = [1, 2, 4, 8];
    expect([0, 1.4, 1.6, 3.1, 100].map((v) => nearestIndex(x, v))).toEqual([0, 0, 1, 2, 3]);
  });
});
