/**
 * Conversions between 2θ (degrees), d-spacing (Å) and Q (Å⁻¹) by Bragg's law nλ = 2d sinθ (n = 1)
 * and Q = 4π sinθ / λ = 2π / d.
 */
const DEG = Math.PI / 180;

export function dFromTwoTheta(twoThetaDeg: number, wavelengthAngstrom: number): number {
  return wavelengthAngstrom / (2 * Math.sin((twoThetaDeg * DEG) / 2));
}

/** 2θ in degrees, or NaN where the reflection is beyond the wavelength's reach (λ/2d > 1). */
export function twoThetaFromD(dAngstrom: number, wavelengthAngstrom: number): number {
  const s = wavelengthAngstrom / (2 * dAngstrom);
  if (!(s > 0 && s <= 1)) return Number.NaN;
  return (2 * Math.asin(s)) / DEG;
}

export function qFromTwoTheta(twoThetaDeg: number, wavelengthAngstrom: number): number {
  return (4 * Math.PI * Math.sin((twoThetaDeg * DEG) / 2)) / wavelengthAngstrom;
}

export function twoThetaFromQ(qInverseAngstrom: number, wavelengthAngstrom: number): number {
  return twoThetaFromD((2 * Math.PI) / qInverseAngstrom, wavelengthAngstrom);
}

export function qFromD(dAngstrom: number): number {
  return (2 * Math.PI) / dAngstrom;
}

/** 2θ of the Kα2 partner of a Kα1 peak at twoTheta1Deg (same d). */
export function kAlpha2Position(twoTheta1Deg: number, lambda1: number, lambda2: number): number {
  return twoThetaFromD(dFromTwoTheta(twoTheta1Deg, lambda1), lambda2);
}

export const DEG_TO_RAD = DEG;
