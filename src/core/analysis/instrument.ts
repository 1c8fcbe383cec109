/**
 * Fit an instrument profile from a measured line-profile standard: the one wiring of peak search and
 * profile fit that the CLI and the app both call.
 */
import type { Pattern } from '../model/pattern.js';
import type { StoredReference } from '../model/reference.js';
import { findPeaks } from '../process/peaks.js';
import { fitInstrumentProfile, type InstrumentProfile } from '../size/instrument.js';
import { effectiveWavelength, type AnalysisSettings } from './settings.js';

export interface StandardFitRequest {
  /** Name the profile is saved under. */
  name: string;
  /** ISO date of the measurement; default now. */
  date?: string;
  /** The file name shown in the profile. */
  file: string;
}

export function fitInstrumentFromStandard(
  pattern: Pattern,
  standard: StoredReference,
  settings: Pick<AnalysisSettings, 'wavelength' | 'toleranceDeg' | 'backgroundHalfWidthDeg'>,
  request: StandardFitRequest,
): InstrumentProfile {
  const wavelength = effectiveWavelength(settings, pattern.wavelength);
  const search = findPeaks(pattern, { wavelength, backgroundHalfWidthDeg: settings.backgroundHalfWidthDeg ?? undefined });
  return fitInstrumentProfile(search.peaks, standard, {
    wavelength,
    name: request.name,
    ...(request.date !== undefined ? { date: request.date } : {}),
    toleranceDeg: settings.toleranceDeg,
    standardFile: { file: request.file, sha256: pattern.source.sha256 },
    standardVersion: standard.version,
  });
}
