/**
 * Min/max decimation for drawing a long pattern: the visible points are put into one bucket per
 * pixel column, and each bucket keeps its first, lowest, highest and last point (in index order).
 * A polyline through the kept points has the same vertical extent in every column as the full
 * curve, so no peak top or dip is lost (the min–max scheme of line-chart libraries; common practice).
 * Where there are few points per column the visible points are all kept (full resolution).
 */

/** First index whose x is past `value` (strictly when `strict`), for x ascending or descending. */
function boundary(x: ArrayLike<number>, value: number, ascending: boolean, strict: boolean): number {
  let lo = 0;
  let hi = x.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    const v = x[mid]!;
    const before = ascending ? (strict ? v <= value : v < value) : strict ? v >= value : v > value;
    if (before) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/**
 * The index range [from, to) whose x lies in [low, high], widened by one point on each side so a
 * line drawn through it reaches the plot's edges. x must be finite and monotonic (either way).
 */
export function visibleRange(x: ArrayLike<number>, low: number, high: number): { from: number; to: number } {
  const n = x.length;
  if (n === 0) return { from: 0, to: 0 };
  const ascending = x[n - 1]! >= x[0]!;
  const first = ascending ? boundary(x, low, true, false) : boundary(x, high, false, false);
  const end = ascending ? boundary(x, high, true, true) : boundary(x, low, false, true);
  return { from: Math.max(0, first - 1), to: Math.min(n, Math.max(first, end) + 1) };
}

export interface DecimateOptions {
  /** Index range to consider, [from, to). */
  from: number;
  to: number;
  /** x values at the left and right edges of the plot (display units). */
  xLow: number;
  xHigh: number;
  /** Pixel columns across the plot: one bucket each. */
  buckets: number;
  /** Keep every point when there are at most this many per bucket on average (default 2). */
  fullResolutionPerBucket?: number;
}

/**
 * Indices (ascending) of the points to draw. x must be monotonic in index order; y may hold NaN,
 * which is skipped for the extremes but never makes a bucket lose its finite extremes.
 */
export function decimateMinMax(x: ArrayLike<number>, y: ArrayLike<number>, options: DecimateOptions): Int32Array {
  const { from, to, xLow, xHigh } = options;
  const count = Math.max(0, to - from);
  const buckets = Math.max(1, Math.floor(options.buckets));
  if (count <= buckets * (options.fullResolutionPerBucket ?? 2) || !(xHigh > xLow)) {
    const all = new Int32Array(count);
    for (let i = 0; i < count; i++) all[i] = from + i;
    return all;
  }
  const out = new Int32Array(Math.min(count, 4 * (buckets + 2)));
  let kept = 0;
  const perUnit = buckets / (xHigh - xLow);
  const bucketOf = (v: number): number => {
    const b = Math.floor((v - xLow) * perUnit);
    // Points just outside the plot (the edge points) get buckets of their own.
    return b < 0 ? -1 : b >= buckets ? buckets : b;
  };
  // x is monotonic, so bucket numbers are too: each bucket's end is found by a galloping search, and
  // the scan for its extremes is a tight loop over y alone (no bucket arithmetic per point).
  let i = from;
  while (i < to) {
    const bucket = bucketOf(x[i]!);
    let step = 1;
    let inside = i;
    while (inside + step < to && bucketOf(x[inside + step]!) === bucket) {
      inside += step;
      step *= 2;
    }
    let outside = Math.min(to, inside + step);
    while (outside - inside > 1) {
      const mid = (inside + outside) >> 1;
      if (bucketOf(x[mid]!) === bucket) inside = mid;
      else outside = mid;
    }
    let lowest = -1;
    let highest = -1;
    let low = Infinity;
    let high = -Infinity;
    for (let k = i; k < outside; k++) {
      const v = y[k]!;
      // NaN fails both tests and is skipped.
      if (v < low) {
        low = v;
        lowest = k;
      }
      if (v > high) {
        high = v;
        highest = k;
      }
    }
    // The four indices in index order, each once.
    const picks = [i, lowest, highest, outside - 1].filter((p) => p >= 0).sort((p, q) => p - q);
    for (let k = 0; k < picks.length; k++) if (k === 0 || picks[k] !== picks[k - 1]) out[kept++] = picks[k]!;
    i = outside;
  }
  return out.slice(0, kept);
}
