/**
 * A starting cell for a candidate whose lines fit no isotropic scaling of its reference cell: thermal
 * expansion or a solid solution that stretches one axis more than another. Hypotheses are built from
 * the few strongest indexed lines, as many as the crystal system has free cell parameters (one more for
 * a constant offset while the sample's shift is not yet known), each put on one of the measured peaks
 * within reach of the cell bounds; each hypothesis is solved for the free parameters (Newton on
 * 1/d² = hᵀG*h) and judged by how much of the strongest lines' intensity it puts
 * on peaks. This is random-sample consensus (Fischler & Bolles, Commun. ACM 24, 381 (1981)) made
 * exhaustive over a handful of lines; the best hypothesis is polished by least squares over every
 * strong line it puts on a peak. The sample fit (sample-fit.ts) refines the cell from there.
 */
import type { UnitCell } from '../model/cell.js';
import { cellMetric, inverseDSquared } from '../crystal/metric.js';
import { weightedLinearFit } from '../numeric/numeric.js';
import { DEG_TO_RAD } from '../model/units.js';
import { cellParameterisation, type CellParameterisation } from './cell-parameters.js';
import { nearestPeak, type PeakTable } from './peak-table.js';
import type { PhaseLines } from './score.js';
import { offsetAgreement, type ShiftBounds } from './shift.js';
import type { MatchShift } from './types.js';

const RAD_TO_DEG = 180 / Math.PI;
/** Lines that judge a hypothesis (the strongest ones carry the decision, as in the isotropic search). */
const JUDGING_LINES = 24;
/** Strongest indexed lines hypotheses are drawn from, by the number of free parameters (more parameters: fewer lines, to bound the count). */
const DRAWN_LINES: Record<number, number> = { 2: 8, 3: 7, 4: 6, 6: 7 };
/** Peaks tried per drawn line (the nearest to the isotropic start), by the number of free parameters. */
const PEAKS_PER_LINE: Record<number, number> = { 2: 4, 3: 4, 4: 4, 6: 2 };
/** A hypothesis good enough to stop early: this share of the judging lines' intensity on peaks. */
const GOOD_ENOUGH = 0.95;
/**
 * The search runs only for a candidate whose best isotropic scaling already puts this share of the
 * judging intensity on peaks (its low-angle lines, which an anisotropic change moves least): a
 * reference that shares nothing with the pattern is not bent to fit it.
 */
const SEARCH_ABOVE = 0.25;

interface Line {
  hkl: [number, number, number];
  /** Reference 2θ (Kα1, unshifted), degrees. */
  twoTheta: number;
  cosTheta: number;
  intensity: number;
}

export interface AnisotropicStart {
  cell: UnitCell;
  /** Intensity-weighted agreement of the judging lines under this cell (same measure as the isotropic search). */
  value: number;
}

/**
 * Search a cell within ±cellBound per free parameter of the reference that puts the strongest lines on
 * peaks. `start` is the best isotropic scale and its offset (searchCellScale); `shift` the sample's
 * shift where known. Returns null for a cubic cell (the isotropic search covers it) or when no
 * hypothesis does better than `beat`.
 */
