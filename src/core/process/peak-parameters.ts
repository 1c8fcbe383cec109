/**
 * How a fitted peak is parameterised: per peak its position, height and two widths (FWHM and η for the
 * pseudo-Voigt, Gaussian and Lorentzian FWHM for the Thompson–Cox–Hastings mix, J. Appl. Cryst. 20, 79
 * (1987)) and optionally a split-profile asymmetry; a group's parameters are its peaks' in a row, then the
 * offset and slope of the group's straight background line. Also the fit's fixed setting (data, weights,
 * Kα2 partner, width limits), the starting values and the limits.
 */
import type { PeakGuess, ProfileModel } from '../model/peak.js';
import { nearestIndex } from '../model/sorted.js';
import { partnerTwoThetaDeg } from './kalpha2.js';
import { thompsonCoxHastingsWithDerivatives } from './profiles.js';

// Per-peak parameter slots.
export const POS = 0;
export const HEIGHT = 1;
/** FWHM (pseudo-Voigt) or Gaussian FWHM (TCH). */
export const WIDTH_A = 2;
/** η (pseudo-Voigt) or Lorentzian FWHM (TCH). */
export const WIDTH_B = 3;
export const ASYM = 4;
/** Largest split-profile asymmetry allowed either way. */
const MAX_ASYMMETRY = 0.8;

/** What every group fit of one pattern shares. */
export interface PeakFitSetting {
  x: Float64Array;
  y: Float64Array;
  /** 1/σ² of each point. */
  weight: Float64Array;
  background: Float64Array;
  profile: ProfileModel;
  /** Parameters per peak: 4, or 5 with asymmetry. */
  perPeak: number;
  lambda1: number;
  /** Kα2 wavelength, or null for a single line; ratio is the Kα2/Kα1 intensity ratio (0 for none). */
  lambda2: number | null;
  ratio: number;
  minFwhm: number;
  maxFwhm: number;
}

/** 2θ of the Kα2 partner of a Kα1 line at `pos` (the line itself for a single wavelength). */
export function partnerPosition(setting: PeakFitSetting, pos: number): number {
  return setting.lambda2 === null ? pos : partnerTwoThetaDeg(pos, setting.lambda1, setting.lambda2);
}

/** FWHM of the peak whose parameters start at `base` of p (either profile). */
export function fwhmOf(setting: PeakFitSetting, p: Float64Array, base: number): number {
  if (setting.profile === 'tch') return thompsonCoxHastingsWithDerivatives(p[base + WIDTH_A], p[base + WIDTH_B]).fwhm;
  return p[base + WIDTH_A];
}

/** η of the peak whose parameters start at `base` of p (either profile). */
export function etaOf(setting: PeakFitSetting, p: Float64Array, base: number): number {
  return setting.profile === 'tch' ? thompsonCoxHastingsWithDerivatives(p[base + WIDTH_A], p[base + WIDTH_B]).eta : p[base + WIDTH_B];
}

// Layout of peakWidths' output.
export const WIDTH_VALUES = 6;
export const W_FWHM = 0;
export const W_ETA = 1;
export const W_DFWHM_DA = 2;
export const W_DFWHM_DB = 3;
export const W_DETA_DA = 4;
export const W_DETA_DB = 5;

/** FWHM and η of a peak with their derivatives by its two width parameters, into out[at … at + WIDTH_VALUES). */
export function peakWidths(profile: ProfileModel, p: Float64Array, base: number, out: Float64Array, at: number): void {
  if (profile === 'tch') {
    const t = thompsonCoxHastingsWithDerivatives(p[base + WIDTH_A], p[base + WIDTH_B]);
    out[at + W_FWHM] = t.fwhm;
    out[at + W_ETA] = t.eta;
    out[at + W_DFWHM_DA] = t.dFwhmDGaussian;
    out[at + W_DFWHM_DB] = t.dFwhmDLorentzian;
    out[at + W_DETA_DA] = t.dEtaDGaussian;
    out[at + W_DETA_DB] = t.dEtaDLorentzian;
  } else {
    out[at + W_FWHM] = p[base + WIDTH_A];
    out[at + W_ETA] = p[base + WIDTH_B];
    out[at + W_DFWHM_DA] = 1;
    out[at + W_DFWHM_DB] = 0;
    out[at + W_DETA_DA] = 0;
    out[at + W_DETA_DB] = 1;
  }
}

