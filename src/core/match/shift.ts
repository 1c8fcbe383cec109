import type { PeakTable } from './peak-table.js';
import { nearestPeak } from './peak-table.js';
import type { PhaseLines } from './score.js';
import type { MatchShift } from './types.js';

export interface ShiftBounds {
  toleranceDeg: number;
  maxZeroDeg: number;
  maxDisplacementDeg: number;
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

/** Lines used in the coarse search for the offset (the strongest ones carry the decision). */
const SEARCH_LINES = 24;

/** Intensity-weighted agreement of the strongest lines with the peaks under one offset (triangular in |Δ2θ|/tolerance). */
function agreement(lines: PhaseLines, peaks: PeakTable, zero: number, displacement: number, searchLines = SEARCH_LINES): number {
  let sum = 0;
  const used = Math.min(lines.count, searchLines);
  for (let m = 0; m < used; m++) {
    const j = lines.byIntensity[m];
    const tt = lines.twoTheta[j] + zero + displacement * lines.cosTheta[j];
    const k = nearestPeak(peaks, tt);
    if (k < 0) return 0;
    const r = Math.abs(peaks.twoTheta[k] - tt);
    const window = peaks.window[k];
    if (r < window) sum += lines.intensity[j] * (1 - r / window);
  }
  return sum;
}

/**
 * Refine the zero offset and the sample-displacement shift Δ2θ = Z + D·cosθ for one phase: a grid
 * search on a constant offset, then weighted least squares of Z and D on the matched lines (a weak
 * ridge keeps D small unless the data ask for it), both clamped to their bounds.
 */
export function refineShift(lines: PhaseLines, peaks: PeakTable, bounds: ShiftBounds): MatchShift {
  const tol = bounds.toleranceDeg;
  const reach = bounds.maxZeroDeg + bounds.maxDisplacementDeg;
  const step = tol / 4;
  let bestOffset = 0;
  let bestValue = agreement(lines, peaks, 0, 0);
  for (let c = -reach; c <= reach + 1e-12; c += step) {
    const value = agreement(lines, peaks, c, 0);
    if (value > bestValue + 1e-9) {
      bestValue = value;
      bestOffset = c;
    }
  }
  let zero = Math.max(-bounds.maxZeroDeg, Math.min(bounds.maxZeroDeg, bestOffset));
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
    if (!displacementIsSignificant(count, sw, sd, sdd, sc, scc, scd, z, dd)) {
      z = sd / sw;
      dd = 0;
    }
    const nextDisplacement = Math.max(-bounds.maxDisplacementDeg, Math.min(bounds.maxDisplacementDeg, dd));
    // With D clamped, Z is the weighted mean of what D leaves.
    const nextZero = Math.max(-bounds.maxZeroDeg, Math.min(bounds.maxZeroDeg, nextDisplacement === dd ? z : (sd - nextDisplacement * sc) / sw));
    const moved = Math.abs(nextZero - zero) + Math.abs(nextDisplacement - displacement);
    zero = nextZero;
    displacement = nextDisplacement;
    if (moved < 1e-5) break;
  }
  // Keep the least-squares shift only if it agrees with the peaks at least as well as the grid's offset.
  const gridZero = Math.max(-bounds.maxZeroDeg, Math.min(bounds.maxZeroDeg, bestOffset));
  const gridShift = { zeroDeg: gridZero, displacementCosDeg: Math.max(-bounds.maxDisplacementDeg, Math.min(bounds.maxDisplacementDeg, bestOffset - gridZero)) };
  const refined = { zeroDeg: zero, displacementCosDeg: displacement };
  const all = lines.count;
  return agreement(lines, peaks, refined.zeroDeg, refined.displacementCosDeg, all) >= agreement(lines, peaks, gridShift.zeroDeg, gridShift.displacementCosDeg, all) ? refined : gridShift;
}
