/**
 * The score of one reference phase against the measured peaks.
 *
 * Each reference line j (relative intensity I_j, Kα1 position 2θ_j moved by the refined shift
 * Z + D·cosθ_j) is matched to the nearest measured peak k within its window t_k (the tolerance plus
 * three standard uncertainties of the peak's fitted position, see peak-table.ts). From the matched
 * peaks the phase's scale s (measured area per unit reference intensity) is the I-weighted
 * geometric mean of area/I over the peaks not already explained by an accepted phase. Then:
 *
 *   position      P = Σ_matched I_j (1 − |Δ2θ_j|/t_k) / Σ_matched I_j
 *   found         F = Σ_matched I_j / Σ_{matched or visible} I_j        (share of the visible intensity found)
 *   missing       M = 1 − Σ_{strong, unmatched} I_j c_j / Σ_{strong, matched or visible} I_j
 *                 with c_j = clamp((v_j − 1)/2, 0, 1), v_j = expected height / (3·noise): strong lines
 *                 that would stand three noise levels high and are not there count fully against the phase
 *   intensities   R = Σ_k G_k exp(−(ln ρ_k)²/(2 ln²3)) / Σ_k G_k, ρ_k = area_k / (s·G_k), G_k the summed
 *                 intensity of the phase's lines on peak k: a factor 3 off (preferred orientation) keeps 0.6
 *   explained     E = area of the not-yet-explained peaks this phase matches / area of all not-yet-explained peaks
 *
 *   score = M · min(1, n/3) · (0.25 P + 0.25 F + 0.2 R + 0.3 E)
 *
 * where n is the number of matched lines (one or two coincidences are weak evidence). Strong lines
 * are those with at least 20 % of the strongest line in range; "visible" means v_j ≥ 1.5. An unmatched
 * line within one integral breadth of a measured peak may be unresolved from it and is left out of F
 * and M. Scale and breadth (for the expected heights) come from the phase's own, unshared peaks. Without
 * known intensities R is left out and the other weights are rescaled.
 */
import type { StoredReference } from '../model/reference.js';
import { DEG_TO_RAD, twoThetaFromD } from '../model/units.js';
import type { PeakTable } from './peak-table.js';
import { nearestPeak } from './peak-table.js';
import { lineIntensity } from './reference-index.js';
import type { MatchShift, MissingLine, ScoreParts } from './types.js';

/** Lines at least this share of the strongest line in range are "strong" (common practice). */
const STRONG_LINE_SHARE = 0.2;
/** A missing line counts as visible from this many detection levels (3·noise) up. */
const VISIBLE_FOR_FOUND = 1.5;
/** Intensity ratio still judged agreeing at about 0.6 (preferred orientation tolerated). */
const INTENSITY_FACTOR_TOLERATED = 3;
const SCORE_WEIGHTS = { position: 0.25, found: 0.25, intensities: 0.2, explained: 0.3 } as const;
/** Matched lines needed before the score is not scaled down for thin evidence. */
const FULL_EVIDENCE_LINES = 3;

/** The reference lines that fall in the measured range, in typed arrays. */
export interface PhaseLines {
  reference: StoredReference;
  count: number;
  /** Unshifted Kα1 2θ, degrees. */
  twoTheta: Float64Array;
  cosTheta: Float64Array;
  intensity: Float64Array;
  /** Index of each line in reference.lines. */
  lineIndex: Int32Array;
  intensitiesKnown: boolean;
  strongestIntensity: number;
  /** Line numbers by decreasing intensity. */
  byIntensity: Int32Array;
}

export function phaseLines(reference: StoredReference, lambda: number, rangeMin: number, rangeMax: number): PhaseLines {
  const keep: number[] = [];
  const positions: number[] = [];
  reference.lines.forEach((line, i) => {
    const tt = line.d > 0 ? twoThetaFromD(line.d, lambda) : Number.NaN;
    if (Number.isFinite(tt) && tt >= rangeMin && tt <= rangeMax && lineIntensity(line.intensity) > 0) {
      keep.push(i);
      positions.push(tt);
    }
  });
  const count = keep.length;
  const twoTheta = new Float64Array(count);
  const cosTheta = new Float64Array(count);
  const intensity = new Float64Array(count);
  const lineIndex = new Int32Array(count);
  let strongest = 0;
  for (let j = 0; j < count; j++) {
    twoTheta[j] = positions[j];
    cosTheta[j] = Math.cos((positions[j] / 2) * DEG_TO_RAD);
    intensity[j] = lineIntensity(reference.lines[keep[j]].intensity);
    lineIndex[j] = keep[j];
    if (intensity[j] > strongest) strongest = intensity[j];
  }
  const intensitiesKnown = reference.lines.some((l) => l.intensity !== null);
  const byIntensity = Int32Array.from({ length: count }, (_, j) => j).sort((a, b) => intensity[b] - intensity[a] || a - b);
  return { reference, count, twoTheta, cosTheta, intensity, lineIndex, intensitiesKnown, strongestIntensity: strongest, byIntensity };
}

