import type { RadiationSource } from './satellites.js';
import type { Wavelength } from '../model/wavelengths.js';
import type { ReferenceIndex } from './reference-index.js';
import type { MatchTolerance } from './tolerance.js';

/** Options of `matchPhases`; every one but the wavelength has a documented default. */
export interface MatchOptions {
  /** The wavelength the peaks were measured with (their 2θ are Kα1 positions). */
  wavelength: Wavelength;
  /**
   * Half-width of the matching window in degrees 2θ at Cu Kα1 (default 0.1), held as the same
   * precision in d at the pattern's wavelength (tolerance.ts). Give at most one of the three tolerances.
   */
  toleranceDeg?: number;
  /** The matching half-window directly in d, Å, for every line. */
  toleranceD?: number;
  /** The matching half-window in units of the FWHM (the instrument's where `instrumentFwhmAt` is given, else each peak's own). */
  toleranceFwhm?: number;
  /** The instrument profile's FWHM at a 2θ, degrees (its Caglioti curve), for `toleranceFwhm`. */
  instrumentFwhmAt?: (twoThetaDeg: number) => number;
  /**
   * A zero offset measured on a standard (the instrument profile's), degrees 2θ: then the zero is
   * held at it and only the specimen displacement is refined.
   */
  fixedZeroDeg?: number;
  /** Name of the phase the chemist expects; it explains the pattern first when it fits about as well as the best. */
  target?: string;
  /**
   * Background under the peaks (counts on 2θ), to judge whether a missing line would have been visible;
   * sigma, when given, is the noise at each point (default √background, for counts).
   */
  background?: { x: Float64Array; y: Float64Array; sigma?: Float64Array };
  /** Measured 2θ range, degrees; default: the background's x range, else the span of the peaks. */
  twoThetaRangeDeg?: { min: number; max: number };
  /** Largest zero offset the refinement may use, degrees 2θ (default 0.15). */
  maxZeroDeg?: number;
  /** Largest sample-displacement coefficient (Δ2θ = D·cosθ), degrees 2θ (default 0.15). */
  maxDisplacementDeg?: number;
  /** A prebuilt d-sorted index of the references (see buildReferenceIndex); saves rebuilding it per pattern. */
  /** What the beam is: a filtered or unfiltered tube, a monochromator, a synchrotron (default ni-filter): which satellites to expect. */
  source?: RadiationSource;
  index?: ReferenceIndex;
  /** How many screened candidates get the full score per round (default 40). */
  candidates?: number;
  /** Each refined cell parameter stays within this fraction of the reference's (default 0.02: ±2 %). */
  cellBoundFraction?: number;
  /** Goniometer radius for the specimen displacement in mm (default 240). */
  goniometerRadiusMm?: number;
  /** A reference spiked into the sample at a known weight fraction (0–1 of the spiked sample): absolute fractions and the amorphous content. */
  internalStandard?: { name: string; weightFraction: number };
  /** Most phases the explanation may use (default 12; it stops earlier when nothing significant is left). */
  maxPhases?: number;
  /** How many phases judged absent are listed after the present ones (default 5). */
  listAbsent?: number;
}

/** The refined shift applied to every reference line: Δ2θ = zeroDeg + displacementCosDeg·cosθ. */
export interface MatchShift {
  zeroDeg: number;
  displacementCosDeg: number;
}

/**
 * The pattern's one shift, refined jointly over the resolved lines of every phase taken into the
 * explanation, with σ (null where not refined: no displacement is kept unless it is significant).
 */
export interface SampleShift extends MatchShift {
  zeroSigmaDeg: number | null;
  displacementSigmaDeg: number | null;
  /** Specimen displacement s in mm, by Δ2θ(rad) = −2s·cosθ/R (the sign follows that formula). */
  displacementMm: number;
  displacementMmSigma: number | null;
  goniometerRadiusMm: number;
  /** Resolved lines the shift was refined on. */
  linesUsed: number;
  /**
   * How the zero offset is known: `refined` (its σ from the lines), `bounded` (the lines hardly fix
   * it: it is known only to lie within its bound, and its σ is that of a value anywhere within it),
   * `instrument-profile` (held at the zero measured on the standard; no σ of its own).
   */
  zeroStatus?: ShiftTermStatus;
  /** The same for the displacement (`not-refined` when the scan has too few lines for one). */
  displacementStatus?: ShiftTermStatus | 'not-refined';
}

export type ShiftTermStatus = 'refined' | 'bounded' | 'instrument-profile';

/** A refined cell, Å and degrees, with σ (0 for a parameter fixed or tied by symmetry to one whose σ it carries). */
export interface RefinedCell {
  a: number; aSigma: number;
  b: number; bSigma: number;
  c: number; cSigma: number;
  alpha: number; alphaSigma: number;
  beta: number; betaSigma: number;
  gamma: number; gammaSigma: number;
  volume: number; volumeSigma: number;
}

export type Verdict = 'present' | 'uncertain' | 'not-seen';

/** The five parts of a phase's score, each in 0–1 (the formula is documented in score.ts). */
export interface ScoreParts {
  position: number;
  intensityFound: number;
  missingStrong: number;
  relativeIntensity: number;
  explained: number;
}

