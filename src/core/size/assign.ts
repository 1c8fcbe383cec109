/**
 * Which fitted peak belongs to which line of one reference phase, and whether that peak is clean
 * enough to give a breadth (not blended with a neighbouring line or peak).
 */
import type { Hkl } from '../model/cell.js';
import type { ReferenceLine } from '../model/reference.js';
import type { FittedPeak } from '../model/peak.js';
import { twoThetaFromD } from '../model/units.js';
import { median } from '../numeric/numeric.js';

export interface LineAssignment {
  peakIndex: number;
  line: ReferenceLine;
  /** Reference position at the Kα1 wavelength, degrees 2θ (without zero shift). */
  lineTwoThetaDeg: number;
  hkl: Hkl | null;
  /** True when the peak is not resolved from a neighbour (another line, another peak, or flagged by the fit). */
  overlap: boolean;
}

export interface AssignOptions {
  toleranceDeg: number;
  /** Estimate a constant zero offset from the nearest peaks before assigning (default true). */
  estimateZeroShift?: boolean;
  /** Search window for the zero-offset estimate, degrees (default 0.5). */
  shiftWindowDeg?: number;
  /** Lines of other phases known to be present; a peak they blend with is an overlap. */
  otherLines?: readonly OtherPhaseLine[];
}

/** A line of another phase known to be present in the pattern. */
export interface OtherPhaseLine {
  /** Reference position at the Kα1 wavelength, degrees 2θ (without zero shift, like this phase's lines). */
  twoThetaDeg: number;
  /** Its expected height above the background (counts); null when unknown (then it counts as equal to the peak's). */
  height: number | null;
  /** Its phase's typical FWHM, degrees 2θ (a finer or coarser phase has narrower or broader lines); null: as the peak's. */
  fwhmDeg: number | null;
}

export interface AssignResult {
  assignments: LineAssignment[];
  zeroShiftDeg: number;
}

/** Lines closer than this (degrees 2θ) count as one position (exactly coincident reflections such as cubic 333/511). */
const COINCIDENT_DEG = 0.01;
/** A neighbouring line within the peak's reach blends with it from this share of its intensity up. */
const BLEND_SHARE = 0.01;
/**
 * A neighbouring line the fit did not resolve as a peak of its own: within this many FWHM and from
 * MERGE_SHARE of the line's intensity up, it is fitted into the peak and broadens it (measured: a 10–16 %
 * line 1–2 FWHM away broadens a simulated peak by 15–20 %).
 */
const MERGE_FWHM = 2.5;
const MERGE_SHARE = 0.05;
/**
 * ...and further out its profile tail lifts the peak's half-maximum level: from this share of the peak's
 * height at the half-maximum point (about that relative error in the FWHM) the breadth is not trusted.
 * The tail is taken as Lorentzian (the widest a line profile has), with the peak's FWHM.
 */
const TAIL_SHARE = 0.02;

function nearestIndex(sorted: readonly number[], value: number): number {
  let lo = 0;
  let hi = sorted.length - 1;
  if (hi < 0) return -1;
  while (hi - lo > 1) {
    const mid = (lo + hi) >>> 1;
    if (sorted[mid] < value) lo = mid;
    else hi = mid;
  }
  return Math.abs(sorted[lo] - value) <= Math.abs(sorted[hi] - value) ? lo : hi;
}

