/**
 * Voigt profile (convolution of a Gaussian and a Lorentzian) through the Faddeeva function w(z),
 * written for the accuracy tests, independent of the profile code under test.
 * w(z) by Weideman's rational expansion: J. A. C. Weideman, SIAM J. Numer. Anal. 31, 1497 (1994),
 * valid for Im z ≥ 0. V(x; σ, γ) = Re w((x + iγ)/(σ√2)) / (σ√(2π)).
 */

const TERMS = 40;
const L = Math.sqrt(TERMS / Math.SQRT2);

/** Weideman's coefficients a_1..a_N: cosine transform of exp(−t²)(L² + t²), t = L tan(θ/2). */
const COEFFS: number[] = (() => {
  const m = 2 * TERMS;
  const out: number[] = [];
  for (let n = 1; n <= TERMS; n++) {
    let s = 0;
    for (let k = -m + 1; k <= m - 1; k++) {
      const t = L * Math.tan((k * Math.PI) / m / 2);
      s += Math.exp(-t * t) * (L * L + t * t) * Math.cos((Math.PI * k * n) / m);
    }
    out.push(s / (2 * m));
  }
  return out;
})();

interface Complex { re: number; im: number }
const mul = (a: Complex, b: Complex): Complex => ({ re: a.re * b.re - a.im * b.im, im: a.re * b.im + a.im * b.re });
const div = (a: Complex, b: Complex): Complex => {
  const d = b.re * b.re + b.im * b.im;
  return { re: (a.re * b.re + a.im * b.im) / d, im: (a.im * b.re - a.re * b.im) / d };
};

/** Faddeeva function w(z) = exp(−z²) erfc(−iz) for Im z ≥ 0. */
export function faddeeva(re: number, im: number): Complex {
  if (im < 0) throw new Error('faddeeva: this expansion needs Im z ≥ 0');
  const lMinusIz: Complex = { re: L + im, im: -re }; // L − i z
  const lPlusIz: Complex = { re: L - im, im: re }; // L + i z
  const zz = div(lPlusIz, lMinusIz);
  let p: Complex = { re: 0, im: 0 };
  for (let n = TERMS - 1; n >= 0; n--) p = { re: mul(p, zz).re + COEFFS[n]!, im: mul(p, zz).im };
  const denom = mul(lMinusIz, lMinusIz);
  const first = div({ re: 2 * p.re, im: 2 * p.im }, denom);
  const second = div({ re: 1 / Math.sqrt(Math.PI), im: 0 }, lMinusIz);
  return { re: first.re + second.re, im: first.im + second.im };
}

/** erfcx(y) = exp(y²) erfc(y) = w(iy) for real y ≥ 0. */
export function scaledErfc(y: number): number {
  return faddeeva(0, y).re;
}

/** Normalised Voigt profile: Gaussian standard deviation σ, Lorentzian half width γ (same units as x). */
export function voigtProfile(x: number, sigma: number, gamma: number): number {
  if (sigma <= 0) return gamma / (Math.PI * (x * x + gamma * gamma));
  const s = sigma * Math.SQRT2;
  return faddeeva(x / s, gamma / s).re / (sigma * Math.sqrt(2 * Math.PI));
}

/** Conversions between FWHM and the Voigt parameters (Gaussian FWHM = 2√(2 ln 2) σ, Lorentzian FWHM = 2γ). */
export const GAUSS_FWHM_PER_SIGMA = 2 * Math.sqrt(2 * Math.LN2);

/**
 * Integral breadth of a Voigt from its parts' integral breadths (Gaussian βG, Lorentzian βL):
 * β = βG exp(−k²) / erfc(k) = βG / erfcx(k), k = βL / (√π βG). Langford, J. Appl. Cryst. 11, 10 (1978).
 */
export function voigtIntegralBreadth(betaG: number, betaL: number, erfcx: (y: number) => number = scaledErfc): number {
  return betaG / erfcx(betaL / (Math.sqrt(Math.PI) * betaG));
}
