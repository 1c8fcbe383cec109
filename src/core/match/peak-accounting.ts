/**
 * Which measured peaks the phases of an explanation claim, and what is left: clear peaks still open,
 * low-angle peaks, the areas per fitted group for the joint scales, and the unexplained peaks.
 */
import { positionsTagged, type StoredReference } from '../model/reference.js';
import { nearestPeak, type PeakTable } from './peak-table.js';
import { type GroupIntensities } from './quantify.js';
import { phaseLines, type Claims, type PhaseEvaluation } from './score.js';
import type { MatchShift, UnexplainedPeak } from './types.js';
import { DECOMPOSITION_TAG } from './verdict-rules.js';
import { round } from './format.js';

/** Lines weaker than this share of the strongest do not define a phase's "first line" for the low-angle flag. */
const FIRST_LINE_SHARE = 0.01;

export function countClear(table: PeakTable, claims: Claims | null): number {
  let n = 0;
  for (let k = 0; k < table.count; k++) if (table.clear[k] && (!claims || claims.claimed[k] < 0)) n++;
  return n;
}

/** 2θ (shifted) of a phase's first line: the largest d with at least 1 % of the strongest intensity. */
export function firstLineTwoTheta(evaluation: PhaseEvaluation | undefined, tol: number): number {
  if (!evaluation) return -Infinity;
  const { lines, shift } = evaluation;
  let first = Infinity;
  for (let j = 0; j < lines.count; j++) {
    if (lines.intensity[j] < FIRST_LINE_SHARE * lines.strongestIntensity) continue;
    first = Math.min(first, lines.twoTheta[j] + shift.zeroDeg + shift.displacementCosDeg * lines.cosTheta[j]);
  }
  return Number.isFinite(first) ? first - tol : -Infinity;
}

export function lowAngleOpenPeaks(table: PeakTable, claims: Claims, limit: number): Set<number> {
  const set = new Set<number>();
  for (let k = 0; k < table.count && table.twoTheta[k] < limit; k++) if (claims.claimed[k] < 0 && table.clear[k]) set.add(k);
  return set;
}

/** Shifted Kα1 position of line j under the evaluation's shift, degrees 2θ. */
function shiftedTwoTheta(evaluation: PhaseEvaluation, j: number): number {
  const { lines, shift } = evaluation;
  return lines.twoTheta[j] + shift.zeroDeg + shift.displacementCosDeg * lines.cosTheta[j];
}

/**
 * Per present phase and measured peak, the summed reference intensity of the phase's lines on the
 * peak: its matched lines, and lines within the peak's breadth that were not resolved from it
 * (hidden under it), since their intensity is part of the measured area too.
 */
export function linesOnPeaks(evaluations: readonly PhaseEvaluation[], table: PeakTable): Float64Array[] {
  return evaluations.map((evaluation) => {
    const g = new Float64Array(table.count);
    for (let j = 0; j < evaluation.lines.count; j++) {
      let k = evaluation.peakOf[j];
      if (k < 0) {
        const tt = shiftedTwoTheta(evaluation, j);
        k = nearestPeak(table, tt);
        if (k < 0 || Math.abs(tt - table.twoTheta[k]) > Math.max(table.window[k], table.breadth[k])) continue;
      }
      g[k] += evaluation.lines.intensity[j];
    }
    return g;
  });
}

/** Unmatched lines within this many integral breadths of a fitted group's peaks are part of its area. */
const INSIDE_BREADTHS = 1;

/** Unmatched lines a little further out (up to this many breadths) may or may not be part of it. */
const NEAR_BREADTHS = 2.5;

/**
 * The measured areas and each phase's reference intensity per group of peaks fitted together (the
 * fit's split of an overlapped group between its peaks is arbitrary; their sum is not). A phase's
 * intensity in a group is that of its matched lines plus its unmatched lines within a breadth of the
 * group's peaks (not resolved from them, so in the measured area); unmatched lines a little further
 * out are listed apart (their share of the area is unknown). Peaks no present phase matches are
 * left out of the areas.
 */
