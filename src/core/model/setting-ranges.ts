/**
 * The ranges of the numeric analysis settings, with the sentence a chemist reads when a value is out of
 * range. One table: the settings schema (core/analysis/settings.ts) and the science functions that
 * guard their own inputs both check against it, so one option has one set of limits.
 */
import { InputError } from '../errors.js';

export interface NumberSetting {
  /** What the chemist calls it. */
  label: string;
  min: number;
  max: number;
  unit: string;
  /** An everyday value, for the message. */
  example: number;
}

/** Ranges of the numeric settings (typical matching tolerances 0.05–0.2° 2θ: common practice). */
export const NUMBER_SETTINGS = {
  toleranceDeg: { label: 'matching tolerance', min: 0.005, max: 1, unit: '° 2θ at Cu Kα', example: 0.1 },
  toleranceDAngstrom: { label: 'matching tolerance in d', min: 0.00005, max: 0.1, unit: 'Å', example: 0.002 },
  toleranceFwhm: { label: 'matching tolerance in FWHM units', min: 0.1, max: 5, unit: '× FWHM', example: 1 },
  phaseLimit: { label: 'phase limit', min: 1, max: 50, unit: 'phases', example: 12 },
  goniometerRadiusMm: { label: 'goniometer radius', min: 50, max: 2000, unit: 'mm', example: 240 },
  cellBoundPercent: { label: 'cell bound', min: 0, max: 20, unit: '% per edge', example: 2 },
  internalStandardPercent: { label: 'internal standard weight', min: 0.1, max: 90, unit: 'wt % of the spiked sample', example: 20 },
  backgroundHalfWidthDeg: { label: 'background clipping half-width', min: 0.1, max: 20, unit: '° 2θ', example: 1 },
  scherrerK: { label: 'Scherrer K', min: 0.5, max: 2, unit: '', example: 0.9 },
  thresholdSigma: { label: 'peak detection threshold', min: 1, max: 100, unit: 'σ above the background', example: 3 },
} as const satisfies Record<string, NumberSetting>;

export type NumberSettingName = keyof typeof NUMBER_SETTINGS;

/** The sentence for a value out of range: "matching tolerance must be between 0.005 and 1 ° 2θ". */
export function rangeMessage(name: NumberSettingName): string {
  const s: NumberSetting = NUMBER_SETTINGS[name];
  const unit = s.unit ? ` ${s.unit}` : '';
  return `${s.label} must be between ${s.min} and ${s.max}${unit} (such as ${s.example})`;
}

/** The value, if within the table's range; else an InputError with the table's sentence. */
export function checkSettingRange(name: NumberSettingName, value: number): number {
  const s: NumberSetting = NUMBER_SETTINGS[name];
  if (!(Number.isFinite(value) && value >= s.min && value <= s.max)) throw new InputError(`${rangeMessage(name)}; got ${value}`);
  return value;
}
