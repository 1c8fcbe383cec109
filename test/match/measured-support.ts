/** The measured standards' checks read a fixture, search its peaks and match them against the shipped seed library, as the CLI does. */
import { matchPhases } from '../../src/core/match/match.js';
import type { MatchOptions, MatchResult } from '../../src/core/match/types.js';
import type { Wavelength } from '../../src/core/model/wavelengths.js';
import { findPeaks } from '../../src/core/process/peaks.js';
import { readPatternFile } from '../../src/node/files.js';
import { loadSeedReferences } from '../../src/node/library/seed.js';

export function matchMeasuredAgainstSeeds(file: string, wavelength: Wavelength, options: Partial<MatchOptions> = {}): MatchResult {
  const pattern = readPatternFile(file);
  const search = findPeaks(pattern, { wavelength });
  const references = loadSeedReferences().map((r, i) => ({ ...r, id: i + 1, version: 1, createdAt: '2026-01-01T00:00:00Z' }));
  return matchPhases(search.peaks, references, {
    wavelength,
    background: { x: pattern.x, y: search.background, sigma: search.noiseSigma },
    twoThetaRangeDeg: { min: pattern.x[0], max: pattern.x[pattern.x.length - 1] },
    ...options,
  });
}
