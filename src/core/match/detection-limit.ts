/**
 * The detection limit of a phase not seen: the weight fraction at which its most visible line would
 * reach the detection level (3 σ of the local noise) in this pattern. From Chung's matrix flushing
 * (Chung, J. Appl. Cryst. 7, 519 (1974)): with the present phases' scales s_i and RIRs, a phase X at
 * scale s has w_X = (s/RIR_X) / (Σ s_i/RIR_i + s/RIR_X); its line j of relative intensity I_j stands
 * s·I_j/β_j high, β_j the pattern's own integral breadth at that angle (breadth·cosθ taken as constant,
 * the Scherrer dependence). Lines that fall under a measured peak are not counted: a phase cannot be
 * seen there.
 */
import { nearestPeak, type PeakTable } from './peak-table.js';
import type { PhaseLines } from './score.js';
import type { MatchShift } from './types.js';

/** A line counts as seen from this many noise σ above the background (common practice: 3σ). */
const DETECTION_NOISE_LEVELS = 3;

/** Reference tags whose absence the chemist wants bounded. */
export const BOUNDED_ABSENCE_TAGS = ['decomposition product', 'impurity'];

/** Median breadth·cosθ of the measured peaks, degrees (the pattern's own peak width scale). */
export function medianBreadthCos(table: PeakTable): number {
  if (table.count === 0) return 0;
  const values = Array.from({ length: table.count }, (_, k) => table.breadth[k] * table.cosTheta[k]).sort((a, b) => a - b);
  return values[values.length >> 1];
}

/**
 * Weight percent at which the phase would be seen, or null when it cannot be said (no RIR for it or
 * for a present phase, no present phase, or no line of it in the range clear of the measured peaks).
 */
export function detectionLimitWeightPercent(
  lines: PhaseLines,
  rir: number | null | undefined,
  present: ReadonlyArray<{ scale: number; rir: number | null | undefined }>,
  table: PeakTable,
  shift: MatchShift,
  breadthCos: number,
): number | null {
  if (!(rir && rir > 0) || present.length === 0 || !(breadthCos > 0)) return null;
  let flushed = 0;
  for (const p of present) {
    if (!(p.rir && p.rir > 0) || !(p.scale > 0)) return null;
    flushed += p.scale / p.rir;
  }
  let smallestScale = Infinity;
  for (let j = 0; j < lines.count; j++) {
    const intensity = lines.intensity[j];
    if (!(intensity > 0)) continue;
    const tt = lines.twoTheta[j] + shift.zeroDeg + shift.displacementCosDeg * lines.cosTheta[j];
    if (tt < table.rangeMin || tt > table.rangeMax) continue;
    const k = nearestPeak(table, tt);
    if (k >= 0 && Math.abs(table.twoTheta[k] - tt) <= Math.max(table.breadth[k], table.window[k])) continue;
    const breadth = breadthCos / lines.cosTheta[j];
    const scale = (DETECTION_NOISE_LEVELS * table.noiseAt(tt) * breadth) / intensity;
    if (scale < smallestScale) smallestScale = scale;
  }
  if (!Number.isFinite(smallestScale)) return null;
  const mine = smallestScale / rir;
  return (100 * mine) / (flushed + mine);
}