export function groupIntensities(evaluations: readonly PhaseEvaluation[], table: PeakTable): GroupIntensities {
  // Neighbouring peaks of one fitted group, split where they lie clearly apart (a peak list from elsewhere may put all in one group).
  const groupOf = new Int32Array(table.count);
  let groups = 0;
  for (let k = 0; k < table.count; k++) {
    const apart =
      k === 0 ||
      table.peaks[k].group !== table.peaks[k - 1].group ||
      table.twoTheta[k] - table.twoTheta[k - 1] > NEAR_BREADTHS * Math.max(table.breadth[k], table.breadth[k - 1]);
    if (apart) groups++;
    groupOf[k] = groups - 1;
  }
  const areas = new Float64Array(groups);
  const matchedPeak = new Uint8Array(table.count);
  const reach = (tt: number, breadths: number, g: number): boolean => {
    const k = nearestPeak(table, tt);
    for (let q = Math.max(0, k - 2); q <= Math.min(table.count - 1, k + 2); q++) {
      if (groupOf[q] === g && Math.abs(tt - table.twoTheta[q]) <= breadths * table.breadth[q]) return true;
    }
    return false;
  };
  const matched: Float64Array[] = [];
  const uncertain: Float64Array[] = [];
  for (const evaluation of evaluations) {
    const m = new Float64Array(groups);
    const u = new Float64Array(groups);
    for (let j = 0; j < evaluation.lines.count; j++) {
      const intensity = evaluation.lines.intensity[j];
      const k = evaluation.peakOf[j];
      if (k >= 0) {
        m[groupOf[k]] += intensity;
        matchedPeak[k] = 1;
        continue;
      }
      const tt = shiftedTwoTheta(evaluation, j);
      const nearest = nearestPeak(table, tt);
      if (nearest < 0) continue;
      const g = groupOf[nearest];
      if (reach(tt, INSIDE_BREADTHS, g)) m[g] += intensity;
      else if (reach(tt, NEAR_BREADTHS, g)) u[g] += intensity;
    }
    matched.push(m);
    uncertain.push(u);
  }
  for (let k = 0; k < table.count; k++) if (matchedPeak[k]) areas[groupOf[k]] += table.area[k];
  return { areas, matched, unmatched: uncertain };
}

/** Share of the measured peak area on peaks only this phase (of the present ones) has lines on. */
export function exclusiveAreaShares(contributions: readonly Float64Array[], table: PeakTable): number[] {
  return contributions.map((mine) => {
    let area = 0;
    for (let k = 0; k < table.count; k++) if (mine[k] > 0 && contributions.every((other) => other === mine || other[k] === 0)) area += table.area[k];
    return table.totalArea > 0 ? area / table.totalArea : 0;
  });
}

export function unexplainedPeaks(
  table: PeakTable,
  claims: Claims,
  lowAngleLimit: number,
  refs: readonly StoredReference[],
  lambda: number,
  shift: MatchShift,
): UnexplainedPeak[] {
  const decomposition = positionsTagged(refs, [DECOMPOSITION_TAG]).map((r) => phaseLines(refs[r]!, lambda, table.rangeMin, table.rangeMax));
  const out: UnexplainedPeak[] = [];
  for (let k = 0; k < table.count; k++) {
    if (claims.claimed[k] >= 0) continue;
    const tt = table.twoTheta[k];
    const possibleSources = decomposition
      .filter((lines) => {
        for (let j = 0; j < lines.count; j++) {
          const expected = lines.twoTheta[j] + shift.zeroDeg + shift.displacementCosDeg * lines.cosTheta[j];
          if (Math.abs(expected - tt) <= table.window[k]) return true;
        }
        return false;
      })
      .map((lines) => lines.reference.name);
    out.push({ peakIndex: table.inputIndex[k], twoTheta: round(tt, 4), d: round(table.peaks[k].d, 4), height: round(table.height[k], 1), lowAngle: tt < lowAngleLimit, possibleSources });
  }
  return out;
}
