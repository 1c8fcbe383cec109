/**
 * Which fitted peaks of a group are kept: those that stand clear of the noise (height, and in a search the
 * area's integrated significance), lie inside their window, are broader than a spike and not pinned at the
 * broadest width allowed, stay near where they were found, and are not duplicates of a stronger peak or of
 * its Kα2 partner. Weak peaks go one of each correlated set per round (backward elimination), and the group
 * is refitted without them.
 */
import type { FittedPeak } from '../model/peak.js';
import { HEIGHT, partnerPosition, POS, type PeakFitSetting } from './peak-parameters.js';

/** A fitted peak that moved further than this many FWHM from where it was found is not the peak that was found. */
const MAX_MOVE_FWHM = 1;
/** Nor one that came out narrower than found by more than this factor. */
const MAX_WIDTH_CHANGE = 4;
/** A fitted width within this fraction of the upper limit counts as pinned there. */
const PINNED_WIDTH_FRACTION = 0.995;
/** Too-weak peaks whose heights correlate beyond this are taken out one at a time (see survivingPeaks). */
const SPARE_CORRELATION = 0.5;
/** Two fitted peaks closer than this fraction of their FWHM cannot be told apart (common practice). */
const DUPLICATE_FWHM_FRACTION = 0.5;

/**
 * Rules for keeping a fitted peak, used by the peak search: besides its height standing `pruneBelowSigma`
 * standard uncertainties clear of zero, its area must be at least thresholdSigma standard uncertainties of
 * its area (integrated significance, the same at any step), it must stay near where it was found, not come
 * out much narrower than it looked, and not be pinned at the broadest width allowed (a piece of a hump).
 */
export interface PeakAcceptance {
  thresholdSigma: number;
  /**
   * σ of each point for the fit's weights, when not the pattern's own (for counts, √ of the smoothed
   * counts: weights from the raw counts favour upward fluctuations where counts are low).
   */
  weightSigma?: Float64Array;
  /**
   * Also stop a fit once a step lowers χ² by less than this, in units of the group's reduced χ² where that
   * exceeds 1 (its σ are scaled by it): Δχ² = 0.01 means the parameters are within about a tenth of their
   * standard uncertainties of the minimum, enough for a search.
   */
  convergedChi2Change?: number;
}

/** What the keep-or-drop decision on one group's fit looks at. */
export interface GroupVerdictInput {
  /** The group's fitted peaks (describeGroupPeaks) and the covariance of its parameters. */
  peaks: FittedPeak[];
  covariance: Float64Array;
  /** The limits of the fit's parameters (a position on its limit is at its window's edge). */
  lower: Float64Array;
  upper: Float64Array;
  /** Heights must stand this many σ clear of zero. */
  heightSigmas: number;
  /** The search's rules, when the fit is a peak search's. */
  acceptance: PeakAcceptance | undefined;
  /** Where each peak was found and how broad it looked then. */
  foundAt: Float64Array;
  foundFwhm: Float64Array;
  /** σ of each peak's area with the group's background line held fixed (describeGroupPeaks). */
  areaSigmaGivenLine: Float64Array;
}

/**
 * Indices of peaks that stand clear of the noise, are wider than a spike, and are not duplicates. Of
 * peaks too weak only because they share their signal with another too-weak peak (heights correlated
 * beyond SPARE_CORRELATION: two fits of one line, say), only the least significant goes (or the duplicate);
 * the others are refitted without it (backward elimination, one of each correlated set per round).
 */
export function survivingPeaks(setting: PeakFitSetting, input: GroupVerdictInput): number[] {
  const { peaks, covariance, lower, upper, acceptance } = input;
  const { perPeak, minFwhm, maxFwhm } = setting;
  const threshold = input.heightSigmas;
  const keep: number[] = [];
  const weak: number[] = [];
  const dropped: number[] = [];
  for (let k = 0; k < peaks.length; k++) {
    const p = peaks[k];
    const atEdge = p.twoTheta <= lower[k * perPeak + POS] || p.twoTheta >= upper[k * perPeak + POS];
    // In a search, a peak pinned at the broadest width allowed wants to be broader: a piece of an amorphous hump.
    const pinnedBroad = acceptance !== undefined && p.fwhm >= PINNED_WIDTH_FRACTION * maxFwhm;
    if (p.fwhm < minFwhm || p.fwhm > maxFwhm || atEdge || pinnedBroad) continue;
    let duplicate = false;
    for (let j = 0; j < peaks.length && !duplicate; j++) {
      if (j === k) continue;
      const q = peaks[j];
      const close = DUPLICATE_FWHM_FRACTION * Math.max(p.fwhm, q.fwhm);
      const partner = partnerPosition(setting, q.twoTheta);
      if (Math.abs(p.twoTheta - q.twoTheta) < close && (q.height > p.height || (q.height === p.height && j < k))) duplicate = true;
      // A weak peak sitting on a stronger peak's Kα2 partner is the partner itself.
      if (setting.lambda2 !== null && Math.abs(p.twoTheta - partner) < close && p.height < setting.ratio * q.height) duplicate = true;
    }
    if (duplicate) {
      dropped.push(k);
      continue;
    }
    if (!(p.height > threshold * p.heightSigma) || (acceptance && !standsClear(input, acceptance, k, p))) weak.push(k);
    else keep.push(k);
  }
  if (weak.length === 0 || weak.length + dropped.length < 2) return keep;
  // Least significant first; a weak peak correlated with one already dropped (or a duplicate) is spared this round.
  const significance = (k: number): number => peaks[k].height / peaks[k].heightSigma;
  weak.sort((a, b) => significance(a) - significance(b));
  const paramCount = peaks.length * perPeak + 2;
  for (const k of weak) {
    if (dropped.some((j) => Math.abs(heightCorrelation(covariance, paramCount, perPeak, j, k)) > SPARE_CORRELATION)) keep.push(k);
    else dropped.push(k);
  }
  return keep.sort((a, b) => a - b);
}

/** Correlation of the heights of peaks j and k of the group (0 where either is held fixed). */
function heightCorrelation(covariance: Float64Array, n: number, perPeak: number, j: number, k: number): number {
  const a = j * perPeak + HEIGHT;
  const b = k * perPeak + HEIGHT;
  const rho = covariance[a * n + b] / Math.sqrt(covariance[a * n + a] * covariance[b * n + b]);
  return Number.isFinite(rho) ? rho : 0;
}

/** The acceptance rules on significance, movement and width (see PeakAcceptance). */
function standsClear(input: GroupVerdictInput, acceptance: PeakAcceptance, k: number, peak: FittedPeak): boolean {
  const found = input.foundFwhm[k];
  if (Math.abs(peak.twoTheta - input.foundAt[k]) > MAX_MOVE_FWHM * Math.max(found, peak.fwhm)) return false;
  // Narrower than found is a spike on a peak's top; broader is allowed up to the pattern's width bound (the
  // width found on a weak peak's noisy top can be a fraction of its own, the more so the finer the step).
  if (peak.fwhm * MAX_WIDTH_CHANGE < found) return false;
  // Integrated significance: the area against the σ of the area, which (unlike a height against the
  // σ of one point) does not depend on the step size when the counting time per degree is the same.
  // It is taken with the group's straight background line held fixed: that line is pinned by however many
  // points the fit region spans beyond the peak, a number of points (not degrees), so its share of the
  // area's σ would change with the step.
  return peak.area >= acceptance.thresholdSigma * input.areaSigmaGivenLine[k];
}