/** Assign each reference line to its nearest fitted peak within the tolerance (one peak per line, nearest wins). */
export function assignReferenceLines(
  peaks: readonly FittedPeak[],
  lines: readonly ReferenceLine[],
  lambda1Angstrom: number,
  options: AssignOptions,
): AssignResult {
  const peakPositions = peaks.map((p) => p.twoTheta);
  const lineEntries = lines
    .map((line) => ({ line, tt: twoThetaFromD(line.d, lambda1Angstrom) }))
    .filter((e) => Number.isFinite(e.tt))
    .sort((a, b) => a.tt - b.tt);
  if (peaks.length === 0 || lineEntries.length === 0) return { assignments: [], zeroShiftDeg: 0 };

  let zeroShiftDeg = 0;
  if (options.estimateZeroShift ?? true) {
    const window = options.shiftWindowDeg ?? 0.5;
    const offsets: number[] = [];
    for (const e of lineEntries) {
      const j = nearestIndex(peakPositions, e.tt);
      const off = peakPositions[j] - e.tt;
      if (Math.abs(off) <= window) offsets.push(off);
    }
    if (offsets.length >= 2) zeroShiftDeg = median(offsets);
  }

  const linePositions = lineEntries.map((e) => e.tt);
  const best = new Map<number, { peakIndex: number; distance: number }>();
  peaks.forEach((peak, peakIndex) => {
    const target = peak.twoTheta - zeroShiftDeg;
    const li = nearestIndex(linePositions, target);
    const distance = Math.abs(linePositions[li] - target);
    if (distance > options.toleranceDeg) return;
    const previous = best.get(li);
    if (!previous || distance < previous.distance) best.set(li, { peakIndex, distance });
  });

  const others = options.otherLines ?? [];
  const assignments: LineAssignment[] = [];
  // A line has a fitted peak of its own when a peak lies within the tolerance of it.
  const ownPeak = (tt: number): number => {
    const k = nearestIndex(peakPositions, tt + zeroShiftDeg);
    return Math.abs(peakPositions[k] - tt - zeroShiftDeg) <= options.toleranceDeg ? k : -1;
  };
  for (const [li, { peakIndex }] of best) {
    const peak = peaks[peakIndex];
    const tt = linePositions[li];
    const reach = Math.max(peak.fwhm, options.toleranceDeg);
    const own = lineEntries[li].line.intensity;
    /** Whether a line at `at` (reference 2θ) with this relative height and FWHM blends with the peak. */
    const blendsWith = (at: number, share: number, lineFwhm: number): boolean => {
      const distance = Math.abs(at - tt);
      if (distance < reach) return share >= BLEND_SHARE;
      const k = ownPeak(at);
      if (k >= 0 && k !== peakIndex && peaks[k].group === peak.group) return false; // fitted together as its own peak
      if (distance < MERGE_FWHM * peak.fwhm && share >= MERGE_SHARE) return true;
      return share / (1 + (2 * (distance - peak.fwhm / 2) / lineFwhm) ** 2) > TAIL_SHARE;
    };
    let overlap = peak.overlapped;
    for (let j = 0; j < linePositions.length && !overlap; j++) {
      if (Math.abs(linePositions[j] - tt) <= COINCIDENT_DEG) continue;
      const other = lineEntries[j].line.intensity;
      // Relative intensity of the neighbour (unknown intensities count as equal).
      overlap = blendsWith(linePositions[j], own !== null && other !== null && own > 0 ? other / own : 1, peak.fwhm);
    }
    for (const neighbour of [peakIndex - 1, peakIndex + 1]) {
      if (neighbour >= 0 && neighbour < peaks.length && Math.abs(peaks[neighbour].twoTheta - peak.twoTheta) < peak.fwhm) overlap = true;
    }
    // Another phase's line: its expected height against this peak's, its tail with its own phase's width (a
    // broad hydrate line's tail reaches further than this phase's neighbours' do).
    for (let j = 0; j < others.length && !overlap; j++) {
      const o = others[j];
      overlap = blendsWith(o.twoThetaDeg, o.height === null ? 1 : o.height / peak.height, o.fwhmDeg ?? peak.fwhm);
    }
    const line = lineEntries[li].line;
    assignments.push({ peakIndex, line, lineTwoThetaDeg: tt, hkl: line.hkl ?? null, overlap });
  }
  assignments.sort((a, b) => a.peakIndex - b.peakIndex);
  return { assignments, zeroShiftDeg };
}
