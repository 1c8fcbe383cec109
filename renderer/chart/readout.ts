import { dFromTwoTheta, qFromTwoTheta } from '../../src/core/model/units.js';

/** Index of the value nearest to `value` in an ascending array (binary search). */
export function nearestIndex(x: ArrayLike<number>, value: number): number {
  let lo = 0;
  let hi = x.length - 1;
  while (hi - lo > 1) {
    const mid = (lo + hi) >> 1;
    if (x[mid]! < value) lo = mid;
    else hi = mid;
  }
  return Math.abs(x[lo]! - value) <= Math.abs(x[hi]! - value) ? lo : hi;
}

export interface CursorReading {
  twoTheta: number;
  /** d-spacing (Å) by Bragg's law, λ = 2d sinθ. */
  d: number;
  /** Q = 4π sinθ / λ (Å⁻¹). */
  q: number;
  /** The measured point nearest in 2θ: its 2θ and its counts. */
  nearestTwoTheta: number;
  counts: number;
}

/** What the cursor reads at 2θ on a pattern measured at (x, y) with wavelength λ (Å). */
export function readingAt(twoTheta: number, lambda: number, x: ArrayLike<number>, y: ArrayLike<number>): CursorReading | null {
  if (!Number.isFinite(twoTheta) || !(twoTheta > 0 && twoTheta < 180) || x.length === 0) return null;
  const i = nearestIndex(x, twoTheta);
  return { twoTheta, d: dFromTwoTheta(twoTheta, lambda), q: qFromTwoTheta(twoTheta, lambda), nearestTwoTheta: x[i]!, counts: y[i]! };
}

/** The reading in words; `valueName` names what the curve holds where it is not counts (a normalised pattern, a difference). */
export function readingText(r: CursorReading, valueName = 'counts'): string {
  return [`2θ ${r.twoTheta.toFixed(3)}°`, `d ${r.d.toFixed(4)} Å`, `Q ${r.q.toFixed(4)} Å⁻¹`, `${valueName} ${Math.round(r.counts)} (point at ${r.nearestTwoTheta.toFixed(3)}°)`].join('  ·  ');
}

export const READOUT_HINT = 'Point at the plot to read 2θ, d, Q and the counts there.';