export interface MatchedLine {
  d: number;
  intensity: number | null;
  hkl?: [number, number, number];
  /** Expected Kα1 position after the shift, degrees 2θ. */
  twoThetaExpected: number;
  /** Position of the measured peak it was matched to, degrees 2θ. */
  twoThetaMeasured: number;
  /** Index of that peak in the analysis's peak list. */
  peakIndex: number;
  /** True when the peak is also claimed by a phase accepted earlier (shared, not counted twice). */
  shared: boolean;
}

export interface MissingLine {
  d: number;
  intensity: number;
  twoTheta: number;
  /** Height the line would have had at the phase's measured scale, counts. */
  expectedHeight: number;
  /** That height in units of the detection level (3·√background); above 1 it would have been seen. */
  visibility: number;
}

export interface PhaseMatch {
  name: string;
  formula: string;
  tags: string[];
  score: number;
  verdict: Verdict;
  matchedLines: number;
  missingStrongLines: MissingLine[];
  /** Chung's matrix-flushing weight fraction, or null where the phase is not quantified. */
  weightFraction: number | null;
  /** For a reference tagged as a decomposition product or impurity and not seen: the weight % above which it would be seen here. */
  detectionLimitWeightPercent?: number | null;
  /** σ of the weight fraction from the scales' σ (the scatter of the phases' areas about the joint fit); null where it cannot be measured. */
  weightFractionSigma?: number | null;
  /** With an internal standard: the weight fraction in the unspiked sample (amorphous matter counted), with σ. */
  absoluteWeightFraction?: number | null;
  absoluteWeightFractionSigma?: number | null;
  /** "quantified" or "not quantified" (no reference intensity ratio, or phase not present). */
  quantification: 'quantified' | 'not quantified';
  parts: ScoreParts;
  /** Measured integrated intensity per unit of reference intensity (counts·degrees per 1 % line). */
  scale: number;
  /** Share of the measured peak area on the peaks this phase's lines match, 0–1 (peaks shared with other phases included). */
  explainedAreaShare: number;
  /**
   * Share of the measured peak area on peaks that only this phase, of the phases taken into the
   * explanation, has lines on (matched or hidden under the peak), 0–1; 0 for a phase not taken in.
   */
  exclusiveAreaShare?: number;
  /** True when the phase was taken into the explanation of the pattern (a phase only listed is not needed to explain it). */
  inExplanation?: boolean;
  /** The shift this phase was judged with: the sample's one shift (a phase never has a shift of its own). */
  shift: MatchShift;
  /** Refined cell of a phase taken into the explanation (absent otherwise, or when it could not be refined). */
  cell?: RefinedCell;
  /** Volume change of the refined cell from the reference's, % (the volume, not an edge: one number for every crystal system). */
  cellChangePercent?: number;
  /** That change in units of its σ (null when σ is 0). */
  cellChangeSigmas?: number | null;
  /**
   * Where the refined cell lies significantly between this reference and another of its structure
   * type (same space group, similar cell): the two end members (smaller cell first), Vegard's-law
   * fraction x of the second with its σ from the cell σ, and the sentence (with the caution that
   * Vegard's law is an approximation).
   */
  solidSolution?: { between: [string, string]; fraction: number; fractionSigma: number; statement: string };
  /** Mean |Δ2θ| of the matched lines after the shift, degrees. */
  meanResidualDeg: number;
  lines: MatchedLine[];
  reasons: string[];
}

export interface UnexplainedPeak {
  /** Index of the peak in the analysis's peak list. */
  peakIndex: number;
  twoTheta: number;
  d: number;
  height: number;
  /** Below the target's first line (or the best phase's, with no target). */
  lowAngle: boolean;
  /** References tagged as decomposition products with a line within tolerance (not enough to accept them). */
  possibleSources: string[];
  /** The line whose Kβ or tube-contamination (W Lα) satellite this peak could be ("Cu Kβ of the peak at 28.441°"), or null. */
  satelliteOf?: string | null;
}

export interface MatchResult {
  shift: SampleShift;
  phases: PhaseMatch[];
  unexplained: UnexplainedPeak[];
  /** Share of the measured peak area no present phase explains, 0–1. */
  unexplainedAreaShare: number;
  /** True when the pattern shows too little to support any phase claim. */
  featureless: boolean;
  /** Median matching half-window over the peaks, degrees of this pattern's 2θ (each peak has its own; see tolerance). */
  toleranceDeg: number;
  /** The tolerance as stated (in 2θ at Cu Kα, in d, or in FWHM units), in words, and its median half-window here. */
  tolerance?: MatchTolerance & { description: string; medianWindowDeg: number };
  /** The bound on the number of phases in the explanation, and whether it stopped the explanation. */
  phaseLimit?: { limit: number; reached: boolean; reason: string };
  /** With an internal standard: the amorphous (and unidentified) content of the unspiked sample, 0–1, with σ; null without one. */
  amorphous?: { fraction: number; sigma: number } | null;
  /** What the weight fractions assume, or how the internal standard was used. */
  quantificationStatement?: string;
  reasons: string[];
}
