/**
 * Peak profile functions, widths as FWHM in degrees 2θ: unit-area Gaussian, Lorentzian and pseudo-Voigt
 * (η·L + (1−η)·G), the Thompson–Cox–Hastings pseudo-Voigt for a Voigt (J. Appl. Cryst. 20, 79 (1987)), and
 * the unit-height split pseudo-Voigt the profile fit evaluates (its derivatives are written out in group-model.ts).
 */
export const LN2 = Math.LN2;
const GAUSS_NORM = 2 * Math.sqrt(LN2 / Math.PI); // height of a unit-area Gaussian times its FWHM
const LORENTZ_NORM = 2 / Math.PI; // height of a unit-area Lorentzian times its FWHM

export function gaussian(dx: number, fwhm: number): number {
  const u = dx / fwhm;
  return (GAUSS_NORM / fwhm) * Math.exp(-4 * LN2 * u * u);
}

export function lorentzian(dx: number, fwhm: number): number {
  const u = dx / fwhm;
  return LORENTZ_NORM / fwhm / (1 + 4 * u * u);
}

/** Pseudo-Voigt: η·L + (1−η)·G with a common FWHM (unit area). */
export function pseudoVoigt(dx: number, fwhm: number, eta: number): number {
  return eta * lorentzian(dx, fwhm) + (1 - eta) * gaussian(dx, fwhm);
}

/** Peak height of a unit-area pseudo-Voigt. */
function pseudoVoigtPeakHeight(fwhm: number, eta: number): number {
  return (eta * LORENTZ_NORM + (1 - eta) * GAUSS_NORM) / fwhm;
}

/** Integral breadth (area/height) of a pseudo-Voigt. */
export function pseudoVoigtIntegralBreadth(fwhm: number, eta: number): number {
  return 1 / pseudoVoigtPeakHeight(fwhm, eta);
}

/**
 * FWHM and η of the pseudo-Voigt that best stands for a Voigt with Gaussian FWHM gammaG and
 * Lorentzian FWHM gammaL: Thompson, Cox & Hastings, J. Appl. Cryst. 20, 79 (1987).
 */
export function thompsonCoxHastings(gammaG: number, gammaL: number): { fwhm: number; eta: number } {
  const { fwhm, eta } = thompsonCoxHastingsWithDerivatives(gammaG, gammaL);
  return { fwhm, eta };
}

export interface ThompsonCoxHastingsMix {
  fwhm: number;
  eta: number;
  dFwhmDGaussian: number;
  dFwhmDLorentzian: number;
  dEtaDGaussian: number;
  dEtaDLorentzian: number;
}

/** Thompson–Cox–Hastings FWHM and η with their partial derivatives (for least-squares fitting). */
export function thompsonCoxHastingsWithDerivatives(gammaG: number, gammaL: number): ThompsonCoxHastingsMix {
  const g = gammaG;
  const l = gammaL;
  const g2 = g * g;
  const l2 = l * l;
  const sum = g2 * g2 * g + 2.69269 * g2 * g2 * l + 2.42843 * g2 * g * l2 + 4.47163 * g2 * l2 * l + 0.07842 * g * l2 * l2 + l2 * l2 * l;
  const fwhm = Math.pow(sum, 0.2);
  if (!(fwhm > 0)) return { fwhm: 0, eta: 0, dFwhmDGaussian: 1, dFwhmDLorentzian: 1, dEtaDGaussian: 0, dEtaDLorentzian: 0 };
  const dSumDg = 5 * g2 * g2 + 4 * 2.69269 * g2 * g * l + 3 * 2.42843 * g2 * l2 + 2 * 4.47163 * g * l2 * l + 0.07842 * l2 * l2;
  const dSumDl = 2.69269 * g2 * g2 + 2 * 2.42843 * g2 * g * l + 3 * 4.47163 * g2 * l2 + 4 * 0.07842 * g * l2 * l + 5 * l2 * l2;
  const f4 = fwhm * fwhm * fwhm * fwhm;
  const dFdg = dSumDg / (5 * f4);
  const dFdl = dSumDl / (5 * f4);
  const q = l / fwhm;
  const eta = Math.min(1, Math.max(0, 1.36603 * q - 0.47719 * q * q + 0.11116 * q * q * q));
  const dEtaDq = 1.36603 - 2 * 0.47719 * q + 3 * 0.11116 * q * q;
  const dqDg = (-l / (fwhm * fwhm)) * dFdg;
  const dqDl = 1 / fwhm - (l / (fwhm * fwhm)) * dFdl;
  return { fwhm, eta, dFwhmDGaussian: dFdg, dFwhmDLorentzian: dFdl, dEtaDGaussian: dEtaDq * dqDg, dEtaDLorentzian: dEtaDq * dqDl };
}

