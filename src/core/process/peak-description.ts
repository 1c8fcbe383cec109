/**
 * From a group's fitted parameters to FittedPeak records: the covariance (JᵀWJ)⁻¹·χ²/(N − P), as scipy's
 * curve_fit scales it, conditional on the parameters the data cannot tell apart; derived quantities (FWHM,
 * η, integral breadth, area) with their standard uncertainties by first-order propagation; and the flag of
 * peaks overlapping a neighbour.
 */
import type { FittedPeak } from '../model/peak.js';
import { dFromTwoTheta } from '../model/units.js';
import { conditionalInverse } from '../numeric/cholesky.js';
import { fitWork } from './fit-work.js';
import { ASYM, HEIGHT, partnerPosition, peakWidths, POS, W_DETA_DA, W_DETA_DB, W_DFWHM_DA, W_DFWHM_DB, W_ETA, W_FWHM, WIDTH_A, WIDTH_B, WIDTH_VALUES, type PeakFitSetting } from './peak-parameters.js';
import { pseudoVoigtBreadthWithDerivatives } from './profiles.js';

/**
 * A pivot of the covariance's Cholesky factor below this fraction of its diagonal element marks a
 * parameter that the data cannot tell from the others (its σ would be over 10⁵ times its independent σ).
 */
const SINGULAR_PIVOT = 1e-10;
/** Peaks closer than this many mean FWHMs are flagged as overlapped (common practice). */
const OVERLAP_FWHM = 1.5;
/** Widest Kα1–Kα2 separation to look past when flagging overlaps, degrees 2θ (Cu at 150°: about 2.4°). */
const MAX_PARTNER_GAP_DEG = 5;

/**
 * Covariance = (JᵀWJ)⁻¹ · χ²/(N − P) of a group of `peakCount` peaks fitted on `points` points. Where the
 * normal matrix is singular (a peak that has become degenerate with the group's background line under a broad
 * hump, a duplicate, a height at zero), the parameters that carry no information of their own are held fixed,
 * weakest first (η, then widths, then positions, then heights; the background line last), and the covariance
 * is that of the others, conditional on them: a degenerate η costs that peak nothing, and a degenerate height
 * drops only its peak. Fixed parameters get a variance of NaN on the diagonal.
 */
export function groupCovariance(normal: Float64Array, peakCount: number, perPeak: number, chi2: number, points: number): Float64Array {
  const paramCount = peakCount * perPeak + 2;
  const { inverse, fixedCount } = conditionalInverse(normal, paramCount, pivotOrder(peakCount, perPeak), SINGULAR_PIVOT, new Float64Array(paramCount * paramCount), new Float64Array(paramCount));
  if (fixedCount > 0) fitWork.singularFits++;
  const scale = chi2 / Math.max(points - paramCount, 1);
  for (let a = 0; a < paramCount * paramCount; a++) inverse[a] *= scale;
  return inverse;
}

/** Parameters in the order the covariance keeps them: the background line, heights, positions, widths, η (and asymmetry). */
function pivotOrder(peakCount: number, perPeak: number): number[] {
  const bgBase = peakCount * perPeak;
  const order = [bgBase, bgBase + 1];
  for (const slot of perPeak === 5 ? [HEIGHT, POS, WIDTH_A, WIDTH_B, ASYM] : [HEIGHT, POS, WIDTH_A, WIDTH_B]) {
    for (let k = 0; k < peakCount; k++) order.push(k * perPeak + slot);
  }
  return order;
}

/** A group's fit: parameters, their covariance (groupCovariance), χ² and the number of points fitted. */
export interface GroupFitOutcome {
  params: Float64Array;
  peakCount: number;
  covariance: Float64Array;
  chi2: number;
  points: number;
  group: number;
}

/**
 * The fitted peaks of a group with derived quantities and their standard uncertainties. Also fills
 * areaSigmaGivenLine[k]: σ of peak k's area with the group's background line held at its fitted value.
 */
