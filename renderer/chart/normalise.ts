/**
 * Normalised overlays: each pattern's counts divided by one number of its own, so patterns measured
 * with other counting times or amounts of powder can be compared by shape. By its highest point, by its
 * height at a 2θ the user picks (the highest point within a small window, so a peak shifted a little by
 * the sample still counts), or by its area over the 2θ range every overlaid pattern covers
 * (trapezoid rule). The chosen quantity is brought to 100 (for the area: the mean intensity over that
 * range), so the numbers read like the relative intensities of a reference, and the log scale (whose
 * floor is 0.5) still works. Raw counts, background included; pure functions.
 */

export type Normalisation = 'none' | 'max' | 'peak' | 'area';

export interface NormalisationOptions {
  /** For 'peak': the 2θ chosen, degrees. */
  peakTwoTheta?: number | null;
  /** For 'peak': half-width of the window searched for the highest point, degrees 2θ (default 0.3). */
  peakWindowDeg?: number;
  /** For 'area': the 2θ range integrated over, degrees (default the pattern's own). */
  range?: { from: number; to: number } | null;
}

/** What the chosen quantity (highest point, height at the peak, mean over the range) is brought to. */
export const NORMALISED_LEVEL = 100;

/** The number a pattern's counts are divided by, or a sentence saying why there is none. */
export type NormalisationFactor = { factor: number } | { problem: string };

export const DEFAULT_PEAK_WINDOW_DEG = 0.3;

/** The 2θ range every pattern covers, or null when they share none. x ascending in each. */
export function sharedRange(patterns: ReadonlyArray<{ x: ArrayLike<number> }>): { from: number; to: number } | null {
  let from = -Infinity;
  let to = Infinity;
  for (const { x } of patterns) {
    if (x.length === 0) return null;
    from = Math.max(from, x[0]!);
    to = Math.min(to, x[x.length - 1]!);
  }
  return patterns.length && to > from ? { from, to } : null;
}

/** ∫ y d(2θ) over [from, to] by the trapezoid rule, the ends interpolated linearly. x ascending. */
export function areaBetween(x: ArrayLike<number>, y: ArrayLike<number>, from: number, to: number): number {
  let area = 0;
  for (let i = 1; i < x.length; i++) {
    const x0 = x[i - 1]!;
    const x1 = x[i]!;
    if (x1 <= from || x0 >= to || !(x1 > x0)) continue;
    const a = Math.max(x0, from);
    const b = Math.min(x1, to);
    const at = (t: number) => y[i - 1]! + ((y[i]! - y[i - 1]!) * (t - x0)) / (x1 - x0);
    area += 0.5 * (at(a) + at(b)) * (b - a);
  }
  return area;
}

/** The highest count within ±window of a 2θ, or null when no point lies there. */
export function heightNear(x: ArrayLike<number>, y: ArrayLike<number>, twoTheta: number, windowDeg: number): number | null {
  let best: number | null = null;
  for (let i = 0; i < x.length; i++) {
    if (Math.abs(x[i]! - twoTheta) <= windowDeg && (best === null || y[i]! > best)) best = y[i]!;
  }
  return best;
}

export function normalisationFactor(x: ArrayLike<number>, y: ArrayLike<number>, mode: Normalisation, options: NormalisationOptions = {}): NormalisationFactor {
  if (mode === 'none') return { factor: 1 };
  if (x.length === 0) return { problem: 'the pattern has no points' };
  let value: number | null;
  if (mode === 'max') {
    value = -Infinity;
    for (let i = 0; i < y.length; i++) if (y[i]! > value) value = y[i]!;
  } else if (mode === 'peak') {
    const at = options.peakTwoTheta;
    if (at === null || at === undefined || !Number.isFinite(at)) return { problem: 'choose the 2θ of the peak to normalise by' };
    const window = options.peakWindowDeg ?? DEFAULT_PEAK_WINDOW_DEG;
    value = heightNear(x, y, at, window);
    if (value === null) return { problem: `no point within ${window}° of ${at}° 2θ` };
  } else {
    const range = options.range ?? { from: x[0]!, to: x[x.length - 1]! };
    if (!(range.to > range.from)) return { problem: 'the range to integrate over is empty' };
    // The mean intensity over the range: area over width.
    value = areaBetween(x, y, range.from, range.to) / (range.to - range.from);
  }
  if (!(value > 0) || !Number.isFinite(value)) return { problem: mode === 'area' ? 'its area is not positive' : 'its intensity there is not positive' };
  return { factor: value / NORMALISED_LEVEL };
}

/** A pattern (and its background and fit) divided by a factor, as new arrays; the input is left as it was. */
export function scaledSeries<T extends { y: Float32Array; background?: Float32Array | null; model?: Float32Array | null }>(series: T, factor: number): T {
  if (factor === 1) return series;
  const divide = (v: Float32Array | null | undefined) => (v ? Float32Array.from(v, (u) => u / factor) : (v ?? null));
  return { ...series, y: divide(series.y)!, background: divide(series.background), model: divide(series.model) };
}

/** The intensity axis's title for a normalisation (null: counts, the scale's own title); the range for areas is said beside the control. */
export function normalisedTitle(mode: Normalisation, options: NormalisationOptions = {}): string | null {
  if (mode === 'max') return `intensity (highest point = ${NORMALISED_LEVEL})`;
  if (mode === 'peak') return `intensity (height near ${options.peakTwoTheta ?? '?'}° 2θ = ${NORMALISED_LEVEL})`;
  if (mode === 'area') return `intensity (equal areas, mean = ${NORMALISED_LEVEL})`;
  return null;
}
