/**
 * Peak profile functions, all normalised to unit area, widths as FWHM in degrees 2θ.
 */
const LN2 = Math.LN2;
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
export function pseudoVoigtPeakHeight(fwhm: number, eta: number): number {
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
