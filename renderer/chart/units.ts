/** Axis conversions for display: 2θ (degrees), d (Å), Q (Å⁻¹), by Bragg's law with the Kα1 wavelength. */
export type AxisUnit = '2theta' | 'd' | 'q';
export type IntensityScale = 'linear' | 'sqrt' | 'log';

const HALF_DEG = Math.PI / 360;

export function convertX(twoTheta: number, unit: AxisUnit, lambda: number): number {
  if (unit === '2theta') return twoTheta;
  const s = Math.sin(twoTheta * HALF_DEG);
  return unit === 'd' ? lambda / (2 * s) : (4 * Math.PI * s) / lambda;
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

export function intensityTitle(scale: IntensityScale): string {
  return scale === 'sqrt' ? '√intensity (√counts)' : scale === 'log' ? 'intensity (counts, log)' : 'intensity (counts)';
}
