import { InputError } from '../errors.js';

/**
 * Savitzky–Golay smoothing and differentiation: least-squares polynomial fits over a moving window
 * (Savitzky & Golay, Anal. Chem. 36, 1627 (1964)). The first and last half-windows are taken from a
 * polynomial fitted to the first / last full window, as scipy.signal.savgol_filter does with mode='interp'.
 */
export interface SavitzkyGolayOptions {
  /** Odd number of points in the window, at least polyOrder + 1. */
  windowPoints: number;
  /** Degree of the fitted polynomial (default 3). */
  polyOrder?: number;
  /** Derivative to return: 0 = smoothed values (default), 1 = first derivative, ... */
  derivative?: number;
  /** Spacing of the points, used to scale derivatives (default 1). */
  stepSize?: number;
}

/**
 * Weights that give the `derivative`-th derivative, at window point `position` (0 … windowPoints−1),
 * of the polynomial of degree `polyOrder` fitted by least squares to the window: value = Σ w[j]·y[j].
 */
export function savitzkyGolayWeights(windowPoints: number, polyOrder: number, position: number, derivative = 0, stepSize = 1): Float64Array {
  const cols = polyOrder + 1;
  const scale = Math.max(1, windowPoints - 1);
  // Vandermonde matrix in the scaled abscissa t = (j − position)/scale, orthonormalised by
  // modified Gram–Schmidt (done twice for accuracy): A = Q·R.
  const q = new Float64Array(windowPoints * cols);
  const r = new Float64Array(cols * cols);
  for (let j = 0; j < windowPoints; j++) {
    const t = (j - position) / scale;
    let power = 1;
    for (let c = 0; c < cols; c++) {
      q[j * cols + c] = power;
      power *= t;
    }
  }
  for (let c = 0; c < cols; c++) {
    for (let pass = 0; pass < 2; pass++) {
      for (let k = 0; k < c; k++) {
        let dot = 0;
        for (let j = 0; j < windowPoints; j++) dot += q[j * cols + k] * q[j * cols + c];
        for (let j = 0; j < windowPoints; j++) q[j * cols + c] -= dot * q[j * cols + k];
        r[k * cols + c] += dot;
      }
    }
    let norm = 0;
    for (let j = 0; j < windowPoints; j++) norm += q[j * cols + c] ** 2;
    norm = Math.sqrt(norm);
    r[c * cols + c] = norm;
    for (let j = 0; j < windowPoints; j++) q[j * cols + c] /= norm;
  }
  // Row `derivative` of R⁻¹ (R upper triangular): solve x·R = e_derivative.
  const rowOfInverse = new Float64Array(cols);
  for (let c = derivative; c < cols; c++) {
    let s = c === derivative ? 1 : 0;
    for (let k = derivative; k < c; k++) s -= rowOfInverse[k] * r[k * cols + c];
    rowOfInverse[c] = s / r[c * cols + c];
  }
  let factorial = 1;
  for (let k = 2; k <= derivative; k++) factorial *= k;
  const factor = factorial / (scale * stepSize) ** derivative;
  const weights = new Float64Array(windowPoints);
  for (let j = 0; j < windowPoints; j++) {
    let s = 0;
    for (let c = derivative; c < cols; c++) s += rowOfInverse[c] * q[j * cols + c];
    weights[j] = s * factor;
  }
  return weights;
}

/** Smooth (or differentiate) y with a Savitzky–Golay filter; returns a new array of the same length. */
export function savitzkyGolay(y: Float64Array, options: SavitzkyGolayOptions): Float64Array {
  const windowPoints = options.windowPoints;
  const polyOrder = options.polyOrder ?? 3;
  const derivative = options.derivative ?? 0;
  const stepSize = options.stepSize ?? 1;
  const n = y.length;
  if (!Number.isInteger(windowPoints) || windowPoints < 1 || windowPoints % 2 === 0) {
    throw new InputError(`smoothing window of ${windowPoints} points: give an odd whole number of points`);
  }
  if (!Number.isInteger(polyOrder) || polyOrder < 0 || polyOrder >= windowPoints) {
    throw new InputError(`smoothing polynomial order ${polyOrder}: give a whole number below the window (${windowPoints} points)`);
  }
  if (!Number.isInteger(derivative) || derivative < 0) {
    throw new InputError(`derivative ${derivative}: give 0 (smoothing) or a positive whole number`);
  }
  if (windowPoints > n) {
    throw new InputError(`smoothing window of ${windowPoints} points is longer than the pattern (${n} points); choose a smaller window`);
  }
  const out = new Float64Array(n);
  const half = (windowPoints - 1) >> 1;
  convolve(y, savitzkyGolayWeights(windowPoints, polyOrder, half, derivative, stepSize), out);
  // Edges: the polynomial fitted to the first / last full window, evaluated at each edge point.
  for (let position = 0; position < half; position++) {
    const first = savitzkyGolayWeights(windowPoints, polyOrder, position, derivative, stepSize);
    const last = savitzkyGolayWeights(windowPoints, polyOrder, windowPoints - 1 - position, derivative, stepSize);
    let head = 0;
    let tail = 0;
    for (let j = 0; j < windowPoints; j++) {
      head += first[j] * y[j];
      tail += last[j] * y[n - windowPoints + j];
    }
    out[position] = head;
    out[n - 1 - position] = tail;
  }
  return out;
}

/**
 * out[i] = Σ weights[j]·y[i − half + j] wherever the window lies within y (half = (weights − 1)/2).
 * (The long loop in a small function of its own: the JIT compiles it once, not mid-loop and again for the edges.)
 */
function convolve(y: Float64Array, weights: Float64Array, out: Float64Array): void {
  const w = weights.length;
  const half = (w - 1) >> 1;
  const n = y.length;
  for (let i = half; i < n - half; i++) {
    let s = 0;
    const start = i - half;
    for (let j = 0; j < w; j++) s += weights[j] * y[start + j];
    out[i] = s;
  }
}