export function describeGroupPeaks(setting: PeakFitSetting, fit: GroupFitOutcome, areaSigmaGivenLine: Float64Array): FittedPeak[] {
  const { params, covariance, peakCount } = fit;
  const { perPeak } = setting;
  const paramCount = peakCount * perPeak + 2;
  const reducedChi2 = fit.chi2 / Math.max(fit.points - paramCount, 1);
  const peaks: FittedPeak[] = [];
  const grad = new Float64Array(perPeak);
  const widths = new Float64Array(WIDTH_VALUES);
  // A parameter held fixed (degenerate, see groupCovariance) adds nothing to the σ of what derives from it:
  // those σ are conditional on it; its own σ is unknown (∞).
  const isFixed = (index: number): boolean => Number.isNaN(covariance[index * paramCount + index]);
  const covarianceOf = (base: number, g1: Float64Array, g2: Float64Array): number => {
    let v = 0;
    for (let a = 0; a < perPeak; a++) {
      if (g1[a] === 0 || isFixed(base + a)) continue;
      for (let b = 0; b < perPeak; b++) if (!isFixed(base + b)) v += g1[a] * g2[b] * covariance[(base + a) * paramCount + base + b];
    }
    return v;
  };
  const sigmaOf = (base: number): number => Math.sqrt(Math.max(covarianceOf(base, grad, grad), 0));
  const fwhmGrad = new Float64Array(perPeak);
  const single = (base: number, slot: number): number => {
    if (isFixed(base + slot)) return Number.POSITIVE_INFINITY;
    grad.fill(0);
    grad[slot] = 1;
    return sigmaOf(base);
  };
  for (let k = 0; k < peakCount; k++) {
    const base = k * perPeak;
    peakWidths(setting.profile, params, base, widths, 0);
    const height = params[base + HEIGHT];
    const fwhm = widths[W_FWHM];
    const eta = widths[W_ETA];
    const [breadth, dBreadthDw, dBreadthDeta] = pseudoVoigtBreadthWithDerivatives(fwhm, eta);
    const dwA = widths[W_DFWHM_DA];
    const dwB = widths[W_DFWHM_DB];
    const deA = widths[W_DETA_DA];
    const deB = widths[W_DETA_DB];

    grad.fill(0);
    grad[WIDTH_A] = dwA;
    grad[WIDTH_B] = dwB;
    const fwhmSigma = sigmaOf(base);
    fwhmGrad.set(grad);
    grad[WIDTH_A] = deA;
    grad[WIDTH_B] = deB;
    const etaSigma = sigmaOf(base);
    grad[WIDTH_A] = dBreadthDw * dwA + dBreadthDeta * deA;
    grad[WIDTH_B] = dBreadthDw * dwB + dBreadthDeta * deB;
    const breadthSigma = sigmaOf(base);
    const widthCovariance = covarianceOf(base, fwhmGrad, grad);
    const fwhmBreadthCorrelation = fwhmSigma > 0 && breadthSigma > 0 ? Math.max(-1, Math.min(1, widthCovariance / (fwhmSigma * breadthSigma))) : 0;
    grad[WIDTH_A] *= height;
    grad[WIDTH_B] *= height;
    grad[HEIGHT] = breadth;
    const areaSigma = sigmaOf(base);
    areaSigmaGivenLine[k] = givenBackgroundLine(covariance, paramCount, peakCount * perPeak, perPeak, base, grad, areaSigma);

    const twoTheta = params[base + POS];
    const peak: FittedPeak = {
      twoTheta,
      twoThetaSigma: single(base, POS),
      d: dFromTwoTheta(twoTheta, setting.lambda1),
      height,
      heightSigma: single(base, HEIGHT),
      area: height * breadth,
      areaSigma,
      fwhm,
      fwhmSigma,
      integralBreadth: breadth,
      integralBreadthSigma: breadthSigma,
      fwhmBreadthCorrelation,
      eta,
      etaSigma,
      group: fit.group,
      groupChi2: reducedChi2,
      overlapped: false,
    };
    if (setting.profile === 'tch') {
      peak.gaussianFwhm = params[base + WIDTH_A];
      peak.gaussianFwhmSigma = single(base, WIDTH_A);
      peak.lorentzianFwhm = params[base + WIDTH_B];
      peak.lorentzianFwhmSigma = single(base, WIDTH_B);
    }
    if (perPeak === 5) {
      peak.asymmetry = params[base + ASYM];
      peak.asymmetrySigma = single(base, ASYM);
    }
    peaks.push(peak);
  }
  return peaks;
}

/**
 * σ of a quantity of one peak (gradient `grad` over its parameters at `base`, marginal σ `sigma`) with the
 * background line's offset and slope (parameters bg, bg + 1) held fixed: the Schur complement v − cᵀ·C_bb⁻¹·c,
 * c = C_pb·g.
 */
function givenBackgroundLine(covariance: Float64Array, n: number, bg: number, perPeak: number, base: number, grad: Float64Array, sigma: number): number {
  const c = [0, 0];
  for (let j = 0; j < 2; j++) {
    for (let a = 0; a < perPeak; a++) {
      const value = covariance[(base + a) * n + bg + j];
      if (grad[a] !== 0 && Number.isFinite(value)) c[j] += grad[a] * value;
    }
  }
  const s00 = covariance[bg * n + bg];
  const s11 = covariance[(bg + 1) * n + bg + 1];
  const s01 = covariance[bg * n + bg + 1];
  let explained = 0;
  if (Number.isNaN(s00) && Number.isNaN(s11)) explained = 0;
  else if (Number.isNaN(s11)) explained = s00 > 0 ? (c[0] * c[0]) / s00 : 0;
  else if (Number.isNaN(s00)) explained = s11 > 0 ? (c[1] * c[1]) / s11 : 0;
  else {
    const det = s00 * s11 - s01 * s01;
    if (det > 0) explained = (s11 * c[0] * c[0] - 2 * s01 * c[0] * c[1] + s00 * c[1] * c[1]) / det;
  }
  return Math.sqrt(Math.max(sigma * sigma - explained, 0));
}

/** Flag the peaks (sorted by 2θ) closer than OVERLAP_FWHM mean FWHMs to a neighbour or to its Kα2 partner. */
export function flagOverlaps(setting: PeakFitSetting, peaks: FittedPeak[]): void {
  for (let k = 0; k < peaks.length; k++) {
    for (let j = k + 1; j < peaks.length; j++) {
      const limit = (OVERLAP_FWHM * (peaks[k].fwhm + peaks[j].fwhm)) / 2;
      const gap = peaks[j].twoTheta - peaks[k].twoTheta;
      const partnerGap = setting.lambda2 === null ? Number.POSITIVE_INFINITY : Math.abs(peaks[j].twoTheta - partnerPosition(setting, peaks[k].twoTheta));
      if (gap < limit || partnerGap < limit) {
        peaks[k].overlapped = true;
        peaks[j].overlapped = true;
      }
      if (gap > limit + MAX_PARTNER_GAP_DEG) break;
    }
  }
}