export function searchAnisotropicCell(
  lines: PhaseLines,
  peaks: PeakTable,
  referenceCell: UnitCell,
  lambda: number,
  cellBound: number,
  bounds: ShiftBounds,
  shift: MatchShift | null,
  start: { scale: number; offsetDeg: number; value: number },
  beat: number,
): AnisotropicStart | null {
  const par = cellParameterisation(referenceCell);
  const cellParameters = par.names.length;
  if (cellParameters < 2 || !(cellBound > 0) || peaks.count === 0) return null;
  // Without the sample's shift a constant offset is solved with the cell (from one line more).
  const withOffset = shift === null && bounds.fixedZeroDeg === undefined;
  const m = cellParameters + (withOffset ? 1 : 0);
  const indexed: Line[] = [];
  for (let q = 0; q < lines.count && indexed.length < JUDGING_LINES; q++) {
    const j = lines.byIntensity[q];
    const hkl = lines.reference.lines[lines.lineIndex[j]].hkl;
    if (hkl) indexed.push({ hkl, twoTheta: lines.twoTheta[j], cosTheta: lines.cosTheta[j], intensity: lines.intensity[j] });
  }
  const total = indexed.reduce((s, l) => s + l.intensity, 0);
  if (start.value < SEARCH_ABOVE * total) return null;
  const drawn = indexed.slice(0, DRAWN_LINES[cellParameters] ?? 6);
  if (drawn.length < m) return null;
  const reference = par.fromCell(referenceCell);
  const lowerBound = reference.map((v) => v * (1 - cellBound));
  const upperBound = reference.map((v) => v * (1 + cellBound));
  // The known part of the offset: the sample's shift, or the fixed zero (the solved offset comes on top).
  const knownOffset = (cosTheta: number): number => (shift ? shift.zeroDeg + shift.displacementCosDeg * cosTheta : withOffset ? 0 : (bounds.fixedZeroDeg ?? 0));
  const offsetAt = (cosTheta: number): number => (withOffset ? start.offsetDeg : knownOffset(cosTheta));
  const reach = shift ? bounds.toleranceDeg : (bounds.fixedZeroDeg === undefined ? bounds.maxZeroDeg : 0) + bounds.maxDisplacementDeg + bounds.toleranceDeg;

  // Candidate peaks of each drawn line: within the cell bounds' reach, nearest first to where the isotropic start puts it.
  const candidates = drawn.map((line) => {
    const sinTheta = Math.sin((line.twoTheta / 2) * DEG_TO_RAD);
    const at = (scale: number): number => 2 * Math.asin(Math.min(1, sinTheta / scale)) * RAD_TO_DEG;
    const lo = at(1 + cellBound) - reach;
    const hi = at(1 - cellBound) + reach;
    const expected = at(start.scale) + offsetAt(line.cosTheta);
    const inReach: number[] = [];
    for (let k = 0; k < peaks.count; k++) if (peaks.twoTheta[k] >= lo && peaks.twoTheta[k] <= hi) inReach.push(k);
    return inReach.sort((p, q) => Math.abs(peaks.twoTheta[p] - expected) - Math.abs(peaks.twoTheta[q] - expected)).slice(0, PEAKS_PER_LINE[m] ?? 3);
  });

  const offsetReach = (bounds.fixedZeroDeg === undefined ? bounds.maxZeroDeg : 0) + bounds.maxDisplacementDeg;
  const cellOf = (values: number[]): UnitCell => par.toCell(values.slice(0, cellParameters));
  const judge = (values: number[]): number => {
    const { gStar } = cellMetric(cellOf(values));
    const positions = indexed.map((line) => twoThetaOf(gStar, line.hkl, lambda));
    if (positions.some((p) => !Number.isFinite(p))) return 0;
    const solvedOffset = withOffset ? values[cellParameters]! : bounds.fixedZeroDeg ?? 0;
    return offsetAgreement(positions, indexed.map((l) => l.cosTheta), indexed.map((l) => l.intensity), peaks, bounds, shift, solvedOffset);
  };
  const within = (values: number[]): boolean =>
    values.every((v, q) => (q < cellParameters ? v >= lowerBound[q]! && v <= upperBound[q]! : Math.abs(v - (bounds.fixedZeroDeg ?? 0)) <= offsetReach));
  const startValues = withOffset ? [...reference, start.offsetDeg] : reference;
  /** The judging lines under these values, each on its nearest peak when within `windowDeg` (null: the peak's own window). */
  const nearestTargets = (values: number[], windowDeg: number | null): Array<{ hkl: [number, number, number]; twoTheta: number; weight: number }> => {
    const { gStar } = cellMetric(cellOf(values));
    const solved = withOffset ? values[cellParameters]! : 0;
    const targets = [];
    for (const line of indexed) {
      const tt = twoThetaOf(gStar, line.hkl, lambda) + knownOffset(line.cosTheta) + solved;
      const k = nearestPeak(peaks, tt);
      if (k >= 0 && Math.abs(peaks.twoTheta[k] - tt) < (windowDeg ?? peaks.window[k])) {
        targets.push({ hkl: line.hkl, twoTheta: peaks.twoTheta[k] - knownOffset(line.cosTheta), weight: line.intensity });
      }
    }
    return targets;
  };

  let best: { values: number[]; value: number } | null = null;
  const chosen: number[] = [];
  const visit = (from: number): boolean => {
    if (chosen.length === m) {
      for (const pick of peakChoices(chosen.map((i) => candidates[i]!))) {
        const targets = chosen.map((i, q) => ({ hkl: drawn[i]!.hkl, twoTheta: peaks.twoTheta[pick[q]!]! - knownOffset(drawn[i]!.cosTheta), weight: 1 }));
        const values = solveCell(par, startValues.slice(), targets, lambda, withOffset);
        if (!values || !within(values)) continue;
        const value = judge(values);
        if (!best || value > best.value) best = { values, value };
        if (value >= GOOD_ENOUGH * total) return true;
      }
      return false;
    }
    for (let i = from; i < drawn.length; i++) {
      if (candidates[i]!.length === 0) continue;
      chosen.push(i);
      const done = visit(i + 1);
      chosen.pop();
      if (done) return true;
    }
    return false;
  };
  // First from the isotropic start: lines put on their nearest peaks within shrinking windows, solved together.
  let values = startValues.map((v, q) => (q < cellParameters ? v * start.scale : v));
  for (const windowDeg of [4, 2.5, 1.5, 1].map((f) => f * bounds.toleranceDeg)) {
    const targets = nearestTargets(values, windowDeg);
    if (targets.length <= m) break;
    const next = solveCell(par, values.slice(), targets, lambda, withOffset);
    if (!next || !within(next)) break;
    values = next;
    const value = judge(values);
    if (!best || value > best.value) best = { values: values.slice(), value };
  }
  if (!best || best.value <= beat) visit(0);
  const found = best as { values: number[]; value: number } | null;
  if (!found || found.value <= beat) return null;

  // Polish: least squares over every judging line the hypothesis puts within a peak's window.
  const targets = nearestTargets(found.values, null);
  const polished = targets.length > m ? solveCell(par, found.values.slice(), targets, lambda, withOffset) : null;
  const polishedValue = polished && within(polished) ? judge(polished) : -1;
  const kept = polishedValue >= found.value ? polished! : found.values;
  return { cell: cellOf(kept), value: Math.max(polishedValue, found.value) };
}

