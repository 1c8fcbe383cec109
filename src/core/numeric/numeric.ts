/**
 * Small numerical tools for the size and series analyses: error functions, normal and χ² tail
 * probabilities, weighted linear least squares with the parameters' covariance, and the median.
 */

const SQRT_PI = Math.sqrt(Math.PI);

/** erf by its Maclaurin series (|x| < 2.5, where it converges to double precision). */
function erfSeries(x: number): number {
  const x2 = x * x;
  let term = x;
  let sum = x;
  for (let n = 1; n < 200; n++) {
    term *= -x2 / n;
    const add = term / (2 * n + 1);
    sum += add;
    if (Math.abs(add) < 1e-17 * Math.abs(sum)) break;
  }
  return (2 / SQRT_PI) * sum;
}

/**
 * Scaled complementary error function exp(x²)·erfc(x) for x ≥ 2.5 by the Laplace continued fraction
 * erfc(x) = exp(−x²)/√π · 1/(x + ½/(x + 1/(x + 3⁄2/(x + ...)))), evaluated by the modified Lentz method
 * (Lentz, Appl. Opt. 15, 668 (1976)).
 */
function erfcxContinuedFraction(x: number): number {
  const tiny = 1e-300;
  let f = x;
  let c = x;
  let d = 0;
  for (let n = 1; n < 500; n++) {
    const a = n / 2;
    d = x + a * d;
    d = d === 0 ? tiny : 1 / d;
    c = x + a / c;
    if (c === 0) c = tiny;
    const delta = c * d;
    f *= delta;
    if (Math.abs(delta - 1) < 1e-16) break;
  }
  return 1 / (SQRT_PI * f);
}

export function erf(x: number): number {
  if (Math.abs(x) < 2.5) return erfSeries(x);
  const tail = Math.exp(-x * x) * erfcxContinuedFraction(Math.abs(x));
  return x > 0 ? 1 - tail : tail - 1;
}

export function erfc(x: number): number {
  if (x < 2.5) return 1 - erf(x);
  return Math.exp(-x * x) * erfcxContinuedFraction(x);
}

/** exp(x²)·erfc(x), finite for large x (x ≥ 0 intended). */
export function erfcx(x: number): number {
  if (x < 2.5) return Math.exp(x * x) * (1 - erf(x));
  return erfcxContinuedFraction(x);
}

/** Two-sided tail probability of a standard normal deviate: P(|Z| ≥ |z|). */
export function normalTwoSidedP(z: number): number {
  return erfc(Math.abs(z) / Math.SQRT2);
}

/** ln Γ(x), x > 0: Lanczos approximation (g = 7, n = 9), Lanczos, SIAM J. Numer. Anal. B 1, 86 (1964). */
function logGamma(x: number): number {
  const c = [
    0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313, -176.61502916214059,
    12.507343278686905, -0.13857109526572012, 9.9843695780195716e-6, 1.5056327351493116e-7,
  ];
  if (x < 0.5) return Math.log(Math.PI / Math.abs(Math.sin(Math.PI * x))) - logGamma(1 - x);
  const z = x - 1;
  let a = c[0];
  const t = z + 7.5;
  for (let i = 1; i < 9; i++) a += c[i] / (z + i);
  return 0.5 * Math.log(2 * Math.PI) + (z + 0.5) * Math.log(t) - t + Math.log(a);
}

/**
 * Regularized upper incomplete gamma Q(a, x): power series below x = a + 1, Lentz continued fraction
 * above (the standard split; e.g. Press et al., Numerical Recipes, 3rd ed., §6.2).
 */
function gammaQ(a: number, x: number): number {
  if (x <= 0) return 1;
  const lnPrefactor = -x + a * Math.log(x) - logGamma(a);
  if (x < a + 1) {
    let ap = a;
    let del = 1 / a;
    let sum = del;
    for (let n = 0; n < 1000; n++) {
      ap += 1;
      del *= x / ap;
      sum += del;
      if (Math.abs(del) < Math.abs(sum) * 1e-16) break;
    }
    return 1 - sum * Math.exp(lnPrefactor);
  }
  const tiny = 1e-300;
  let b = x + 1 - a;
  let c = 1 / tiny;
  let d = 1 / b;
  let h = d;
  for (let i = 1; i < 1000; i++) {
    const an = -i * (i - a);
    b += 2;
    d = an * d + b;
    if (Math.abs(d) < tiny) d = tiny;
    c = b + an / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    const delta = d * c;
    h *= delta;
    if (Math.abs(delta - 1) < 1e-16) break;
  }
  return Math.exp(lnPrefactor) * h;
}

