import type { PeakTable } from './peak-table.js';
import { nearestPeak } from './peak-table.js';
import type { PhaseLines } from './score.js';
import type { MatchShift } from './types.js';

export interface ShiftBounds {
  toleranceDeg: number;
  maxZeroDeg: number;
  maxDisplacementDeg: number;
  /** A zero offset measured on a standard: the zero is held at it and only the displacement moves. */
  fixedZeroDeg?: number;
}

/** Ridge on the displacement term (relative to the summed weights): zero and cosθ are nearly collinear. */
const DISPLACEMENT_RIDGE = 0.001;

/**
 * Zero offset and cosθ displacement are nearly collinear over a lab scan, so a split between them is
 * only reported when the displacement term explains the positions significantly better than a
 * constant offset alone: extra-sum-of-squares F-test (1 and n−2 degrees of freedom) against this
 * critical value, about the 99.5 % point for a dozen lines (common practice for nested fits).
 */
const DISPLACEMENT_F_CRITICAL = 12;

function displacementIsSignificant(
  count: number, sw: number, sd: number, sdd: number, sc: number, scc: number, scd: number, z: number, dd: number,
): boolean {
  if (count < 4) return false;
  const rssOffsetOnly = Math.max(sdd - (sd * sd) / sw, 0);
  const rssBoth = Math.max(sdd - 2 * z * sd - 2 * dd * scd + z * z * sw + 2 * z * dd * sc + dd * dd * scc, 0);
  const gain = rssOffsetOnly - rssBoth;
  if (!(gain > 0)) return false;
  if (rssBoth === 0) return true;
  return gain / (rssBoth / (count - 2)) > DISPLACEMENT_F_CRITICAL;
}

/** The same test with the zero held at a value measured on a standard (1 and n−1 degrees of freedom). */
function displacementIsSignificantAtFixedZero(count: number, sw: number, sd: number, sdd: number, sc: number, scc: number, scd: number, z: number, dd: number): boolean {
  if (count < 3) return false;
  // Σw(Δ − Z)² without the displacement, Σw(Δ − Z − D·cosθ)² with it.
  const rssWithout = Math.max(sdd - 2 * z * sd + z * z * sw, 0);
  const rssWith = Math.max(rssWithout - 2 * dd * (scd - z * sc) + dd * dd * scc, 0);
  const gain = rssWithout - rssWith;
  if (!(gain > 0)) return false;
  if (rssWith === 0) return true;
  return gain / (rssWith / (count - 1)) > DISPLACEMENT_F_CRITICAL;
}

/** Lines used in the coarse search for the offset (the strongest ones carry the decision). */
const SEARCH_LINES = 24;

const RAD_TO_DEG = 180 / Math.PI;

/** Intensity-weighted agreement of the strongest lines with the peaks under one offset (triangular in |Δ2θ|/tolerance), with every d scaled by `scale`. */
function agreement(lines: PhaseLines, peaks: PeakTable, zero: number, displacement: number, searchLines = SEARCH_LINES, scale = 1): number {
  let sum = 0;
  const used = Math.min(lines.count, searchLines);
  for (let m = 0; m < used; m++) {
    const j = lines.byIntensity[m];
    let position = lines.twoTheta[j];
    if (scale !== 1) {
      const sinTheta = Math.sqrt(Math.max(0, 1 - lines.cosTheta[j] * lines.cosTheta[j]));
      position = 2 * Math.asin(Math.min(1, sinTheta / scale)) * RAD_TO_DEG;
    }
    sum += lineAgreement(peaks, position + zero + displacement * lines.cosTheta[j], lines.intensity[j]);
  }
  return sum;
}

/** One line's share of the agreement: its intensity times the triangle 1 − |Δ2θ|/window at the nearest peak. */
function lineAgreement(peaks: PeakTable, tt: number, intensity: number): number {
  const k = nearestPeak(peaks, tt);
  if (k < 0) return 0;
  const r = Math.abs(peaks.twoTheta[k] - tt);
  const window = peaks.window[k];
  return r < window ? intensity * (1 - r / window) : 0;
}

/**
 * The same agreement for lines at given (unshifted) positions: under the sample's shift where it is
 * known, else the best over constant offsets on the isotropic search's grid around `startOffsetDeg`.
 */
export function offsetAgreement(
  positions: readonly number[],
  cosTheta: readonly number[],
  intensity: readonly number[],
  peaks: PeakTable,
  bounds: ShiftBounds,
  shift: MatchShift | null,
  startOffsetDeg: number,
): number {
  const at = (zero: number, displacement: number): number => {
    let sum = 0;
    for (let j = 0; j < positions.length; j++) sum += lineAgreement(peaks, positions[j]! + zero + displacement * cosTheta[j]!, intensity[j]!);
    return sum;
  };
  if (shift) return at(shift.zeroDeg, shift.displacementCosDeg);
  const step = bounds.toleranceDeg / 4;
  let best = at(startOffsetDeg, 0);
  for (let c = startOffsetDeg - 2 * step; c <= startOffsetDeg + 2 * step + 1e-12; c += step) best = Math.max(best, at(c, 0));
  return best;
}

