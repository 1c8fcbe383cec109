/**
 * The whole analysis of one pattern: peaks → phase match against the library → crystallite sizes.
 * Used by the screens, by `crystallog analyze` and by the batch workers. Pure: the same pattern and
 * context give the same result, so batch output is byte-identical whatever the worker count.
 */
import { crystallinityEstimate, type CrystallinityEstimate } from './crystallinity.js';
import { InputError } from '../errors.js';
import { sha256Stream } from '../model/checksum.js';
import { namesOf, type StoredReference } from '../model/reference.js';
import { buildReferenceIndex, type ReferenceIndex } from '../match/reference-index.js';
import { matchPhases } from '../match/match.js';
import { type MatchOptions, type MatchResult } from '../match/types.js';
import { instrumentWidthAt } from '../size/instrument-width.js';
import type { MatchedLine, PhaseMatch } from '../match/types.js';
import type { Pattern } from '../model/pattern.js';
import type { Wavelength } from '../model/wavelengths.js';
import { DEFAULT_ANALYSIS_SETTINGS, effectiveWavelength, type AnalysisSettings } from './settings.js';
import { searchPeaks } from './search.js';
import { twoThetaFromD } from '../model/units.js';
import type { FittedPeak, NoiseEstimate } from '../model/peak.js';
import type { OtherPhaseLine } from '../size/assign.js';
import type { InstrumentProfile } from '../size/instrument.js';
import { median } from '../numeric/numeric.js';
import { crystalliteSizes, EVERY_PEAK_OVERLAPS, type SizeResult } from '../size/sizes.js';
import { needsGroupFit, overlappedPhaseSize } from './overlapped-size.js';
import type { BreadthKind, CorrectionKind } from '../size/voigt.js';

export type { AnalysisSettings } from './settings.js';

/** What every analysis of a batch shares, loaded once and only read. */
export interface AnalysisContext {
  references: readonly StoredReference[];
  /** The d-sorted line index over `references` (built once per batch). */
  index: ReferenceIndex;
  instrument: InstrumentProfile | null;
  settings: AnalysisSettings;
  /** SHA-256 over the names and versions of the references: which library state gave these results. */
  libraryDigest: string;
  /** The references by name (built once, not per pattern). */
  referenceByName: ReferenceLookup;
}

export interface ReferenceVersion {
  name: string;
  version: number;
}

export interface AnalysisResult {
  file: string;
  sha256: string;
  points: number;
  wavelength: Wavelength;
  peaks: FittedPeak[];
  /** How the noise σ behind every 3σ test was set (counting statistics, or measured from the data and why). */
  noise: NoiseEstimate;
  match: MatchResult;
  /** Sizes from the target's (or the best present phase's) lines; from every peak when no phase is present. */
  size: SizeResult;
  /** Crystalline share of the scattering above the baseline, without a standard (crystallinity.ts); null when it cannot be formed. */
  crystallinity: CrystallinityEstimate | null;
  settings: {
    wavelength: string;
    toleranceDeg: number;
    k: number;
    breadth: BreadthKind;
    correction: CorrectionKind | 'none';
    target: string | null;
    /** The background clipping half-width asked for, degrees 2θ; null when automatic. */
    backgroundHalfWidthDeg: number | null;
    instrument: string | null;
    sizePhase: string | null;
  };
  references: { count: number; libraryDigest: string; used: ReferenceVersion[] };
  warnings: string[];
}

/** Build the shared context: checks the target exists and indexes the references once. */
export function createAnalysisContext(
  references: readonly StoredReference[],
  instrument: InstrumentProfile | null,
  settings: Partial<AnalysisSettings> = {},
  index?: ReferenceIndex,
): AnalysisContext {
  const full: AnalysisSettings = { ...DEFAULT_ANALYSIS_SETTINGS, ...settings };
  checkTarget(references, full.target);
  checkPhaseNamed(references, full.sizePhase, 'the phase to size');
  checkPhaseNamed(references, full.internalStandard, 'the internal standard');
  return {
    references,
    index: index ?? buildReferenceIndex(references),
    instrument,
    settings: full,
    libraryDigest: index?.libraryDigest ?? libraryDigest(references),
    referenceByName: new ReferencesByName(references),
  };
}

/** Finds a reference by its exact name. */
export interface ReferenceLookup {
  get(name: string): StoredReference | undefined;
}

/** Scans below this many lookups, then builds a map (a single match asks for a few names out of 100 000). */
const SCANS_BEFORE_MAP = 16;