/** Probability that a χ² variable with `dof` degrees of freedom is at least `chi2`. */
export function chiSquareSurvival(chi2: number, dof: number): number {
  if (dof <= 0) return 1;
  return gammaQ(dof / 2, chi2 / 2);
}

/**
 * Invert a small symmetric positive-definite matrix (row-major, size p×p) by Gauss–Jordan elimination
 * with partial pivoting. Returns null when the matrix is singular.
 */
export function invertSmall(matrix: Float64Array, p: number): Float64Array | null {
  const a = Float64Array.from(matrix);
  const inv = new Float64Array(p * p);
  for (let i = 0; i < p; i++) inv[i * p + i] = 1;
  let scale = 0;
  for (let i = 0; i < p * p; i++) scale = Math.max(scale, Math.abs(a[i]));
  if (!(scale > 0)) return null;
  for (let col = 0; col < p; col++) {
    let pivot = col;
    for (let r = col + 1; r < p; r++) if (Math.abs(a[r * p + col]) > Math.abs(a[pivot * p + col])) pivot = r;
    if (Math.abs(a[pivot * p + col]) < 1e-14 * scale) return null;
    if (pivot !== col) {
      for (let k = 0; k < p; k++) {
        [a[col * p + k], a[pivot * p + k]] = [a[pivot * p + k], a[col * p + k]];
        [inv[col * p + k], inv[pivot * p + k]] = [inv[pivot * p + k], inv[col * p + k]];
      }
    }
    const d = a[col * p + col];
    for (let k = 0; k < p; k++) {
      a[col * p + k] /= d;
      inv[col * p + k] /= d;
    }
    for (let r = 0; r < p; r++) {
      if (r === col) continue;
      const f = a[r * p + col];
      if (f === 0) continue;
      for (let k = 0; k < p; k++) {
        a[r * p + k] -= f * a[col * p + k];
        inv[r * p + k] -= f * inv[col * p + k];
      }
    }
  }
  return inv;
}

export interface LinearFit {
  /** Fitted coefficients, one per design column. */
  coefficients: Float64Array;
  /** Covariance of the coefficients from the weights (not scaled by the goodness of fit). */
  covariance: Float64Array;
  /** Weighted sum of squared residuals Σ w (y − ŷ)². */
  chi2: number;
  /** Degrees of freedom n − p. */
  dof: number;
  /** Weighted coefficient of determination (about the weighted mean). */
  r2: number;
  /** Residuals y − ŷ. */
  residuals: Float64Array;
}

/**
 * Weighted linear least squares y ≈ X·c by the normal equations (p small). `design` is row-major n×p,
 * `weights` are 1/σ². Returns null when the design is degenerate.
 */
export function weightedLinearFit(design: Float64Array, y: Float64Array, weights: Float64Array, p: number): LinearFit | null {
  const n = y.length;
  if (n < p) return null;
  // Scale columns to unit size so the normal matrix stays well conditioned (tan²θ vs 1, for example).
  const colScale = new Float64Array(p);
  for (let j = 0; j < p; j++) {
    let m = 0;
    for (let i = 0; i < n; i++) m = Math.max(m, Math.abs(design[i * p + j]));
    colScale[j] = m > 0 ? m : 1;
  }
  const normal = new Float64Array(p * p);
  const rhs = new Float64Array(p);
  for (let i = 0; i < n; i++) {
    const w = weights[i];
    for (let j = 0; j < p; j++) {
      const xj = design[i * p + j] / colScale[j];
      rhs[j] += w * xj * y[i];
      for (let k = 0; k < p; k++) normal[j * p + k] += w * xj * (design[i * p + k] / colScale[k]);
    }
  }
  const inv = invertSmall(normal, p);
  if (!inv) return null;
  const coefficients = new Float64Array(p);
  const covariance = new Float64Array(p * p);
  for (let j = 0; j < p; j++) {
    let s = 0;
    for (let k = 0; k < p; k++) s += inv[j * p + k] * rhs[k];
    coefficients[j] = s / colScale[j];
    for (let k = 0; k < p; k++) covariance[j * p + k] = inv[j * p + k] / (colScale[j] * colScale[k]);
  }
  const residuals = new Float64Array(n);
  let chi2 = 0;
  let sw = 0;
  let swy = 0;
  for (let i = 0; i < n; i++) {
    let fit = 0;
    for (let j = 0; j < p; j++) fit += design[i * p + j] * coefficients[j];
    residuals[i] = y[i] - fit;
    chi2 += weights[i] * residuals[i] * residuals[i];
    sw += weights[i];
    swy += weights[i] * y[i];
  }
  const mean = swy / sw;
  let total = 0;
  for (let i = 0; i < n; i++) total += weights[i] * (y[i] - mean) ** 2;
  const r2 = total > 0 ? 1 - chi2 / total : 1;
  return { coefficients, covariance, chi2, dof: n - p, r2, residuals };
}

