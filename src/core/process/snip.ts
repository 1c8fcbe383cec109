import { lowerBound } from '../model/sorted.js';
/**
 * SNIP background: iterative clipping of each point to the mean of its neighbours at ±p points
 * (Ryan et al., Nucl. Instrum. Methods B 34, 396 (1988)), on the log-log-square-root scale, with the
 * clipping window decreasing from the widest to one point (Morháč et al., Nucl. Instrum. Methods A 401, 113 (1997)).
 */
export interface SnipOptions {
  /**
   * Largest clipping half-width in degrees 2θ (default 1.0): a little wider than the base of the
   * broadest peak (or cluster of overlapping peaks) that should stay above the background.
   */
  clippingHalfWidthDeg?: number;
  /**
   * Clip on a coarser grid of block means when the window would span more than this many points, and
   * interpolate back (for speed; the result may then rise above single points of noisy data).
   * Default: no limit.
   */
  maxWindowPoints?: number;
}

export const DEFAULT_CLIPPING_HALF_WIDTH_DEG = 1.0;

/** The LLS operator: v = log(log(√(y+1)+1)+1), which compresses strong peaks (Morháč et al. 1997). */
function toLls(y: number): number {
  return Math.log(Math.log(Math.sqrt((y > 0 ? y : 0) + 1) + 1) + 1);
}

function fromLls(v: number): number {
  const root = Math.exp(Math.exp(v) - 1) - 1;
  return root * root - 1;
}

/** SNIP background under y (x in degrees 2θ, increasing; the window in points follows the local step). */
export function snipBackground(x: Float64Array, y: Float64Array, options: SnipOptions = {}): Float64Array {
  const n = y.length;
  const halfWidthDeg = options.clippingHalfWidthDeg ?? DEFAULT_CLIPPING_HALF_WIDTH_DEG;
  const maxWindow = options.maxWindowPoints ?? Number.POSITIVE_INFINITY;
  const block = n > 2 ? Math.floor(halfWidthDeg / ((x[n - 1] - x[0]) / (n - 1)) / maxWindow) : 1;
  if (block >= 2 && n >= 8 * block) return coarseSnip(x, y, block, halfWidthDeg);
  const v = new Float64Array(n);
  const next = new Float64Array(n);
  for (let i = 0; i < n; i++) v[i] = toLls(y[i]);
  if (n < 3 || !(halfWidthDeg > 0)) return y.slice();

  // Window half-width in points at each point, from the local step (non-uniform steps allowed).
  const windowPoints = new Int32Array(n);
  let widest = 0;
  for (let i = 0; i < n; i++) {
    const lo = i > 0 ? i - 1 : 0;
    const hi = i < n - 1 ? i + 1 : n - 1;
    const step = (x[hi] - x[lo]) / (hi - lo);
    const p = Math.min(Math.round(halfWidthDeg / step), i, n - 1 - i);
    windowPoints[i] = p;
    if (p > widest) widest = p;
  }

  const clipped = clipPasses(v, next, windowPoints, widest);
  const background = clipped === v ? next : v;
  for (let i = 0; i < n; i++) background[i] = fromLls(clipped[i]);
  return background;
}

/**
 * The clipping passes, window `widest` down to 1, between the buffers v (the start) and next; returns the
 * one holding the result. (A small function of its own, so that the JIT compiles its long loop once.)
 */
function clipPasses(v: Float64Array, next: Float64Array, windowPoints: Int32Array, widest: number): Float64Array {
  const n = v.length;
  for (let p = widest; p >= 1; p--) {
    // 2p ≤ n − 1 (p never exceeds a point's distance to either end), so the three ranges do not overlap.
    for (let i = 0; i < p; i++) next[i] = v[i];
    for (let i = n - p; i < n; i++) next[i] = v[i];
    // Branch-free clip: v ≥ 0 is never NaN, so min(mean, here) is the clipping rule's `mean < here ? mean : here`
    // (the one branch left, on the window, follows the grid, not the data).
    for (let i = p; i < n - p; i++) {
      const here = v[i];
      next[i] = windowPoints[i] < p ? here : Math.min(0.5 * (v[i - p] + v[i + p]), here);
    }
    const swap = v;
    v = next;
    next = swap;
  }
  return v;
}

/** SNIP on block means of `block` points, linearly interpolated back to x. */
function coarseSnip(x: Float64Array, y: Float64Array, block: number, halfWidthDeg: number): Float64Array {
  const n = y.length;
  const m = Math.ceil(n / block);
  const cx = new Float64Array(m);
  const cy = new Float64Array(m);
  for (let b = 0; b < m; b++) {
    const end = Math.min(n, (b + 1) * block);
    let sx = 0;
    let sy = 0;
    for (let i = b * block; i < end; i++) {
      sx += x[i];
      sy += y[i];
    }
    cx[b] = sx / (end - b * block);
    cy[b] = sy / (end - b * block);
  }
  const coarse = snipBackground(cx, cy, { clippingHalfWidthDeg: halfWidthDeg });
  const out = new Float64Array(n);
  let b = 0;
  for (let i = 0; i < n; i++) {
    while (b + 2 < m && cx[b + 1] <= x[i]) b++;
    const f = Math.min(Math.max((x[i] - cx[b]) / (cx[b + 1] - cx[b]), 0), 1);
    out[i] = coarse[b] + f * (coarse[b + 1] - coarse[b]);
  }
  return out;
}