/** Every way of taking one peak from each list. */
function* peakChoices(lists: number[][]): Generator<number[]> {
  const pick = new Array<number>(lists.length).fill(0);
  if (lists.some((l) => l.length === 0)) return;
  for (;;) {
    yield pick.map((p, i) => lists[i]![p]!);
    let i = 0;
    while (i < lists.length && ++pick[i]! >= lists[i]!.length) pick[i++] = 0;
    if (i === lists.length) return;
  }
}

/** 1/d² of a measured 2θ, Å⁻². */
function qOf(twoThetaDeg: number, lambda: number): number {
  const s = (2 * Math.sin((twoThetaDeg / 2) * DEG_TO_RAD)) / lambda;
  return s * s;
}

function twoThetaOf(gStar: Float64Array, hkl: [number, number, number], lambda: number): number {
  const q = inverseDSquared(gStar, hkl[0], hkl[1], hkl[2]);
  const s = (lambda * Math.sqrt(q)) / 2;
  return s < 1 ? 2 * Math.asin(s) * RAD_TO_DEG : Number.NaN;
}

/**
 * Free parameters that give each target line its measured 1/d² (weighted least squares where there
 * are more lines than parameters): Gauss–Newton with a numerical Jacobian, a few steps from `values`.
 * With `withOffset` the last value is a constant 2θ offset taken off the measured positions first.
 * Null when the lines do not fix the parameters (a singular system: all drawn lines with l = 0, say).
 */
function solveCell(
  par: CellParameterisation,
  values: number[],
  targets: ReadonlyArray<{ hkl: [number, number, number]; twoTheta: number; weight: number }>,
  lambda: number,
  withOffset: boolean,
): number[] | null {
  const m = values.length;
  const cellParameters = withOffset ? m - 1 : m;
  const n = targets.length;
  const design = new Float64Array(n * m);
  const residual = new Float64Array(n);
  const weights = new Float64Array(n);
  // Residuals (measured − calculated 1/d²) relative to 1/d², so that every line counts alike.
  const residualsAt = (v: number[]): number[] | null => {
    try {
      const { gStar } = cellMetric(par.toCell(v.slice(0, cellParameters)));
      const offset = withOffset ? v[cellParameters]! : 0;
      return targets.map((t) => {
        const measured = qOf(t.twoTheta - offset, lambda);
        return (measured - inverseDSquared(gStar, t.hkl[0], t.hkl[1], t.hkl[2])) / measured;
      });
    } catch {
      return null;
    }
  };
  for (let i = 0; i < n; i++) weights[i] = targets[i]!.weight;
  for (let iteration = 0; iteration < 5; iteration++) {
    const r0 = residualsAt(values);
    if (!r0) return null;
    for (let i = 0; i < n; i++) residual[i] = r0[i]!;
    for (let p = 0; p < m; p++) {
      const step = p < cellParameters ? 1e-6 * Math.max(Math.abs(values[p]!), 1) : 1e-4;
      const bumped = values.slice();
      bumped[p] += step;
      const r1 = residualsAt(bumped);
      if (!r1) return null;
      // d(residual)/dp; the step solves design·δ = −residual.
      for (let i = 0; i < n; i++) design[i * m + p] = -(r1[i]! - r0[i]!) / step;
    }
    const fit = weightedLinearFit(design, residual, weights, m);
    if (!fit || fit.coefficients.some((c) => !Number.isFinite(c))) return null;
    let moved = 0;
    for (let p = 0; p < m; p++) {
      values[p] += fit.coefficients[p]!;
      moved = Math.max(moved, Math.abs(fit.coefficients[p]!) / Math.max(1, Math.abs(values[p]!)));
    }
    if (moved < 1e-10) break;
  }
  return values.every(Number.isFinite) ? values : null;
}