/** A line within one integral breadth of a measured peak may be unresolved from it: it is neither found nor missing. */
function hiddenUnderPeak(peaks: PeakTable, tt: number): boolean {
  const k = nearestPeak(peaks, tt);
  return k >= 0 && Math.abs(peaks.twoTheta[k] - tt) <= peaks.breadth[k];
}

/** Everything the judgement of one phase under one shift found out. */
export interface PhaseEvaluation {
  lines: PhaseLines;
  shift: MatchShift;
  score: number;
  parts: ScoreParts;
  /** Per line: matched peak index or -1. */
  peakOf: Int32Array;
  /** Per line: Δ2θ measured − expected (NaN when unmatched). */
  residual: Float64Array;
  matchedCount: number;
  /** Matched lines on clear peaks. */
  clearMatchedCount: number;
  /** Peaks this phase matches that no accepted phase explains yet. */
  newPeaks: number[];
  newClearPeaks: number;
  scale: number;
  missingStrong: MissingLine[];
  meanResidualDeg: number;
  /** Mean factor between measured and expected intensities (≥ 1). */
  meanIntensityFactor: number;
  /** Visible lines (matched or expected visible) in range. */
  visibleCount: number;
  sharedPeaks: number;
}

/** Peaks already explained by accepted phases: claimed[k] ≥ 0 is the accepting phase's number. */
export interface Claims {
  claimed: Int32Array;
}

