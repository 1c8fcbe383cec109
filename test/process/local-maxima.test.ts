import { describe, expect, it } from 'vitest';
import { findLocalMaxima } from '../../src/core/process/local-maxima.js';
import { golden } from './golden.js';

describe('local maxima with height and prominence limits', () => {
  const g = golden.find_peaks;

  // Source: scipy.signal.find_peaks(height=array, prominence=array), scipy 1.10.1 (golden file).
  it('finds the same peaks, prominences and bases as scipy find_peaks on a noisy signal', () => {
    const r = findLocalMaxima(Float64Array.from(g.signal), { minHeight: Float64Array.from(g.height), minProminence: Float64Array.from(g.prominence) });
    expect(Array.from(r.indices)).toEqual(g.peaks);
    expect(Array.from(r.leftBases)).toEqual(g.left_bases);
    expect(Array.from(r.rightBases)).toEqual(g.right_bases);
    r.prominences.forEach((p, k) => expect(p).toBeCloseTo(g.prominences[k], 9));
  });

  // Source: scipy.signal.find_peaks on flat tops (scipy 1.10.1, golden file).
  it('takes the middle of a flat top, as scipy does', () => {
    const r = findLocalMaxima(Float64Array.from(g.plateau.signal), { minHeight: 0.5, minProminence: 0.5 });
    expect(Array.from(r.indices)).toEqual(g.plateau.peaks);
    expect(Array.from(r.prominences)).toEqual(g.plateau.prominences);
  });
});