/**
 * Refine the zero offset and the sample-displacement shift Δ2θ = Z + D·cosθ for one phase: a grid
 * search on a constant offset, then weighted least squares of Z and D on the matched lines (a weak
 * ridge keeps D small unless the data ask for it), both clamped to their bounds.
 */
export function refineShift(lines: PhaseLines, peaks: PeakTable, bounds: ShiftBounds): MatchShift {
  const tol = bounds.toleranceDeg;
  const fixed = bounds.fixedZeroDeg;
  const zeroLow = fixed ?? -bounds.maxZeroDeg;
  const zeroHigh = fixed ?? bounds.maxZeroDeg;
  const centre = fixed ?? 0;
  const reach = (fixed === undefined ? bounds.maxZeroDeg : 0) + bounds.maxDisplacementDeg;
  const step = tol / 4;
  let bestOffset = centre;
  let bestValue = agreement(lines, peaks, centre, 0);
  for (let c = centre - reach; c <= centre + reach + 1e-12; c += step) {
    const value = agreement(lines, peaks, c, 0);
    if (value > bestValue + 1e-9) {
      bestValue = value;
      bestOffset = c;
    }
  }
  let zero = Math.max(zeroLow, Math.min(zeroHigh, bestOffset));
  let displacement = Math.max(-bounds.maxDisplacementDeg, Math.min(bounds.maxDisplacementDeg, bestOffset - zero));
  for (let iteration = 0; iteration < 3; iteration++) {
    // Normal equations of Σ w (Δ − Z − D c)² + ridge·Σw·D².
    let sw = 0, sc = 0, scc = 0, sd = 0, scd = 0, sdd = 0, count = 0;
    for (let j = 0; j < lines.count; j++) {
      const c = lines.cosTheta[j];
      const tt = lines.twoTheta[j] + zero + displacement * c;
      const k = nearestPeak(peaks, tt);
      if (k < 0 || Math.abs(peaks.twoTheta[k] - tt) > peaks.window[k]) continue;
      const w = lines.intensity[j];
      const delta = peaks.twoTheta[k] - lines.twoTheta[j];
      sw += w;
      sc += w * c;
      scc += w * c * c;
      sd += w * delta;
      scd += w * c * delta;
      sdd += w * delta * delta;
      count++;
    }
    if (count < 3 || !(sw > 0)) break;
    const a11 = sw, a12 = sc, a22 = scc + DISPLACEMENT_RIDGE * sw;
    const det = a11 * a22 - a12 * a12;
    if (!(Math.abs(det) > 1e-12 * a11 * a22)) break;
    let z = (sd * a22 - a12 * scd) / det;
    let dd = (a11 * scd - a12 * sd) / det;
    if (fixed !== undefined) {
      // The zero is the standard's: only the displacement is fitted to what it leaves.
      z = fixed;
      dd = (scd - fixed * sc) / a22;
      if (!displacementIsSignificantAtFixedZero(count, sw, sd, sdd, sc, scc, scd, fixed, dd)) dd = 0;
    } else if (!displacementIsSignificant(count, sw, sd, sdd, sc, scc, scd, z, dd)) {
      z = sd / sw;
      dd = 0;
    }
    const nextDisplacement = Math.max(-bounds.maxDisplacementDeg, Math.min(bounds.maxDisplacementDeg, dd));
    // With D clamped, Z is the weighted mean of what D leaves.
    const nextZero = fixed ?? Math.max(-bounds.maxZeroDeg, Math.min(bounds.maxZeroDeg, nextDisplacement === dd ? z : (sd - nextDisplacement * sc) / sw));
    const moved = Math.abs(nextZero - zero) + Math.abs(nextDisplacement - displacement);
    zero = nextZero;
    displacement = nextDisplacement;
    if (moved < 1e-5) break;
  }
  // Keep the least-squares shift only if it agrees with the peaks at least as well as the grid's offset.
  const gridZero = Math.max(zeroLow, Math.min(zeroHigh, bestOffset));
  const gridShift = { zeroDeg: gridZero, displacementCosDeg: Math.max(-bounds.maxDisplacementDeg, Math.min(bounds.maxDisplacementDeg, bestOffset - gridZero)) };
  const refined = { zeroDeg: zero, displacementCosDeg: displacement };
  const all = lines.count;
  return agreement(lines, peaks, refined.zeroDeg, refined.displacementCosDeg, all) >= agreement(lines, peaks, gridShift.zeroDeg, gridShift.displacementCosDeg, all) ? refined : gridShift;
}

