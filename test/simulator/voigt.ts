/**
 * The Voigt profile (a Gaussian convolved with a Lorentzian) for the test simulator, written apart from
 * the app's code: V(x; σ, γ) = Re w(z) / (σ√(2π)), z = (x + iγ)/(σ√2), with the Faddeeva function w(z)
 * by Humlíček's four-region rational approximation (J. Quant. Spectrosc. Radiat. Transfer 27, 437
 * (1982), "W4"; relative error below about 1e-4). Checked against scipy.special.voigt_profile in
 * test/simulator/simulator.test.ts.
 */

interface Complex {
  re: number;
  im: number;
}

const c = (re: number, im = 0): Complex => ({ re, im });
const add = (a: Complex, b: Complex): Complex => c(a.re + b.re, a.im + b.im);
const sub = (a: Complex, b: Complex): Complex => c(a.re - b.re, a.im - b.im);
const mul = (a: Complex, b: Complex): Complex => c(a.re * b.re - a.im * b.im, a.re * b.im + a.im * b.re);
const scale = (a: Complex, s: number): Complex => c(a.re * s, a.im * s);
function div(a: Complex, b: Complex): Complex {
  const d = b.re * b.re + b.im * b.im;
  return c((a.re * b.re + a.im * b.im) / d, (a.im * b.re - a.re * b.im) / d);
}
function cexp(a: Complex): Complex {
  const m = Math.exp(a.re);
  return c(m * Math.cos(a.im), m * Math.sin(a.im));
}
/** Horner evaluation of a polynomial with real coefficients (highest power first) at a complex point. */
function poly(coefficients: readonly number[], z: Complex): Complex {
  let r = c(coefficients[0]);
  for (let k = 1; k < coefficients.length; k++) r = add(mul(r, z), c(coefficients[k]));
  return r;
}

/** Faddeeva w(x + iy) for y ≥ 0, Humlíček (1982) W4. Uses t = y − ix. */
export function faddeeva(x: number, y: number): Complex {
  const t = c(y, -x);
  const s = Math.abs(x) + y;
  if (s >= 15) {
    // Region I: w ≈ t·0.5641896 / (0.5 + t²).
    return div(scale(t, 0.5641896), add(c(0.5), mul(t, t)));
  }
  if (s >= 5.5) {
    // Region II.
    const u = mul(t, t);
    const num = mul(t, add(c(1.410474), mul(u, c(0.5641896))));
    const den = add(c(0.75), mul(u, add(c(3), u)));
    return div(num, den);
  }
  if (y >= 0.195 * Math.abs(x) - 0.176) {
    // Region III.
    const num = poly([0.5642236, 3.778987, 11.96482, 20.20933, 16.4955], t);
    const den = poly([1, 6.699398, 21.69274, 39.27121, 38.82363, 16.4955], t);
    return div(num, den);
  }
  // Region IV: w = exp(u) − t·P(u)/Q(u), u = t².
  const u = mul(t, t);
  const num = mul(t, poly([-0.56419, 1.320522, -35.76683, 219.0313, -1540.787, 3186.733, -36183.31], u));
  const den = poly([1, -1.841439, 61.57037, -364.2191, 2186.181, -9022.228, 24322.84, -32066.6], u);
  return sub(cexp(u), div(num, den));
}

/** Voigt profile of unit area: Gaussian standard deviation σ, Lorentzian half width at half maximum γ. */
export function voigtProfile(x: number, sigma: number, gamma: number): number {
  if (sigma <= 0) return gamma / (Math.PI * (x * x + gamma * gamma));
  if (gamma <= 0) return Math.exp(-(x * x) / (2 * sigma * sigma)) / (sigma * Math.sqrt(2 * Math.PI));
  const w = faddeeva(x / (sigma * Math.SQRT2), gamma / (sigma * Math.SQRT2));
  return w.re / (sigma * Math.sqrt(2 * Math.PI));
}

/** σ of a Gaussian with this FWHM, and γ (HWHM) of a Lorentzian with this FWHM. */
export const sigmaOfGaussianFwhm = (fwhm: number): number => fwhm / (2 * Math.sqrt(2 * Math.LN2));
export const gammaOfLorentzianFwhm = (fwhm: number): number => fwhm / 2;
