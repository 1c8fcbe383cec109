import { dFromTwoTheta, qFromTwoTheta, twoThetaFromD } from '../../src/core/model/units.js';

/** Axis conversions for display: 2θ (degrees), d (Å), Q (Å⁻¹), by Bragg's law with the Kα1 wavelength. */
export type AxisUnit = '2theta' | 'd' | 'q';
export type IntensityScale = 'linear' | 'sqrt' | 'log';

export function convertX(twoTheta: number, unit: AxisUnit, lambda: number): number {
  if (unit === '2theta') return twoTheta;
  return unit === 'd' ? dFromTwoTheta(twoTheta, lambda) : qFromTwoTheta(twoTheta, lambda);
}

/** The inverse of convertX: 2θ (degrees) of a value on the display axis, NaN beyond the wavelength's reach. */
export function twoThetaFromDisplay(value: number, unit: AxisUnit, lambda: number): number {
  if (unit === '2theta') return value;
  // Q = 2π / d (the same Bragg relation), so Q maps through d.
  return twoThetaFromD(unit === 'd' ? value : (2 * Math.PI) / value, lambda);
}

export function axisTitle(unit: AxisUnit): string {
  return unit === '2theta' ? '2θ (degrees)' : unit === 'd' ? 'd-spacing (Å)' : 'Q (Å⁻¹)';
}

/** Intensity as drawn: square root keeps weak peaks visible beside strong ones; log scale needs positive values. */
export function transformY(y: number, scale: IntensityScale): number {
  if (scale === 'sqrt') return Math.sign(y) * Math.sqrt(Math.abs(y));
  if (scale === 'log') return Math.max(y, 0.5);
  return y;
}

/** Counts from a value on the intensity axis (the inverse of transformY, up to its floor on the log scale). */
export function untransformY(v: number, scale: IntensityScale): number {
  return scale === 'sqrt' ? Math.sign(v) * v * v : v;
}

export function intensityTitle(scale: IntensityScale): string {
  return scale === 'sqrt' ? '√intensity (√counts)' : scale === 'log' ? 'intensity (counts, log)' : 'intensity (counts)';
}
