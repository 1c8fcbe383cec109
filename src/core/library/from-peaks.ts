import { InputError } from '../errors.js';
import type { Wavelength } from '../model/wavelengths.js';
import type { FittedPeak } from '../model/peak.js';
import type { Reference, ReferenceLine } from '../model/reference.js';
import { checkReferences } from './validate.js';

export interface MeasuredReferenceMeta {
  name: string;
  source: string;
  formula?: string;
  tags?: string[];
  notes?: string;
  /** Wavelength the pattern was measured with (recorded in the intensity basis). */
  wavelength?: Wavelength;
  /** Leave out peaks weaker than this, in % of the strongest (default 0: keep all). */
  minRelativeIntensity?: number;
}

/**
 * A reference from a measured pure-phase pattern: one line per fitted peak, d from the Kα1
 * position, intensity the peak's integrated area scaled so the largest is 100.
 */
export function referenceFromPeaks(peaks: readonly FittedPeak[], meta: MeasuredReferenceMeta): Reference {
  const usable = peaks.filter((p) => Number.isFinite(p.area) && p.area > 0 && Number.isFinite(p.d) && p.d > 0);
  if (usable.length === 0) {
    throw new InputError(`cannot make the reference "${meta.name}" from this pattern: no fitted peak has a positive area`);
  }
  const largest = usable.reduce((max, p) => Math.max(max, p.area), 0);
  const floor = meta.minRelativeIntensity ?? 0;
  const lines: ReferenceLine[] = [];
  for (const peak of usable) {
    const intensity = Math.round((1000 * peak.area) / largest) / 10;
    if (intensity >= floor) lines.push({ d: peak.d, intensity });
  }
  const ref: Reference = {
    name: meta.name,
    formula: meta.formula ?? '',
    tags: meta.tags ?? [],
    source: meta.source,
    intensityBasis: `measured: fitted peak areas scaled to 100${meta.wavelength ? ` (${meta.wavelength.label})` : ''}`,
    lines,
  };
  if (meta.notes) ref.notes = meta.notes;
  return checkReferences([ref], 'reference from measured peaks')[0]!;
}
