/**
 * When every line of the sized phase is overlapped by another phase's, the single-line sizes give
 * nothing; the constrained group fit (size/group-fit.ts) then sizes it from the pattern, with each
 * present phase's lines at the positions of its refined cell and the sample's one shift.
 */
import { dSpacing } from '../crystal/metric.js';
import type { ReferenceLookup } from './analyse.js';
import type { MatchResult, PhaseMatch } from '../match/types.js';
import type { Pattern } from '../model/pattern.js';
import type { PeakSearchResult } from '../model/peak.js';
import type { StoredReference } from '../model/reference.js';
import { DEG_TO_RAD, twoThetaFromD } from '../model/units.js';
import type { Wavelength } from '../model/wavelengths.js';
import { constrainedGroupFit, type GroupFitOutcome, type GroupFitPhase } from '../size/group-fit.js';
import type { InstrumentProfile } from '../size/instrument.js';
import type { SizeResult } from '../size/sizes.js';

/** Start size of every phase in the fit, nm (the fit moves it; any value from about 10 to 200 nm converges). */
const START_SIZE_NM = 50;

export interface OverlappedSizeInput {
  pattern: Pattern;
  search: PeakSearchResult;
  match: MatchResult;
  size: SizeResult;
  sized: StoredReference;
  referenceByName: ReferenceLookup;
  instrument: InstrumentProfile | null;
  wavelength: Wavelength;
}

/** Is a group fit called for: the phase has peaks, every one overlapped, and no size came from them? */
export function needsGroupFit(size: SizeResult): boolean {
  return size.scherrer.sizeNm === null && size.peaks.length > 0 && size.peaks.every((p) => p.limit === 'overlap') && size.settings.instrument !== null;
}

export function overlappedPhaseSize(input: OverlappedSizeInput): GroupFitOutcome {
  const { pattern, search, match, size, sized, referenceByName, instrument, wavelength } = input;
  if (!instrument) return { reason: 'a constrained group fit needs an instrument profile' };
  const present = match.phases.filter((p) => p.verdict !== 'not-seen' && (p.inExplanation ?? true));
  const sizedMatch = match.phases.find((p) => p.name === sized.name);
  const others = present.filter((p) => p.name !== sized.name);
  if (others.length === 0) return { reason: `no other phase found present accounts for the overlaps of ${sized.name}` };
  const phaseOf = (reference: StoredReference, phaseMatch: PhaseMatch | undefined, refined: boolean): GroupFitPhase => ({
    name: reference.name,
    lines: linePositions(reference, refined ? phaseMatch : undefined, match, wavelength),
    startScale: phaseMatch && phaseMatch.scale > 0 ? phaseMatch.scale : 1,
    startSizeNm: START_SIZE_NM,
  });
  const phasesWith = (refined: boolean): GroupFitPhase[] => {
    const phases = [phaseOf(sized, sizedMatch, refined)];
    for (const other of others) {
      const reference = referenceByName.get(other.name);
      if (reference) phases.push(phaseOf(reference, other, refined));
    }
    return phases;
  };
  const variance = new Float64Array(pattern.x.length);
  const scale = search.noise.model === 'measured' ? search.noise.scale : 1;
  for (let i = 0; i < variance.length; i++) variance[i] = pattern.sigma ? pattern.sigma[i] ** 2 : scale * scale * Math.max(pattern.y[i], 1);
  const fit = (refined: boolean) =>
    constrainedGroupFit({
      x: pattern.x, y: pattern.y, background: search.background, variance, wavelength, instrument, k: size.k, breadth: size.breadth,
      phases: phasesWith(refined),
      positionsFrom: refined ? 'the refined cells and the sample shift' : "the reference cells and the sample shift",
    });
  // A cell refined on blended peaks can be pulled by the blends: the reference cells are tried as well,
  // and the fit that leaves the smaller χ² is kept.
  const fromReference = fit(false);
  if (!present.some((p) => p.cell)) return fromReference;
  const fromRefined = fit(true);
  if ('reason' in fromRefined) return fromReference;
  if ('reason' in fromReference) return fromRefined;
  return fromRefined.reducedChi2 <= fromReference.reducedChi2 ? fromRefined : fromReference;
}

/** A phase's Kα1 line positions: d from its refined cell where it has one (and the line its hkl), plus the sample's shift. */
function linePositions(reference: StoredReference, phaseMatch: PhaseMatch | undefined, match: MatchResult, wavelength: Wavelength): GroupFitPhase['lines'] {
  const cell = phaseMatch?.cell;
  const { zeroDeg, displacementCosDeg } = match.shift;
  return reference.lines.flatMap((line) => {
    const d = cell && line.hkl ? dSpacing({ a: cell.a, b: cell.b, c: cell.c, alpha: cell.alpha, beta: cell.beta, gamma: cell.gamma }, line.hkl) : line.d;
    const tt = twoThetaFromD(d, wavelength.lambda1);
    if (!Number.isFinite(tt) || line.intensity === null) return [];
    return [{ twoThetaDeg: tt + zeroDeg + displacementCosDeg * Math.cos((tt / 2) * DEG_TO_RAD), intensity: line.intensity }];
  });
}
