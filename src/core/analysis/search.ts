import type { PeakSearchResult } from '../model/peak.js';
import type { Pattern } from '../model/pattern.js';
import type { Wavelength } from '../model/wavelengths.js';
import { findPeaks } from '../process/peaks.js';
import type { AnalysisSettings } from './settings.js';

/** The first stage of every analysis: the peak search with the settings' threshold and background. */
export function searchPeaks(pattern: Pattern, settings: Pick<AnalysisSettings, 'thresholdSigma' | 'backgroundHalfWidthDeg'>, wavelength: Wavelength): PeakSearchResult {
  return findPeaks(pattern, { wavelength, thresholdSigma: settings.thresholdSigma, backgroundHalfWidthDeg: settings.backgroundHalfWidthDeg ?? undefined });
}
