/**
 * A crystallinity estimate without an internal standard: the share of the scattering above the
 * scan's baseline that lies in the crystalline peaks (the "crystalline area over total area" ratio,
 * common practice after Ruland, Acta Cryst. 14, 1180 (1961), here in its plain two-area form with no
 * correction). The total is the area above the lower convex hull of the smoothed pattern (a baseline
 * under the amorphous hump, not through it); the crystalline part is the fitted peaks' areas with
 * their Kα2 partners (the profile's tails included, which a background curve would cut). Both are in
 * counts × degrees 2θ.
 *
 * What it is not: a weight fraction. Lorentz–polarisation, incoherent and thermal diffuse scattering,
 * air scatter and fluorescence all enter the areas unequally; the figure compares samples of one
 * material measured alike (one instrument, one holder, one range), and an internal standard gives the
 * amorphous weight fraction properly (quantify.ts).
 */
import type { Pattern } from '../model/pattern.js';
import type { FittedPeak } from '../model/peak.js';

export interface CrystallinityEstimate {
  /** Crystalline share of the scattering above the baseline, % (0–100). */
  percent: number;
  statement: string;
}

/** Points in the moving average under the hull: enough that noise minima do not pull the baseline down. */
const SMOOTHING_POINTS = 21;

/** `kalpha2Ratio`: the Kα2/Kα1 intensity ratio of the beam (0 for one wavelength); a fitted peak's area is its Kα1 component's. */
export function crystallinityEstimate(pattern: Pattern, peaks: readonly FittedPeak[], kalpha2Ratio: number): CrystallinityEstimate | null {
  const n = pattern.x.length;
  if (n < 3 * SMOOTHING_POINTS) return null;
  const smooth = movingAverage(pattern.y, SMOOTHING_POINTS);
  const hull = lowerHull(pattern.x, smooth);
  let total = 0;
  for (let i = 1; i < n; i++) total += (pattern.x[i] - pattern.x[i - 1]) * (pattern.y[i] - hull[i]);
  let crystalline = 0;
  for (const peak of peaks) crystalline += peak.area * (1 + kalpha2Ratio);
  if (!(total > 0) || !(crystalline > 0)) return null;
  const share = Math.min(1, crystalline / total);
  const percent = 100 * share;
  return {
    percent: Math.round(percent * 10) / 10,
    statement: `crystalline share of the scattering about ${percent.toFixed(0)} % (peak area over all area above the baseline): ${CRYSTALLINITY_CAVEAT}`,
  };
}

/** What the crystallinity estimate is and is not good for. */
export const CRYSTALLINITY_CAVEAT = 'for comparing samples of one material measured alike, not a weight fraction; an internal standard gives the non-crystalline content by weight';

function movingAverage(y: ArrayLike<number>, width: number): Float64Array {
  const n = y.length;
  const half = width >> 1;
  const out = new Float64Array(n);
  // Running sums over the window [i − half, i + half], clipped at the ends.
  const prefix = new Float64Array(n + 1);
  for (let i = 0; i < n; i++) prefix[i + 1] = prefix[i]! + y[i]!;
  for (let i = 0; i < n; i++) {
    const lo = Math.max(0, i - half);
    const hi = Math.min(n, i + half + 1);
    out[i] = (prefix[hi]! - prefix[lo]!) / (hi - lo);
  }
  return out;
}

/** The lower convex hull of (x, y) evaluated at every x (Andrew's monotone chain, lower half). */
function lowerHull(x: ArrayLike<number>, y: ArrayLike<number>): Float64Array {
  const hull: number[] = [];
  const cross = (o: number, a: number, b: number): number => (x[a]! - x[o]!) * (y[b]! - y[o]!) - (y[a]! - y[o]!) * (x[b]! - x[o]!);
  for (let i = 0; i < x.length; i++) {
    while (hull.length >= 2 && cross(hull[hull.length - 2]!, hull[hull.length - 1]!, i) <= 0) hull.pop();
    hull.push(i);
  }
  const out = new Float64Array(x.length);
  for (let h = 0; h + 1 < hull.length; h++) {
    const a = hull[h]!;
    const b = hull[h + 1]!;
    for (let i = a; i <= b; i++) out[i] = y[a]! + ((y[b]! - y[a]!) * (x[i]! - x[a]!)) / (x[b]! - x[a]!);
  }
  return out;
}
