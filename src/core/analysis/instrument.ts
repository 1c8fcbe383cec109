/**
 * Fit an instrument profile from a measured line-profile standard: the one wiring of peak search and
 * profile fit that the CLI and the app both call.
 */
import type { Pattern } from '../model/pattern.js';
import type { StoredReference } from '../model/reference.js';
import { InputError } from '../errors.js';
import { fitInstrumentProfile, MIN_GOOD_PEAKS, type InstrumentProfile } from '../size/instrument.js';
import { isStandardReference } from '../size/instrument-width.js';
import { searchPeaks } from './search.js';
import { effectiveWavelength, type AnalysisSettings } from './settings.js';

export interface StandardFitRequest {
  /** Name the profile is saved under. */
  name: string;
  /** ISO date of the measurement; default now. */
  date?: string;
  /** The file name shown in the profile. */
  file: string;
}

/**
 * The standard's lines must reach this many resolved peaks: the three Caglioti terms and η(2θ) need
 * lines spread over 2θ (common practice); fewer gives a profile that misleads every size after it.
 */
const MIN_STANDARD_LINES = MIN_GOOD_PEAKS;

export function fitInstrumentFromStandard(
  pattern: Pattern,
  standard: StoredReference,
  settings: Pick<AnalysisSettings, 'wavelength' | 'toleranceDeg' | 'backgroundHalfWidthDeg' | 'thresholdSigma'>,
  request: StandardFitRequest,
): InstrumentProfile {
  const wavelength = effectiveWavelength(settings, pattern.wavelength);
  const search = searchPeaks(pattern, settings, wavelength);
  // A reference the user names explicitly may serve as a standard; untagged, it gets a caution.
  const tagged = isStandardReference(standard);
  const asStandard = tagged ? standard : { ...standard, tags: [...standard.tags, 'standard'] };
  const profile = fitInstrumentProfile(search.peaks, asStandard, {
    wavelength,
    name: request.name,
    ...(request.date !== undefined ? { date: request.date } : {}),
    toleranceDeg: settings.toleranceDeg,
    standardFile: { file: request.file, sha256: pattern.source.sha256 },
    standardVersion: standard.version,
  });
  const resolved = profile.residuals.length;
  if (resolved < MIN_STANDARD_LINES) {
    throw new InputError(
      `only ${resolved} line${resolved === 1 ? '' : 's'} of ${standard.name} ${resolved === 1 ? 'was' : 'were'} found as resolved peaks in ${request.file}; an instrument profile needs at least ${MIN_STANDARD_LINES} spread over 2θ. Check that this is the pattern of ${standard.name} (and the wavelength), or measure the standard over a wider range`,
      { file: request.file },
    );
  }
  if (!tagged) {
    profile.warnings.push(`"${standard.name}" is not tagged as a line-profile standard: its peak widths are taken as the instrument's, which holds only for large, strain-free crystallites`);
  }
  return profile;
}
