import type { FittedPeak } from '../model/peak.js';
import { DEG_TO_RAD } from '../model/units.js';
import { lowerBound } from '../model/sorted.js';
import type { MatchOptions } from './types.js';

type MatchBackground = NonNullable<MatchOptions['background']>;

/** A peak at least this many noise levels (√background) high is a clear peak (common practice). */
const CLEAR_PEAK_NOISE_LEVELS = 5;

/** The measured peaks in typed arrays, ascending 2θ, with the noise level under each. */
export interface PeakTable {
  count: number;
  peaks: FittedPeak[];
  /** Where each peak stands in the list the match was given (the join from a matched line back to its peak). */
  inputIndex: Int32Array;
  twoTheta: Float64Array;
  cosTheta: Float64Array;
  area: Float64Array;
  height: Float64Array;
  /**
   * Matching half-window of each peak, degrees 2θ: the user's tolerance plus three standard
   * uncertainties of the fitted position (capped at the tolerance), so broad, noisy peaks are not
   * held to more precision than their fit has.
   */
  window: Float64Array;
  /** Integral breadth, degrees 2θ. */
  breadth: Float64Array;
  /** 1 when the peak stands clearly above the noise. */
  clear: Uint8Array;
  /** Noise level (one standard deviation of the counts) at a 2θ. */
  noiseAt: (twoThetaDeg: number) => number;
  rangeMin: number;
  rangeMax: number;
  totalArea: number;
}

/**
 * Noise at a 2θ: the given σ, or √background (Poisson counting), where the background is known; otherwise a third of
 * the smallest peak found, so that a line is judged visible when it would be as tall as that peak.
 */
function noiseFunction(peaks: FittedPeak[], background?: MatchBackground): (tt: number) => number {
  if (background && background.x.length > 0) {
    const { x, y, sigma } = background;
    const at = (values: Float64Array, tt: number): number => {
      const i = lowerBound(x, tt);
      if (i <= 0) return values[0];
      if (i >= x.length) return values[x.length - 1];
      const f = (tt - x[i - 1]) / (x[i] - x[i - 1]);
      return values[i - 1] + f * (values[i] - values[i - 1]);
    };
    if (sigma && sigma.length === x.length) return (tt: number) => Math.max(at(sigma, tt), 1e-9);
    return (tt: number) => Math.sqrt(Math.max(at(y, tt), 1));
  }
  let smallest = Infinity;
  for (const p of peaks) if (p.height > 0 && p.height < smallest) smallest = p.height;
  const floor = Number.isFinite(smallest) ? smallest / 3 : 1;
  return () => floor;
}

export function buildPeakTable(
  input: readonly FittedPeak[],
  background: MatchBackground | undefined,
  range: { min: number; max: number } | undefined,
  /** The user's tolerance as a half-window at a peak, degrees 2θ of this pattern (see tolerance.ts). */
  toleranceAt: (peak: FittedPeak) => number,
): PeakTable {
  const order = input.map((_, i) => i).filter((i) => Number.isFinite(input[i]!.twoTheta) && input[i]!.height > 0).sort((a, b) => input[a]!.twoTheta - input[b]!.twoTheta);
  const peaks = order.map((i) => input[i]!);
  const inputIndex = Int32Array.from(order);
  const n = peaks.length;
  const twoTheta = new Float64Array(n);
  const cosTheta = new Float64Array(n);
  const area = new Float64Array(n);
  const height = new Float64Array(n);
  const breadth = new Float64Array(n);
  const window = new Float64Array(n);
  const clear = new Uint8Array(n);
  const noiseAt = noiseFunction(peaks, background);
  let totalArea = 0;
  for (let k = 0; k < n; k++) {
    const p = peaks[k];
    twoTheta[k] = p.twoTheta;
    cosTheta[k] = Math.cos((p.twoTheta / 2) * DEG_TO_RAD);
    height[k] = p.height;
    const tolerance = toleranceAt(p);
    window[k] = tolerance + Math.min(3 * (Number.isFinite(p.twoThetaSigma) ? p.twoThetaSigma : 0), tolerance);
    breadth[k] = p.integralBreadth > 0 ? p.integralBreadth : p.fwhm > 0 ? 1.2 * p.fwhm : 0.1;
    area[k] = p.area > 0 ? p.area : p.height * breadth[k];
    clear[k] = p.height >= CLEAR_PEAK_NOISE_LEVELS * noiseAt(p.twoTheta) ? 1 : 0;
    totalArea += area[k];
  }
  let rangeMin = range?.min ?? (background && background.x.length ? background.x[0] : n ? twoTheta[0] - 1 : 0);
  let rangeMax = range?.max ?? (background && background.x.length ? background.x[background.x.length - 1] : n ? twoTheta[n - 1] + 1 : 0);
  if (rangeMax < rangeMin) [rangeMin, rangeMax] = [rangeMax, rangeMin];
  return { count: n, peaks, inputIndex, twoTheta, cosTheta, area, height, window, breadth, clear, noiseAt, rangeMin, rangeMax, totalArea };
}

/** Index of the peak nearest to a 2θ, or -1 when there are none. */
export function nearestPeak(table: PeakTable, tt: number): number {
  const n = table.count;
  if (n === 0) return -1;
  const i = lowerBound(table.twoTheta, tt);
  if (i <= 0) return 0;
  if (i >= n) return n - 1;
  return tt - table.twoTheta[i - 1] <= table.twoTheta[i] - tt ? i - 1 : i;
}