/**
 * Clipping leaves SNIP under the middle of the noise (it follows the noise's lower envelope, by about
 * two to three σ of the clipped data). Lift it back: in blocks of about `blockDeg`, the median of
 * y − background over the points that are not peaks (iteratively dropping points more than 2σ above the
 * current median), linearly interpolated between block centres. Returns a new array.
 */
export function liftToNoiseMedian(x: Float64Array, y: Float64Array, background: Float64Array, sigma: Float64Array, blockDeg: number): Float64Array {
  const n = y.length;
  const out = background.slice();
  if (n < 3) return out;
  const span = x[n - 1] - x[0];
  // Never more blocks than points (a block with no point has no median), whatever the span or block width.
  const wanted = Math.round(span / blockDeg);
  const blocks = wanted >= 1 ? Math.min(wanted, n) : 1;
  const centres = new Float64Array(blocks);
  const offsets = new Float64Array(blocks);
  const scratch = new Float64Array(n);
  let start = 0;
  for (let b = 0; b < blocks; b++) {
    const end = b === blocks - 1 ? n : lowerBound(x, x[0] + ((b + 1) * span) / blocks);
    centres[b] = 0.5 * (x[start] + x[Math.max(start, end - 1)]);
    offsets[b] = Math.max(blockMedian(y, background, sigma, start, end, scratch), 0);
    start = end;
  }
  addInterpolated(x, centres, offsets, out);
  return out;
}

/** The median of y − background over points [start, end) that are not peaks (dropping those over 2σ above the median, 4 rounds). */
function blockMedian(y: Float64Array, background: Float64Array, sigma: Float64Array, start: number, end: number, scratch: Float64Array): number {
  // (Each long loop of the lift sits in a small function of its own: the JIT then compiles each on its own, once.)
  let median = 0;
  for (let round = 0; round < 4; round++) {
    let count = 0;
    for (let i = start; i < end; i++) {
      const d = y[i] - background[i];
      if (round === 0 || d <= median + 2 * sigma[i]) scratch[count++] = d;
    }
    if (count === 0) break;
    median = medianOf(scratch.subarray(0, count));
  }
  return median;
}

/** Add to out the offsets given at the block centres, linearly interpolated to x (held flat beyond the first and last centre). */
function addInterpolated(x: Float64Array, centres: Float64Array, offsets: Float64Array, out: Float64Array): void {
  const blocks = centres.length;
  let b = 0;
  for (let i = 0; i < x.length; i++) {
    while (b + 1 < blocks && centres[b + 1] <= x[i]) b++;
    if (blocks === 1 || x[i] <= centres[0]) out[i] += offsets[0];
    else if (b + 1 >= blocks) out[i] += offsets[blocks - 1];
    else out[i] += offsets[b] + ((x[i] - centres[b]) / (centres[b + 1] - centres[b])) * (offsets[b + 1] - offsets[b]);
  }
}

/** Median by selection (Hoare, Commun. ACM 4, 321 (1961)): the same value a full sort gives, in linear time; reorders `values`. */
function medianOf(values: Float64Array): number {
  const n = values.length;
  for (let i = 0; i < n; i++) {
    if (values[i] !== values[i]) {
      // NaN: keep the sort's ordering (NaN last).
      values.sort();
      const m = n >> 1;
      return n % 2 === 1 ? values[m] : 0.5 * (values[m - 1] + values[m]);
    }
  }
  const m = n >> 1;
  const upper = selectKth(values, m);
  if (n % 2 === 1) return upper;
  let lower = values[0];
  for (let i = 1; i < m; i++) if (values[i] > lower) lower = values[i];
  return 0.5 * (lower + upper);
}

/** Reorder `a` so that a[k] is its k-th smallest value, nothing larger before it and nothing smaller after; returns a[k]. */
function selectKth(a: Float64Array, k: number): number {
  let lo = 0;
  let hi = a.length - 1;
  while (hi > lo) {
    const mid = (lo + hi) >> 1;
    if (a[mid] < a[lo]) swap(a, lo, mid);
    if (a[hi] < a[lo]) swap(a, lo, hi);
    if (a[hi] < a[mid]) swap(a, mid, hi);
    const pivot = a[mid];
    let i = lo;
    let j = hi;
    while (i <= j) {
      while (a[i] < pivot) i++;
      while (a[j] > pivot) j--;
      if (i <= j) {
        swap(a, i, j);
        i++;
        j--;
      }
    }
    if (k <= j) hi = j;
    else if (k >= i) lo = i;
    else break;
  }
  return a[k];
}

function swap(a: Float64Array, i: number, j: number): void {
  const t = a[i];
  a[i] = a[j];
  a[j] = t;
}