/** Starting parameters for one peak, or null when the position lies outside the pattern. */
export function startingPeak(setting: PeakFitSetting, guess: PeakGuess): Float64Array | null {
  const { x, y, background } = setting;
  const n = x.length;
  const pos = guess.twoTheta;
  if (!Number.isFinite(pos) || pos <= x[0] || pos >= x[n - 1]) return null;
  const i = nearestIndex(x, pos);
  const net = (k: number): number => y[k] - background[k];
  const height = guess.height ?? Math.max(net(i), 1e-6);
  let fwhm = guess.fwhm;
  if (fwhm === undefined) {
    let left = i;
    while (left > 0 && net(left) > height / 2) left--;
    let right = i;
    while (right < n - 1 && net(right) > height / 2) right++;
    fwhm = x[right] - x[left];
  }
  fwhm = Math.min(Math.max(fwhm, 2 * setting.minFwhm), setting.maxFwhm / 2);
  const eta = Math.min(Math.max(guess.eta ?? 0.5, 0), 1);
  const start = new Float64Array(setting.perPeak);
  start[POS] = pos;
  start[HEIGHT] = height;
  if (setting.profile === 'tch') {
    // A Voigt with equal Gaussian and Lorentzian widths has FWHM ≈ 1.64 times either.
    start[WIDTH_A] = fwhm * (1 - eta * 0.6);
    start[WIDTH_B] = fwhm * eta * 0.8;
  } else {
    start[WIDTH_A] = fwhm;
    start[WIDTH_B] = eta;
  }
  return start;
}

/**
 * Limits that keep a group's parameters physical: heights ≥ 0 (flagged in approachLower: a height stops short
 * of zero, where its peak would have no derivatives left to come back with), widths within the setting's
 * limits, 0 ≤ η ≤ 1, each position within [positionLow[k], positionHigh[k]]; the background line is free.
 */
export function setGroupLimits(
  setting: PeakFitSetting,
  peakCount: number,
  positionLow: ArrayLike<number>,
  positionHigh: ArrayLike<number>,
  lower: Float64Array,
  upper: Float64Array,
  approachLower: Uint8Array,
): void {
  const { perPeak, minFwhm, maxFwhm } = setting;
  const paramCount = peakCount * perPeak + 2;
  lower.fill(Number.NEGATIVE_INFINITY, 0, paramCount);
  upper.fill(Number.POSITIVE_INFINITY, 0, paramCount);
  approachLower.fill(0, 0, paramCount);
  for (let k = 0; k < peakCount; k++) {
    const base = k * perPeak;
    lower[base + POS] = positionLow[k];
    upper[base + POS] = positionHigh[k];
    lower[base + HEIGHT] = 0;
    approachLower[base + HEIGHT] = 1;
    if (setting.profile === 'tch') {
      lower[base + WIDTH_A] = minFwhm / 4;
      upper[base + WIDTH_A] = maxFwhm;
      lower[base + WIDTH_B] = 0;
      upper[base + WIDTH_B] = maxFwhm;
    } else {
      lower[base + WIDTH_A] = minFwhm / 2;
      upper[base + WIDTH_A] = maxFwhm;
      lower[base + WIDTH_B] = 0;
      upper[base + WIDTH_B] = 1;
    }
    if (perPeak === 5) {
      lower[base + ASYM] = -MAX_ASYMMETRY;
      upper[base + ASYM] = MAX_ASYMMETRY;
    }
  }
}
