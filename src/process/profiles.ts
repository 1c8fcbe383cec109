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
  const g = gammaG;
  const l = gammaL;
  const fwhm = Math.pow(
    g ** 5 + 2.69269 * g ** 4 * l + 2.42843 * g ** 3 * l ** 2 + 4.47163 * g ** 2 * l ** 3 + 0.07842 * g * l ** 4 + l ** 5,
    0.2,
  );
  if (fwhm === 0) return { fwhm: 0, eta: 0 };
  const q = l / fwhm;
  const eta = Math.min(1, Math.max(0, 1.36603 * q - 0.47719 * q * q + 0.11116 * q * q * q));
  return { fwhm, eta };
}