/** Lorentzian share of the height of the pseudo-Voigt that mixes unit-area profiles with η. */
export function lorentzianHeightShare(eta: number): number {
  return (eta * LORENTZ_NORM) / (eta * LORENTZ_NORM + (1 - eta) * GAUSS_NORM);
}

/**
 * η of the pseudo-Voigt whose full width at a quarter of its height is `ratio` times its FWHM (√2 for a
 * Gaussian, √3 for a Lorentzian; clamped to 0…1 outside): a starting value for a fit, from the peak's shape.
 */
export function etaFromQuarterWidth(ratio: number): number {
  // At u = ratio/2 FWHM the unit-height profile mix·L + (1 − mix)·G is 1/4.
  const r2 = ratio * ratio;
  const gau = Math.exp(-LN2 * r2);
  const mix = Math.min(Math.max((0.25 - gau) / (1 / (1 + r2) - gau), 0), 1);
  if (!Number.isFinite(mix)) return 0.5;
  // Invert lorentzianHeightShare: mix = ηL / (ηL + (1 − η)G).
  return (mix * GAUSS_NORM) / (LORENTZ_NORM * (1 - mix) + mix * GAUSS_NORM);
}

/** d(lorentzianHeightShare)/dη. */
export function lorentzianHeightShareSlope(eta: number): number {
  const norm = eta * LORENTZ_NORM + (1 - eta) * GAUSS_NORM;
  return (LORENTZ_NORM * GAUSS_NORM) / (norm * norm);
}

/** Integral breadth of a unit-height pseudo-Voigt and its derivatives by FWHM and η: [β, ∂β/∂FWHM, ∂β/∂η]. */
export function pseudoVoigtBreadthWithDerivatives(fwhm: number, eta: number): [number, number, number] {
  const norm = eta * LORENTZ_NORM + (1 - eta) * GAUSS_NORM;
  return [fwhm / norm, 1 / norm, (-fwhm * (LORENTZ_NORM - GAUSS_NORM)) / (norm * norm)];
}

export const FOUR_LN2 = 4 * LN2;
/** The Gaussian part exp(−4 ln2 u²) is taken as 0 beyond u² = 16 (4 FWHM out, 2⁻⁶⁴ ≈ 5e-20 of the height: below double precision). */
export const GAUSS_CUT_U2 = 16;

/** exp(−4 ln2 u²), taken as 0 beyond GAUSS_CUT_U2: most points of a fit's window lie there. */
function gaussianTail(u2: number): number {
  return u2 > GAUSS_CUT_U2 ? 0 : Math.exp(-FOUR_LN2 * u2);
}

/**
 * Unit-height pseudo-Voigt (Lorentzian share `mix` of the height) whose low-angle half has FWHM·(1 + asym)
 * and high-angle half FWHM·(1 − asym): total FWHM and integral breadth stay those of the symmetric
 * profile (split-profile asymmetry, Toraya, J. Appl. Cryst. 23, 485 (1990) — from memory).
 */
export function splitPseudoVoigt(dx: number, fwhm: number, mix: number, asym: number): number {
  const u = dx / (fwhm * (1 + (dx < 0 ? asym : -asym)));
  const u2 = u * u;
  return mix / (1 + 4 * u2) + (1 - mix) * gaussianTail(u2);
}