/** Scale steps of the cell search: 0.05 % in d (about the tolerance at 90° 2θ). */
const SCALE_STEP = 0.0005;
/** The cell search runs only when the reference's own cell leaves this share of the strongest lines' intensity unmatched… */
const SCALE_SEARCH_BELOW = 0.5;
/** …and a scaled cell is taken only when it matches this share of it (and 1.5× what the reference's own cell matches). */
const SCALE_ACCEPT_ABOVE = 0.75;
/** An anisotropic cell replaces an isotropic start that falls short of that only when it agrees this much better. */
const ANISOTROPIC_GAIN = 1.2;

/**
 * A starting isotropic cell scale for a candidate whose reference cell does not fit (thermal expansion,
 * a solid solution, a reference measured at another temperature): a grid on d → s·d within
 * ±maxScale, under the sample's shift where it is known, else with a constant offset searched on the
 * same grid (the first phase's search). Returns 1 when the reference's own cell fits or nothing fits better.
 */
export function searchCellScale(
  lines: PhaseLines,
  peaks: PeakTable,
  bounds: ShiftBounds,
  maxScale: number,
  shift: MatchShift | null,
  /** Isotropic scales to the reference's solid-solution partners: the search reaches them too (widened by maxScale). */
  partnerScales: readonly number[] = [],
): CellScaleSearch {
  const used = Math.min(lines.count, SEARCH_LINES);
  let total = 0;
  for (let m = 0; m < used; m++) total += lines.intensity[lines.byIntensity[m]];
  if (!(total > 0) || maxScale <= 0) return { scale: 1, offsetDeg: 0, fits: true, best: { scale: 1, offsetDeg: 0, value: 0 }, anisotropicAbove: null };
  const centre = bounds.fixedZeroDeg ?? 0;
  const reach = (bounds.fixedZeroDeg === undefined ? bounds.maxZeroDeg : 0) + bounds.maxDisplacementDeg;
  const step = bounds.toleranceDeg / 4;
  const best = (scale: number): { value: number; offset: number } => {
    if (shift) return { value: agreement(lines, peaks, shift.zeroDeg, shift.displacementCosDeg, SEARCH_LINES, scale), offset: 0 };
    let value = agreement(lines, peaks, centre, 0, SEARCH_LINES, scale);
    let offset = centre;
    for (let c = centre - reach; c <= centre + reach + 1e-12; c += step) {
      const v = agreement(lines, peaks, c, 0, SEARCH_LINES, scale);
      if (v > value + 1e-9) [value, offset] = [v, c];
    }
    return { value, offset };
  };
  const own = best(1);
  const acceptAbove = Math.max(SCALE_ACCEPT_ABOVE * total, 1.5 * own.value);
  // An anisotropic cell is tried where no isotropic one puts most of the intensity on peaks, and taken only when it does clearly better.
  const anisotropicAbove = (value: number): number | null => (value >= SCALE_ACCEPT_ABOVE * total ? null : Math.max(SCALE_ACCEPT_ABOVE * total, ANISOTROPIC_GAIN * own.value));
  if (own.value >= SCALE_SEARCH_BELOW * total) return { scale: 1, offsetDeg: own.offset, fits: true, best: { scale: 1, offsetDeg: own.offset, value: own.value }, anisotropicAbove: anisotropicAbove(own.value) };
  let chosen = { scale: 1, ...own };
  const lowest = Math.min(1, ...partnerScales) * (1 - maxScale);
  const highest = Math.max(1, ...partnerScales) * (1 + maxScale);
  for (let s = lowest; s <= highest + 1e-12; s += SCALE_STEP) {
    const trial = best(s);
    if (trial.value > chosen.value + 1e-9) chosen = { scale: s, ...trial };
  }
  const found = { scale: chosen.scale, offsetDeg: chosen.offset, value: chosen.value };
  if (chosen.scale !== 1 && chosen.value >= acceptAbove) return { scale: chosen.scale, offsetDeg: chosen.offset, fits: true, best: found, anisotropicAbove: anisotropicAbove(chosen.value) };
  return { scale: 1, offsetDeg: own.offset, fits: false, best: found, anisotropicAbove: anisotropicAbove(own.value) };
}

export interface CellScaleSearch {
  /** The scale to start from (1: the reference's own cell) and its offset. */
  scale: number;
  offsetDeg: number;
  /** Whether the reference's cell, or an isotropic scaling of it, puts enough of the strongest lines on peaks. */
  fits: boolean;
  /** The best isotropic scale found, taken or not, with its agreement (a start for an anisotropic search). */
  best: { scale: number; offsetDeg: number; value: number };
  /** Agreement an anisotropic cell must reach to be taken instead (null: the isotropic result is good enough to keep). */
  anisotropicAbove: number | null;
}
