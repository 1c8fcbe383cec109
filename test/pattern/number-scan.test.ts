import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { scanNumber, scanState } from '../../src/core/numeric/number-scan.js';

describe('scanNumber', () => {
  it('gives the same double as Number() for any finite double written in any notation', () => {
    fc.assert(
      fc.property(fc.double({ noNaN: true, noDefaultInfinity: true }), fc.integer({ min: 0, max: 20 }), fc.integer({ min: 1, max: 21 }), (value, fixed, precision) => {
        for (const text of [String(value), value.toExponential(), value.toPrecision(precision), Math.abs(value) < 1e21 ? value.toFixed(fixed) : String(value)]) {
          const parsed = scanNumber(`${text} `, 0, false);
          expect(Object.is(parsed, Number(text)) || parsed === Number(text)).toBe(true);
          expect(scanState.end).toBe(text.length);
        }
      }),
      { numRuns: 3000 },
    );
  });

  it('reads a decimal comma only when told to, and stops at the first character that cannot continue', () => {
    expect(scanNumber('12,5;3', 0, true)).toBe(12.5);
    expect(scanState.end).toBe(4);
    expect(scanNumber('12,5', 0, false)).toBe(12);
    expect(scanState.end).toBe(2);
    expect(scanNumber('7e5x', 0, false)).toBe(700000);
    expect(scanState.end).toBe(3);
  });

  it('gives NaN where no number starts', () => {
    for (const text of ['', '-', '.', 'nan', 'inf', 'e5', '1e', '1e+', ',5']) expect(scanNumber(text, 0, false)).toBeNaN();
  });
});
