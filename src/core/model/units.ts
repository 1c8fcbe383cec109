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

export const DEG_TO_RAD = DEG;