export function evaluatePhase(lines: PhaseLines, peaks: PeakTable, shift: MatchShift, claims: Claims): PhaseEvaluation {
  const n = lines.count;
  const peakOf = new Int32Array(n).fill(-1);
  const residual = new Float64Array(n).fill(Number.NaN);
  const expected = new Float64Array(n);
  const groupIntensity = new Map<number, number>();
  let matchedCount = 0;
  let clearMatchedCount = 0;
  let positionSum = 0;
  let matchedIntensity = 0;
  let residualSum = 0;
  for (let j = 0; j < n; j++) {
    const tt = lines.twoTheta[j] + shift.zeroDeg + shift.displacementCosDeg * lines.cosTheta[j];
    expected[j] = tt;
    const k = nearestPeak(peaks, tt);
    if (k < 0) continue;
    const r = peaks.twoTheta[k] - tt;
    const window = peaks.window[k];
    if (Math.abs(r) > window) continue;
    peakOf[j] = k;
    residual[j] = r;
    matchedCount++;
    if (peaks.clear[k]) clearMatchedCount++;
    const w = lines.intensity[j];
    positionSum += w * (1 - Math.abs(r) / window);
    matchedIntensity += w;
    residualSum += Math.abs(r);
    groupIntensity.set(k, (groupIntensity.get(k) ?? 0) + w);
  }

  // Scale from the peaks this phase has to itself where there are any (shared peaks carry others' intensity).
  let logSum = 0;
  let logWeight = 0;
  let sharedPeaks = 0;
  for (const k of groupIntensity.keys()) if (claims.claimed[k] >= 0) sharedPeaks++;
  const useShared = sharedPeaks === groupIntensity.size;
  let breadthCos: number[] = [];
  for (const [k, g] of groupIntensity) {
    if (claims.claimed[k] >= 0 && !useShared) continue;
    breadthCos.push(peaks.breadth[k] * peaks.cosTheta[k]);
    logSum += g * Math.log(peaks.area[k] / g);
    logWeight += g;
  }
  const scale = logWeight > 0 ? Math.exp(logSum / logWeight) : 0;
  breadthCos = breadthCos.sort((a, b) => a - b);
  const breadthCosMedian = breadthCos.length ? breadthCos[breadthCos.length >> 1] : 0;

  // Visibility of every line at this scale; strong lines missing although visible.
  const strongLimit = STRONG_LINE_SHARE * lines.strongestIntensity;
  let visibleIntensity = 0;
  let strongIntensity = 0;
  let strongMissingWeight = 0;
  let visibleCount = 0;
  const missingStrong: MissingLine[] = [];
  for (let j = 0; j < n; j++) {
    const w = lines.intensity[j];
    const matched = peakOf[j] >= 0;
    let visibility = 0;
    let expectedHeight = 0;
    if (!matched && hiddenUnderPeak(peaks, expected[j])) continue;
    if (!matched && scale > 0 && breadthCosMedian > 0) {
      const breadth = breadthCosMedian / lines.cosTheta[j];
      expectedHeight = (scale * w) / breadth;
      visibility = expectedHeight / (3 * peaks.noiseAt(expected[j]));
    }
    if (matched || visibility >= VISIBLE_FOR_FOUND) {
      visibleIntensity += w;
      visibleCount++;
    }
    if (!lines.intensitiesKnown || w < strongLimit) continue;
    if (matched || visibility > 1) strongIntensity += w;
    if (!matched && visibility > 1) {
      strongMissingWeight += w * Math.min(1, Math.max(0, (visibility - 1) / 2));
      const line = lines.reference.lines[lines.lineIndex[j]];
      missingStrong.push({ d: line.d, intensity: w, twoTheta: expected[j], expectedHeight, visibility });
    }
  }
  missingStrong.sort((a, b) => b.intensity - a.intensity);

  // Relative intensities, on the peaks this phase has to itself.
  let agreementSum = 0;
  let agreementWeight = 0;
  let logFactorSum = 0;
  let groups = 0;
  const spread = Math.log(INTENSITY_FACTOR_TOLERATED);
  for (const [k, g] of groupIntensity) {
    if (claims.claimed[k] >= 0 && !useShared) continue;
    const logRatio = Math.log(peaks.area[k] / (scale * g));
    agreementSum += g * Math.exp(-(logRatio * logRatio) / (2 * spread * spread));
    agreementWeight += g;
    logFactorSum += Math.abs(logRatio);
    groups++;
  }
  let relativeIntensity = agreementWeight > 0 ? agreementSum / agreementWeight : 0;
  // One or two peaks say little about relative intensities: shrink towards neutral.
  if (groups < 3) relativeIntensity = 0.5 + ((relativeIntensity - 0.5) * Math.max(0, groups - 1)) / 2;

  // Share of the not-yet-explained peak area this phase explains.
  let openArea = 0;
  let newArea = 0;
  const newPeaks: number[] = [];
  let newClearPeaks = 0;
  for (let k = 0; k < peaks.count; k++) {
    if (claims.claimed[k] >= 0) continue;
    openArea += peaks.area[k];
    if (groupIntensity.has(k)) {
      newArea += peaks.area[k];
      newPeaks.push(k);
      if (peaks.clear[k]) newClearPeaks++;
    }
  }

  const parts: ScoreParts = {
    position: matchedIntensity > 0 ? positionSum / matchedIntensity : 0,
    intensityFound: visibleIntensity > 0 ? matchedIntensity / visibleIntensity : 0,
    missingStrong: strongIntensity > 0 ? 1 - strongMissingWeight / strongIntensity : 1,
    relativeIntensity,
    explained: openArea > 0 ? newArea / openArea : 0,
  };
  const wR = lines.intensitiesKnown ? SCORE_WEIGHTS.intensities : 0;
  const blend =
    (SCORE_WEIGHTS.position * parts.position + SCORE_WEIGHTS.found * parts.intensityFound + wR * parts.relativeIntensity + SCORE_WEIGHTS.explained * parts.explained) /
    (SCORE_WEIGHTS.position + SCORE_WEIGHTS.found + wR + SCORE_WEIGHTS.explained);
  const evidence = Math.min(1, matchedCount / Math.min(FULL_EVIDENCE_LINES, Math.max(1, n)));
  const score = matchedCount > 0 ? parts.missingStrong * evidence * blend : 0;

  return {
    lines,
    shift,
    score,
    parts,
    peakOf,
    residual,
    matchedCount,
    clearMatchedCount,
    newPeaks,
    newClearPeaks,
    scale,
    missingStrong,
    meanResidualDeg: matchedCount > 0 ? residualSum / matchedCount : 0,
    meanIntensityFactor: groups > 0 ? Math.exp(logFactorSum / groups) : 1,
    visibleCount,
    sharedPeaks,
  };
}
