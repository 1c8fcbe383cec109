import { DEG_TO_RAD } from '../model/units.js';
import type { Wavelength } from '../model/wavelengths.js';

/**
 * Kα2 removal for display and peak search: walking up in 2θ, the Kα2 intensity at each point is the
 * ratio times the already-stripped Kα1 intensity at the 2θ whose Kα2 partner falls there
 * (Rachinger, J. Sci. Instrum. 25, 254 (1948)). With a background the stripping acts on y − background
 * and the background is added back, so the background itself is not scaled.
 * Returns y unchanged (a copy) for a single-line wavelength.
 */
export function stripKAlpha2(x: Float64Array, y: Float64Array, wavelength: Wavelength, background?: Float64Array, sources?: Float64Array): Float64Array {
  const n = y.length;
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) out[i] = background ? y[i] - background[i] : y[i];
  rachinger(x, out, wavelength, -wavelength.ratio, sources);
  if (background) for (let i = 0; i < n; i++) out[i] += background[i];
  return out;
}

/** 2θ of the Kα2 partner (same d at λ2) of a Kα1 line at twoThetaDeg; 180 where λ2 cannot diffract from that d. */
export function partnerTwoThetaDeg(twoThetaDeg: number, lambda1: number, lambda2: number): number {
  const s = (lambda2 / lambda1) * Math.sin((twoThetaDeg * DEG_TO_RAD) / 2);
  return s < 1 ? (2 * Math.asin(s)) / DEG_TO_RAD : 180;
}

/**
 * Variance of the stripped intensities, given the variance of the input at each point: the recursion
 * adds ratio² times the (interpolated) variance of the stripped value that was subtracted.
 */
export function strippedVariance(x: Float64Array, variance: Float64Array, wavelength: Wavelength, sources?: Float64Array): Float64Array {
  const out = variance.slice();
  rachinger(x, out, wavelength, wavelength.ratio * wavelength.ratio, sources);
  return out;
}

/**
 * 2θ of the Kα1 line whose Kα2 partner lies at each x[i] (same d: sinθ1 = (λ1/λ2)·sinθ2), for the strippings of
 * one pattern to share; null for a single-line wavelength.
 */
export function kAlpha1Sources(x: Float64Array, wavelength: Wavelength): Float64Array | null {
  const { lambda1, lambda2 } = wavelength;
  if (lambda2 === null) return null;
  const lambdaRatio = lambda1 / lambda2;
  const sources = new Float64Array(x.length);
  for (let i = 0; i < x.length; i++) sources[i] = (2 * Math.asin(lambdaRatio * Math.sin((x[i] * DEG_TO_RAD) / 2))) / DEG_TO_RAD;
  return sources;
}

/** In place, upwards in 2θ: v[i] += factor · v(2θ of the Kα1 line whose Kα2 partner is at x[i]); sources from kAlpha1Sources (made here if not given). */
function rachinger(x: Float64Array, v: Float64Array, wavelength: Wavelength, factor: number, given?: Float64Array): void {
  const n = v.length;
  if (wavelength.lambda2 === null || factor === 0 || n < 2) return;
  const sources = given ?? (kAlpha1Sources(x, wavelength) as Float64Array);
  let j = 0; // index with x[j] <= source 2θ < x[j + 1], moves monotonically upwards
  for (let i = 1; i < n; i++) {
    const source = sources[i];
    if (source < x[0]) continue;
    while (j + 1 < i && x[j + 1] <= source) j++;
    if (j + 1 >= i) continue; // partner closer than one step: nothing resolvable to strip
    v[i] += factor * interpolate(x, v, j, source, i);
  }
}

/**
 * Value at `at` (x[j] ≤ at < x[j + 1]) by cubic Lagrange interpolation through x[j−1 … j+2] where those
 * points are already final (indices below `limit`), else linear: sharp peaks need more than a chord.
 */
function interpolate(x: Float64Array, v: Float64Array, j: number, at: number, limit: number): number {
  if (j < 1 || j + 2 >= limit) {
    const f = (at - x[j]) / (x[j + 1] - x[j]);
    return v[j] + f * (v[j + 1] - v[j]);
  }
  let sum = 0;
  for (let a = j - 1; a <= j + 2; a++) {
    let term = v[a];
    for (let b = j - 1; b <= j + 2; b++) if (b !== a) term *= (at - x[b]) / (x[a] - x[b]);
    sum += term;
  }
  return sum;
}
