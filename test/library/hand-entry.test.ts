import { describe, expect, it } from 'vitest';
import { parseHandLines } from '../../src/core/model/hand-entry.js';

// Silicon, Cu Kα1 (λ = 1.540593 Å): 111 at 28.443° 2θ, d = 3.1356 Å; 220 at 47.303°, d = 1.9201 Å;
// 311 at 56.123°, d = 1.6375 Å (NIST SRM 640 certificate values, from memory).
const LAMBDA = 1.540593;

describe('reference lines typed by hand', () => {
  it('reads d values as given', () => {
    const lines = parseHandLines('3.1356 100 1 1 1\n1.9201 55 2 2 0\n1.6375 30 3 1 1', 'd', LAMBDA);
    expect(lines.map((l) => l.d)).toEqual([3.1356, 1.9201, 1.6375]);
    expect(lines[0]!.hkl).toEqual([1, 1, 1]);
  });

  it('turns 2θ values into d with the wavelength', () => {
    const lines = parseHandLines('28.443 100 1 1 1\n47.303 55\n56.123 30', 'twoTheta', LAMBDA);
    expect(lines[0]!.d).toBeCloseTo(3.1356, 3);
    expect(lines[1]!.d).toBeCloseTo(1.9201, 3);
    expect(lines[2]!.d).toBeCloseTo(1.6375, 3);
  });

  it('catches 2θ values entered as d with a sentence', () => {
    expect(() => parseHandLines('14.2 40\n28.443 100\n47.303 55', 'd', LAMBDA)).toThrow(/read as 2θ in degrees, not d.*choose "2θ \(°\)"/);
    expect(() => parseHandLines('3.1 100\n88.2 10', 'd', LAMBDA)).toThrow(/line 2 of the lines box: d \(Å\) 88.2 is outside 0.5–50 — if these are 2θ values/);
  });

  it('refuses values outside the range of their column', () => {
    expect(() => parseHandLines('0.3 100', 'd', LAMBDA)).toThrow(/line 1 of the lines box: d \(Å\) 0.3 is outside 0.5–50/);
    expect(() => parseHandLines('1.2 100', 'twoTheta', LAMBDA)).toThrow(/2θ \(°\) 1.2 is outside 2–170/);
    expect(() => parseHandLines('175 100', 'twoTheta', LAMBDA)).toThrow(/outside 2–170/);
    expect(() => parseHandLines('abc 100', 'd', LAMBDA)).toThrow(/"abc" is not a number/);
    expect(() => parseHandLines('3.1 140', 'd', LAMBDA)).toThrow(/intensity 0–100/);
  });
});