/** References by exact name: the first few lookups scan the names, later ones use a map built once. */
export class ReferencesByName implements ReferenceLookup {
  private map: Map<string, number> | null = null;
  private scans = 0;
  private names: readonly string[] | null = null;
  constructor(private readonly references: readonly StoredReference[]) {}
  get(name: string): StoredReference | undefined {
    const at = this.positionOf(name);
    return at === undefined ? undefined : this.references[at];
  }
  private positionOf(name: string): number | undefined {
    if (this.map) return this.map.get(name);
    this.names ??= namesOf(this.references);
    const names = this.names;
    if (this.scans++ < SCANS_BEFORE_MAP) {
      // Scanned from the end: with equal names the last wins, as in a map built from the list.
      for (let i = names.length - 1; i >= 0; i--) if (names[i] === name) return i;
      return undefined;
    }
    this.map = new Map();
    names.forEach((n, i) => this.map!.set(n, i));
    return this.map.get(name);
  }
}

/** A named target must be in the library (names compare without regard to case). */
export function checkTarget(references: readonly StoredReference[], target: string | null): void {
  checkPhaseNamed(references, target, 'the target');
}

function checkPhaseNamed(references: readonly StoredReference[], name: string | null, role: string): void {
  if (name !== null && !findByName(references, name)) {
    throw new InputError(`${role} "${name}" is not in the library; import it first or check the name in the library list`);
  }
}

function findByName(references: readonly StoredReference[], name: string): StoredReference | undefined {
  const key = name.toLowerCase();
  const at = namesOf(references).findIndex((n) => n.toLowerCase() === key);
  return at < 0 ? undefined : references[at];
}

export function libraryDigest(references: readonly Pick<StoredReference, 'name' | 'version'>[]): string {
  const hash = sha256Stream();
  // One update over the joined text (the same bytes as one update per reference, far fewer calls).
  hash.update(references.map((r) => `${r.name}\u0000${r.version}\u0000`).join(''));
  return hash.hex();
}

/** The curves the analysis drew on the pattern's own 2θ points. */
export interface AnalysisCurves {
  background: Float64Array;
  model: Float64Array;
}

/** Peaks, phase verdicts and crystallite sizes of one pattern. */
export function analyzePattern(pattern: Pattern, context: AnalysisContext): AnalysisResult {
  return analyzePatternWithCurves(pattern, context).result;
}

/** The same analysis, also handing back its background and model curves (the app keeps them to draw). */
export function analyzePatternWithCurves(pattern: Pattern, context: AnalysisContext): { result: AnalysisResult; curves: AnalysisCurves } {
  const { settings, references } = context;
  const warnings: string[] = [...pattern.readerNotes];
  const wavelength = effectiveWavelength(settings, pattern.wavelength);
  if (!settings.wavelength && !pattern.wavelength) warnings.push('the file names no wavelength; Cu Kα1/Kα2 assumed');

  const search = searchPeaks(pattern, settings, wavelength);
  if (search.noise.note) warnings.push(search.noise.note);
  const peaks = search.peaks;
  const instrument = context.instrument;
  const fixedZero = settings.zeroFromInstrument && instrument && Number.isFinite(instrument.zeroShiftDeg) ? instrument.zeroShiftDeg : undefined;
  const match = matchPhases(peaks, references, {
    wavelength,
    ...matchTolerance(settings, instrument),
    ...(fixedZero !== undefined ? { fixedZeroDeg: fixedZero } : {}),
    maxPhases: settings.phaseLimit,
    goniometerRadiusMm: settings.goniometerRadiusMm,
    cellBoundFraction: settings.cellBoundPercent / 100,
    internalStandard: settings.internalStandard !== null && settings.internalStandardPercent !== null ? { name: settings.internalStandard, weightFraction: settings.internalStandardPercent / 100 } : undefined,
    target: settings.target ?? undefined,
    background: { x: pattern.x, y: search.background, sigma: search.noiseSigma },
    twoThetaRangeDeg: { min: pattern.x[0], max: pattern.x[pattern.x.length - 1] },
    index: context.index,
    source: settings.source,
  });

  const present = match.phases.filter((p) => p.verdict !== 'not-seen');
  const targetName = settings.target?.toLowerCase();
  const byName = context.referenceByName;
  const chosen = settings.sizePhase !== null ? (findByName(references, settings.sizePhase) ?? null) : null;
  const sizePhaseMatch = chosen
    ? (match.phases.find((p) => p.name === chosen.name) ?? null)
    : (present.find((p) => p.name.toLowerCase() === targetName) ?? majorPhase(present));
  const sizeReference = chosen ?? (sizePhaseMatch ? (byName.get(sizePhaseMatch.name) ?? null) : null);
  const otherLines = present.filter((p) => p.name !== sizeReference?.name).flatMap((p) => otherPhaseLines(p, byName.get(p.name), peaks, wavelength));
  const size = crystalliteSizes(peaks, {
    wavelength,
    instrument: context.instrument,
    k: settings.k,
    breadth: settings.breadth,
    correction: settings.correction,
    phase: sizeReference ? { name: sizeReference.name, version: sizeReference.version, lines: sizeReference.lines } : null,
    toleranceDeg: settings.toleranceDeg,
    otherLines,
    patternIsInstrumentStandard: context.instrument !== null && context.instrument.standard.sha256 === pattern.source.sha256,
    phaseIsTarget: sizeReference !== null && sizeReference.name.toLowerCase() === targetName,
  });
  if (!sizeReference) warnings.push('no phase was found present: sizes come from every fitted peak');
  if (sizeReference && needsGroupFit(size)) {
    const outcome = overlappedPhaseSize({ pattern, search, match, size, sized: sizeReference, referenceByName: byName, instrument, wavelength });
    if ('reason' in outcome) {
      size.groupFit = null;
      size.groupFitReason = outcome.reason;
      size.warnings.push(outcome.reason);
    } else {
      size.groupFit = outcome;
      size.warnings = size.warnings.filter((w) => !w.startsWith(EVERY_PEAK_OVERLAPS));
      size.warnings.push(`every line of ${sizeReference.name} overlaps another phase's: its size, ${outcome.statement}`);
    }
  }
  warnings.push(...size.warnings);
  if (match.featureless) warnings.push('the pattern shows too few clear peaks to support a phase claim');

  const used: ReferenceVersion[] = match.phases.map((p) => ({ name: p.name, version: byName.get(p.name)?.version ?? 0 }));
  const result: AnalysisResult = {
    file: pattern.source.file,
    sha256: pattern.source.sha256,
    points: pattern.x.length,
    wavelength,
    peaks,
    noise: search.noise,
    match,
    size,
    crystallinity: crystallinityEstimate(pattern, peaks, wavelength.lambda2 ? wavelength.ratio : 0),
    settings: {
      wavelength: wavelength.label,
      toleranceDeg: settings.toleranceDeg,
      k: size.k,
      breadth: size.breadth,
      correction: size.correction,
      target: settings.target,
      backgroundHalfWidthDeg: settings.backgroundHalfWidthDeg,
      instrument: context.instrument?.name ?? null,
      sizePhase: sizeReference?.name ?? null,
    },
    references: { count: references.length, libraryDigest: context.libraryDigest, used },
    warnings,
  };
  return { result, curves: { background: search.background, model: search.model } };
}