/** g·C·g for a gradient g and covariance C (p×p, row-major). */
export function quadraticForm(gradient: ArrayLike<number>, covariance: Float64Array): number {
  const p = gradient.length;
  let s = 0;
  for (let j = 0; j < p; j++) for (let k = 0; k < p; k++) s += gradient[j] * covariance[j * p + k] * gradient[k];
  return s;
}

export interface WeightedMean {
  mean: number;
  /** Standard uncertainty, inflated by the Birge ratio √(χ²/(n−1)) when the values scatter more than their errors. */
  sigma: number;
  /** χ² of the values about the mean. */
  chi2: number;
  dof: number;
}

/** Inverse-variance weighted mean of values with standard uncertainties (Birge, Phys. Rev. 40, 207 (1932) for the scatter factor). */
export function weightedMean(values: ArrayLike<number>, sigmas: ArrayLike<number>): WeightedMean | null {
  let sw = 0;
  let swx = 0;
  const n = values.length;
  for (let i = 0; i < n; i++) {
    const w = 1 / (sigmas[i] * sigmas[i]);
    sw += w;
    swx += w * values[i];
  }
  if (!(sw > 0) || !Number.isFinite(sw)) return null;
  const mean = swx / sw;
  let chi2 = 0;
  for (let i = 0; i < n; i++) chi2 += ((values[i] - mean) / sigmas[i]) ** 2;
  const dof = n - 1;
  const birge = dof > 0 ? Math.max(1, Math.sqrt(chi2 / dof)) : 1;
  return { mean, sigma: birge / Math.sqrt(sw), chi2, dof };
}

/**
 * Regularized incomplete beta I_x(a, b) by its continued fraction with the modified Lentz method,
 * using the symmetry I_x(a, b) = 1 − I_{1−x}(b, a) where the fraction converges slowly
 * (e.g. Press et al., Numerical Recipes, 3rd ed., §6.4).
 */
export function incompleteBeta(x: number, a: number, b: number): number {
  if (x <= 0) return 0;
  if (x >= 1) return 1;
  const lnFront = logGamma(a + b) - logGamma(a) - logGamma(b) + a * Math.log(x) + b * Math.log(1 - x);
  if (x > (a + 1) / (a + b + 2)) return 1 - incompleteBeta(1 - x, b, a);
  const tiny = 1e-300;
  let c = 1;
  let d = 1 - ((a + b) * x) / (a + 1);
  if (Math.abs(d) < tiny) d = tiny;
  d = 1 / d;
  let h = d;
  for (let m = 1; m < 1000; m++) {
    const m2 = 2 * m;
    let aa = (m * (b - m) * x) / ((a + m2 - 1) * (a + m2));
    d = 1 + aa * d;
    if (Math.abs(d) < tiny) d = tiny;
    c = 1 + aa / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    h *= d * c;
    aa = (-(a + m) * (a + b + m) * x) / ((a + m2) * (a + m2 + 1));
    d = 1 + aa * d;
    if (Math.abs(d) < tiny) d = tiny;
    c = 1 + aa / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    const delta = d * c;
    h *= delta;
    if (Math.abs(delta - 1) < 1e-15) break;
  }
  return (Math.exp(lnFront) * h) / a;
}

/** Median of a non-empty list (mean of the middle two for an even count). */
export function median(values: readonly number[]): number {
  const sorted = [...values].sort((a, b) => a - b);
  const m = sorted.length >>> 1;
  return sorted.length % 2 ? sorted[m] : 0.5 * (sorted[m - 1] + sorted[m]);
}
