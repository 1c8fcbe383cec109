import { describe, expect, it } from 'vitest';
import { InputError } from '../../src/core/errors.js';
import type { Pattern } from '../../src/core/model/pattern.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { findPeaks } from '../../src/core/process/peaks.js';
import { liftToNoiseMedian } from '../../src/core/process/snip.js';

const CU = anodeWavelength('Cu');

/** A pattern built by hand (not through a reader, which already skips such rows): 40 points, then one more at `last`. */
function patternEndingAt(last: number): Pattern {
  const x = Float64Array.from({ length: 41 }, (_, i) => (i < 40 ? 28 + 0.02 * i : last));
  const y = Float64Array.from(x, (_, i) => 100 + (i === 20 ? 900 : 0));
  return { x, y, sigma: y.map(Math.sqrt), wavelength: null, source: { file: 'by-hand.xy', sha256: '', byteLength: 0, format: 'xy' }, meta: {}, readerNotes: [], dataEndLine: 44 };
}

describe('2θ no scan can have, reaching the peak search by another door than the readers', () => {
  it.each([1e9, 9e15, 1e300, 180, Infinity])('a last point at %s° is the file\'s error naming file and line, not a crash or a hang', (last) => {
    let caught: unknown;
    try {
      findPeaks(patternEndingAt(last), { wavelength: CU });
    } catch (err) {
      caught = err;
    }
    expect(caught).toBeInstanceOf(InputError);
    expect((caught as InputError).file).toBe('by-hand.xy');
    expect((caught as InputError).line).toBe(44);
  });

  it('the background lift never makes more blocks than points, whatever the span', () => {
    const x = Float64Array.from({ length: 50 }, (_, i) => (i < 49 ? 10 + i : 1e300));
    const y = new Float64Array(50).fill(100);
    const lifted = liftToNoiseMedian(x, y, new Float64Array(50).fill(90), new Float64Array(50).fill(10), 2);
    expect(lifted).toHaveLength(50);
    for (const v of lifted) expect(v).toBeCloseTo(100, 6);
  });
});