/**
 * With no target, the phase sized is the one that explains most of the peak area (a minor phase can
 * score a hair above the main one, and its size would then stand for the sample's).
 */
function majorPhase(present: readonly PhaseMatch[]): PhaseMatch | null {
  let best: PhaseMatch | null = null;
  for (const p of present) if (!best || p.explainedAreaShare > best.explainedAreaShare) best = p;
  return best;
}

/** The matching tolerance as the settings state it: in d, in FWHM units (the profile's FWHM where there is one), or in 2θ at Cu Kα. */
function matchTolerance(settings: AnalysisSettings, instrument: InstrumentProfile | null): Pick<MatchOptions, 'toleranceDeg' | 'toleranceD' | 'toleranceFwhm' | 'instrumentFwhmAt'> {
  if (settings.toleranceDAngstrom !== null) return { toleranceD: settings.toleranceDAngstrom };
  if (settings.toleranceFwhm !== null) return { toleranceFwhm: settings.toleranceFwhm, ...(instrument ? { instrumentFwhmAt: (tt: number) => instrumentWidthAt(instrument, tt).fwhm } : {}) };
  return { toleranceDeg: settings.toleranceDeg };
}

/**
 * Every line of another phase found present, for the size module's overlap test: where it lies, how high it
 * should stand (the phase's scale, measured height over reference intensity, median over the lines it owns)
 * and how broad its phase's peaks are — a line it did not match (hidden under a peak of the sized phase)
 * still blends with that peak.
 */
function otherPhaseLines(phase: PhaseMatch, reference: StoredReference | undefined, peaks: readonly FittedPeak[], wavelength: Wavelength): OtherPhaseLine[] {
  if (!reference) return [];
  const own = phase.lines
    .filter((line) => !line.shared && line.intensity !== null && line.intensity > 0)
    .map((line) => ({ line, peak: peaks[line.peakIndex] }))
    .filter((e): e is { line: MatchedLine; peak: FittedPeak } => e.peak !== undefined);
  const scale = own.length > 0 ? median(own.map((e) => e.peak.height / (e.line.intensity as number))) : null;
  const fwhmDeg = own.length > 0 ? median(own.map((e) => e.peak.fwhm)) : null;
  return reference.lines
    .map((line) => ({ twoThetaDeg: twoThetaFromD(line.d, wavelength.lambda1), height: scale !== null && line.intensity !== null ? scale * line.intensity : null, fwhmDeg }))
    .filter((line) => Number.isFinite(line.twoThetaDeg));
}
