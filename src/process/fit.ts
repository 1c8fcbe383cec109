import { InputError } from '../errors.js';
import type { Pattern } from '../pattern/pattern.js';
import { DEG_TO_RAD, dFromTwoTheta } from '../pattern/units.js';
import type { Wavelength } from '../pattern/wavelengths.js';
import { thompsonCoxHastingsWithDerivatives } from './profiles.js';
import type { FittedPeak, PeakFitOptions, PeakGuess, ProfileModel } from './types.js';

/**
 * Profile fitting of diffraction peaks: overlapping peaks are fitted together in groups, each peak a
 * pseudo-Voigt (free η, or the Thompson–Cox–Hastings mix of a Gaussian and a Lorentzian width) with its
 * Kα2 partner at the same d, optionally split into a wider low-angle and a narrower high-angle half,
 * on the given background plus a straight-line correction per group. Weighted least squares by
 * Levenberg–Marquardt (Marquardt, J. SIAM 11, 431 (1963)) with analytic derivatives; standard
 * uncertainties from the inverse normal matrix scaled by the reduced χ² (as scipy's curve_fit does).
 */

const LN2 = Math.LN2;
const FOUR_LN2 = 4 * LN2;
const GAUSS_NORM = 2 * Math.sqrt(LN2 / Math.PI);
const LORENTZ_NORM = 2 / Math.PI;
/** Unit-height pseudo-Voigt integral breadth = fwhm / (η·2/π + (1−η)·2√(ln2/π)). */
const NORM_DIFF = LORENTZ_NORM - GAUSS_NORM;

/** Adaptive model reach: until the Lorentzian tail is below half the noise σ, within these limits (FWHM). */
const MIN_REACH_FWHM = 5;
const MAX_REACH_FWHM = 25;
const TAIL_NOISE_FRACTION = 0.5;
/** Peaks whose cores (this many FWHM either side of the Kα1 line and of its Kα2 partner) overlap are fitted together. */
const CORE_FWHM = 4;
/** Largest group fitted at once; a longer chain of overlapping windows is cut (keeps the normal matrix small). */
const MAX_GROUP_PEAKS = 24;
/** A fitted peak that moved further than this many FWHM from where it was found is not the peak that was found. */
const MAX_MOVE_FWHM = 1;
/** Nor one whose width changed by more than this factor. */
const MAX_WIDTH_CHANGE = 4;
const DEFAULT_MAX_ITERATIONS = 60;
/** Stop when an accepted step lowers χ² by less than this fraction. */
const CHI2_TOLERANCE = 1e-8;
/** Give up raising the damping beyond this (no downhill step exists within the constraints). */
const MAX_DAMPING = 1e8;
const MAX_ASYMMETRY = 0.8;
/** Two fitted peaks closer than this fraction of their FWHM cannot be told apart (common practice). */
const DUPLICATE_FWHM_FRACTION = 0.5;
/** Peaks closer than this many mean FWHMs are flagged as overlapped (common practice). */
const OVERLAP_FWHM = 1.5;

// Per-peak parameter slots.
const POS = 0;
const HEIGHT = 1;
const WIDTH_A = 2; // FWHM (pseudo-Voigt) or Gaussian FWHM (TCH)
const WIDTH_B = 3; // η (pseudo-Voigt) or Lorentzian FWHM (TCH)
const ASYM = 4;

// Per-peak values prepared once per evaluation.
const PREP = 10;
const P_FWHM = 0;
const P_ETA = 1;
const P_DW_DA = 2;
const P_DW_DB = 3;
const P_DETA_DA = 4;
const P_DETA_DB = 5;
const P_POS2 = 6;
const P_DPOS2 = 7;
const P_MIX = 8; // Lorentzian share of the peak height, from η (which mixes unit-area profiles)
const P_DMIX = 9; // its derivative by η

export interface PeakFitResult {
  peaks: FittedPeak[];
  /** Background with each group's straight-line correction added, on pattern.x. */
  background: Float64Array;
  /** Background plus all fitted peaks and their Kα2 partners, on pattern.x. */
  model: Float64Array;
}

interface Group {
  /** Starting parameters, per peak [pos, height, widthA, widthB, (asym)], then [offset, slope]. */
  params: Float64Array;
  peakCount: number;
  /** Where each peak was found and how broad it looked there. */
  foundAt: Float64Array;
  foundFwhm: Float64Array;
  /** Points [regionStart, regionEnd) the group is fitted on: its peaks' windows, cut halfway to the next groups. */
  regionStart: number;
  regionEnd: number;
}

/**
 * Rules for keeping a fitted peak, used by the peak search: besides standing `pruneBelowSigma` standard
 * uncertainties clear of zero, its fitted height must be at least thresholdSigma·σ, with σ the counting
 * noise at the level it sits on (background plus its neighbours' tails), and it must stay near where it
 * was found, about as broad as it looked.
 */
export interface PeakAcceptance {
  thresholdSigma: number;
  /** σ of the background at each point. */
  noiseSigma: Float64Array;
  /**
   * σ of each point for the fit's weights, when not the pattern's own (for counts, √ of the smoothed
   * counts: weights from the raw counts favour upward fluctuations where counts are low).
   */
  weightSigma?: Float64Array;
}

/** Fit peaks starting at the given 2θ positions (or fuller guesses); returns the fitted Kα1 peaks sorted by 2θ. */
export function fitPeaksAt(
  pattern: Pattern,
  background: Float64Array,
  guesses: ReadonlyArray<number | PeakGuess>,
  options: PeakFitOptions,
): FittedPeak[] {
  return fitPeakGroups(pattern, background, guesses, options).peaks;
}

/** As fitPeaksAt, and also returns the refined background and the full model. */
export function fitPeakGroups(
  pattern: Pattern,
  background: Float64Array,
  guesses: ReadonlyArray<number | PeakGuess>,
  options: PeakFitOptions,
  acceptance?: PeakAcceptance,
): PeakFitResult {
  const n = pattern.x.length;
  if (background.length !== n) {
    throw new InputError(`${pattern.source.file}: the background has ${background.length} points but the pattern has ${n}`);
  }
  const fitter = new GroupFitter(pattern, background, options, acceptance);
  const starts = guesses
    .map((g) => fitter.startingPeak(typeof g === 'number' ? { twoTheta: g } : g))
    .filter((g): g is Float64Array => g !== null)
    .sort((a, b) => a[POS] - b[POS]);
  const groups = fitter.groupPeaks(starts);
  const peaks: FittedPeak[] = [];
  const refinedBackground = background.slice();
  const model = background.slice();
  for (let g = 0; g < groups.length; g++) {
    const fitted = fitter.fitGroup(groups[g], g);
    fitter.addToModel(refinedBackground, model);
    for (const peak of fitted) peaks.push(peak);
  }
  peaks.sort((a, b) => a.twoTheta - b.twoTheta);
  return { peaks, background: refinedBackground, model };
}

/** Fits one group at a time in a workspace sized for the largest group (nothing allocated per point). */
class GroupFitter {
  private readonly x: Float64Array;
  private readonly y: Float64Array;
  private readonly weight: Float64Array;
  private readonly background: Float64Array;
  private readonly profile: ProfileModel;
  private readonly perPeak: number;
  private readonly windowFwhm: number | undefined;
  private readonly maxIterations: number;
  private readonly lambda1: number;
  private readonly lambda2: number | null;
  private readonly ratio: number;
  private readonly minFwhm: number;
  private readonly maxFwhm: number;
  private readonly pruneBelowSigma: number | undefined;
  private readonly acceptance: PeakAcceptance | undefined;

  // Current group.
  private peakCount = 0;
  private paramCount = 0;
  private first = 0;
  private last = 0;
  private middle = 0;
  private lo = new Int32Array(0);
  private hi = new Int32Array(0);
  private prep = new Float64Array(0);
  private normal = new Float64Array(0);
  private gradient = new Float64Array(0);
  private spareNormal = new Float64Array(0);
  private spareGradient = new Float64Array(0);
  private work = new Float64Array(0);
  private step = new Float64Array(0);
  private jacIndex = new Int32Array(0);
  private jacValue = new Float64Array(0);
  private params = new Float64Array(0);
  private lower = new Float64Array(0);
  private upper = new Float64Array(0);
  private foundAt: Float64Array = new Float64Array(0);
  private foundFwhm: Float64Array = new Float64Array(0);

  constructor(pattern: Pattern, background: Float64Array, options: PeakFitOptions, acceptance?: PeakAcceptance) {
    this.acceptance = acceptance;
    this.x = pattern.x;
    this.y = pattern.y;
    this.background = background;
    this.profile = options.profile ?? 'pseudo-voigt';
    this.perPeak = options.asymmetry ? 5 : 4;
    this.windowFwhm = options.windowFwhm;
    this.maxIterations = options.maxIterations ?? DEFAULT_MAX_ITERATIONS;
    const { lambda1, lambda2, ratio } = options.wavelength;
    this.lambda1 = lambda1;
    this.lambda2 = lambda2 !== null && ratio > 0 ? lambda2 : null;
    this.ratio = this.lambda2 === null ? 0 : ratio;
    this.pruneBelowSigma = options.pruneBelowSigma ?? acceptance?.thresholdSigma;
    const n = this.x.length;
    const meanStep = n > 1 ? (this.x[n - 1] - this.x[0]) / (n - 1) : 1;
    this.minFwhm = options.minFwhmDeg ?? meanStep;
    this.maxFwhm = options.maxFwhmDeg ?? 5;
    this.weight = new Float64Array(n);
    const sigma = acceptance?.weightSigma ?? pattern.sigma;
    for (let i = 0; i < n; i++) {
      const s = sigma[i];
      const variance = s > 0 && Number.isFinite(s) ? s * s : Math.max(this.y[i], 1);
      this.weight[i] = 1 / variance;
    }
  }

  /** Starting parameters for one peak, or null when the position lies outside the pattern. */
  startingPeak(guess: PeakGuess): Float64Array | null {
    const { x, y, background } = this;
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
    fwhm = Math.min(Math.max(fwhm, 2 * this.minFwhm), this.maxFwhm / 2);
    const eta = Math.min(Math.max(guess.eta ?? 0.5, 0), 1);
    const start = new Float64Array(this.perPeak);
    start[POS] = pos;
    start[HEIGHT] = height;
    if (this.profile === 'tch') {
      // A Voigt with equal Gaussian and Lorentzian widths has FWHM ≈ 1.64 times either.
      start[WIDTH_A] = fwhm * (1 - eta * 0.6);
      start[WIDTH_B] = fwhm * eta * 0.8;
    } else {
      start[WIDTH_A] = fwhm;
      start[WIDTH_B] = eta;
    }
    return start;
  }

  /** FWHM of a peak from its own parameters (either profile). */
  private fwhmOf(p: Float64Array, base: number): number {
    if (this.profile === 'tch') return thompsonCoxHastingsWithDerivatives(p[base + WIDTH_A], p[base + WIDTH_B]).fwhm;
    return p[base + WIDTH_A];
  }

  private partnerPosition(pos: number): number {
    if (this.lambda2 === null) return pos;
    const s = (this.lambda2 / this.lambda1) * Math.sin((pos * DEG_TO_RAD) / 2);
    return s < 1 ? (2 * Math.asin(s)) / DEG_TO_RAD : 180;
  }

  /** Points from `reach`·FWHM below the Kα1 line to `reach`·FWHM above its Kα2 partner. */
  private windowOf(pos: number, fwhm: number, reach: number): [number, number] {
    return [lowerIndex(this.x, pos - reach * fwhm), lowerIndex(this.x, this.partnerPosition(pos) + reach * fwhm)];
  }

  /**
   * How many FWHM a peak is modelled either side: the given windowFwhm, or far enough that a Lorentzian
   * tail of its height, H/(1 + 4K²), has dropped below half the noise σ there (5 to 25 FWHM).
   */
  private reachOf(p: Float64Array, base: number): number {
    if (this.windowFwhm !== undefined) return this.windowFwhm;
    const fwhm = this.fwhmOf(p, base);
    const edge = nearestIndex(this.x, p[base + POS] - MIN_REACH_FWHM * fwhm);
    const noise = 1 / Math.sqrt(this.weight[edge]);
    const reach = 0.5 * Math.sqrt(Math.max(p[base + HEIGHT] / (TAIL_NOISE_FRACTION * noise) - 1, 0));
    return Math.min(Math.max(reach, MIN_REACH_FWHM), MAX_REACH_FWHM);
  }

  /** Peaks whose cores overlap go into one group; each group's region reaches halfway to its neighbours. */
  groupPeaks(starts: Float64Array[]): Group[] {
    const groups: Group[] = [];
    const coreStarts: number[] = [];
    const coreEnds: number[] = [];
    let current: Float64Array[] = [];
    let coreStart = 0;
    let coreEnd = -1;
    let windowStart = 0;
    let windowEnd = 0;
    const flush = (): void => {
      if (current.length === 0) return;
      const params = new Float64Array(current.length * this.perPeak + 2);
      current.forEach((p, k) => params.set(p, k * this.perPeak));
      const foundAt = Float64Array.from(current, (p) => p[POS]);
      const foundFwhm = Float64Array.from(current, (p) => this.fwhmOf(p, 0));
      groups.push({ params, peakCount: current.length, foundAt, foundFwhm, regionStart: windowStart, regionEnd: windowEnd });
      coreStarts.push(coreStart);
      coreEnds.push(coreEnd);
      current = [];
    };
    for (const start of starts) {
      const fwhm = this.fwhmOf(start, 0);
      const [lo, hi] = this.windowOf(start[POS], fwhm, CORE_FWHM);
      const [wLo, wHi] = this.windowOf(start[POS], fwhm, this.reachOf(start, 0));
      if (lo >= coreEnd || current.length >= MAX_GROUP_PEAKS) {
        flush();
        coreStart = lo;
        windowStart = wLo;
        windowEnd = wHi;
      }
      current.push(start);
      coreEnd = Math.max(coreEnd, hi);
      windowStart = Math.min(windowStart, wLo);
      windowEnd = Math.max(windowEnd, wHi);
    }
    flush();
    for (let g = 0; g < groups.length; g++) {
      if (g > 0) groups[g].regionStart = Math.max(groups[g].regionStart, (coreEnds[g - 1] + coreStarts[g]) >> 1);
      if (g + 1 < groups.length) groups[g].regionEnd = Math.min(groups[g].regionEnd, (coreEnds[g] + coreStarts[g + 1]) >> 1);
      groups[g].regionEnd = Math.max(groups[g].regionEnd, groups[g].regionStart + 1);
    }
    return groups;
  }

  /** Fit one group (dropping insignificant peaks and refitting when pruning is on). */
  fitGroup(group: Group, groupIndex: number): FittedPeak[] {
    let params = group.params;
    let peakCount = group.peakCount;
    this.foundAt = group.foundAt;
    this.foundFwhm = group.foundFwhm;
    for (let round = 0; ; round++) {
      this.setUp(params, peakCount, group.regionStart, group.regionEnd);
      const chi2 = this.levenbergMarquardt();
      const covariance = this.covariance(chi2);
      const peaks = this.describe(covariance, chi2, groupIndex);
      const keep = this.pruneBelowSigma === undefined || round >= 4 ? null : this.survivors(peaks);
      if (keep === null || keep.length === peakCount || keep.length === 0) {
        if (keep !== null && keep.length === 0) {
          this.peakCount = 0;
          return [];
        }
        return peaks;
      }
      // Refit the survivors from their fitted values.
      const next = new Float64Array(keep.length * this.perPeak + 2);
      keep.forEach((k, j) => next.set(this.params.subarray(k * this.perPeak, (k + 1) * this.perPeak), j * this.perPeak));
      next.set(this.params.subarray(peakCount * this.perPeak, peakCount * this.perPeak + 2), keep.length * this.perPeak);
      this.foundAt = Float64Array.from(keep, (k) => this.foundAt[k]);
      this.foundFwhm = Float64Array.from(keep, (k) => this.foundFwhm[k]);
      params = next;
      peakCount = keep.length;
    }
  }

  /** Indices of peaks that stand clear of the noise, are wider than a spike, and are not duplicates. */
  private survivors(peaks: FittedPeak[]): number[] {
    const threshold = this.pruneBelowSigma ?? 0;
    const keep: number[] = [];
    for (let k = 0; k < peaks.length; k++) {
      const p = peaks[k];
      const atEdge = p.twoTheta <= this.x[this.lo[k]] || p.twoTheta >= this.x[this.hi[k] - 1];
      if (!(p.height > threshold * p.heightSigma) || p.fwhm < this.minFwhm || p.fwhm > this.maxFwhm || atEdge) continue;
      if (this.acceptance && !this.standsClear(k, p)) continue;
      let duplicate = false;
      for (let j = 0; j < peaks.length && !duplicate; j++) {
        if (j === k) continue;
        const q = peaks[j];
        const close = DUPLICATE_FWHM_FRACTION * Math.max(p.fwhm, q.fwhm);
        const partner = this.partnerPosition(q.twoTheta);
        if (Math.abs(p.twoTheta - q.twoTheta) < close && (q.height > p.height || (q.height === p.height && j < k))) duplicate = true;
        // A weak peak sitting on a stronger peak's Kα2 partner is the partner itself.
        if (this.lambda2 !== null && Math.abs(p.twoTheta - partner) < close && p.height < this.ratio * q.height) duplicate = true;
      }
      if (!duplicate) keep.push(k);
    }
    return keep;
  }

  /** The acceptance rules on level, movement and width (see PeakAcceptance). */
  private standsClear(k: number, peak: FittedPeak): boolean {
    const acceptance = this.acceptance as PeakAcceptance;
    const found = this.foundFwhm[k];
    if (Math.abs(peak.twoTheta - this.foundAt[k]) > MAX_MOVE_FWHM * Math.max(found, peak.fwhm)) return false;
    if (peak.fwhm > MAX_WIDTH_CHANGE * found || peak.fwhm * MAX_WIDTH_CHANGE < found) return false;
    const i = nearestIndex(this.x, peak.twoTheta);
    const background = this.background[i];
    const level = background + this.othersAt(k, peak.twoTheta);
    const sigma = acceptance.noiseSigma[i] * (background > 0 && level > background ? Math.sqrt(level / background) : 1);
    return peak.height >= acceptance.thresholdSigma * sigma;
  }

  /** Sum of the other peaks of the group (with Kα2 partners) at 2θ; prepare() must be current. */
  private othersAt(k: number, twoTheta: number): number {
    const { params, perPeak, prep } = this;
    let sum = 0;
    for (let j = 0; j < this.peakCount; j++) {
      if (j === k) continue;
      const base = j * perPeak;
      const pr = j * PREP;
      const asym = perPeak === 5 ? params[base + ASYM] : 0;
      sum += params[base + HEIGHT] * splitPseudoVoigt(twoTheta - params[base + POS], prep[pr + P_FWHM], prep[pr + P_MIX], asym);
      if (this.lambda2 !== null) {
        sum += this.ratio * params[base + HEIGHT] * splitPseudoVoigt(twoTheta - prep[pr + P_POS2], prep[pr + P_FWHM], prep[pr + P_MIX], asym);
      }
    }
    return sum;
  }

  private setUp(params: Float64Array, peakCount: number, regionStart: number, regionEnd: number): void {
    const perPeak = this.perPeak;
    const paramCount = peakCount * perPeak + 2;
    this.peakCount = peakCount;
    this.paramCount = paramCount;
    if (this.normal.length < paramCount * paramCount) {
      const size = Math.max(paramCount, 2 * this.paramCapacity());
      this.normal = new Float64Array(size * size);
      this.spareNormal = new Float64Array(size * size);
      this.work = new Float64Array(size * size);
      this.gradient = new Float64Array(size);
      this.spareGradient = new Float64Array(size);
      this.step = new Float64Array(size);
      this.jacIndex = new Int32Array(size);
      this.jacValue = new Float64Array(size);
      this.lower = new Float64Array(size);
      this.upper = new Float64Array(size);
    }
    if (this.lo.length < peakCount) {
      const size = Math.max(peakCount, 2 * this.lo.length);
      this.lo = new Int32Array(size);
      this.hi = new Int32Array(size);
      this.prep = new Float64Array(size * PREP);
    }
    this.params = params.slice();
    for (let k = 0; k < peakCount; k++) {
      const base = k * perPeak;
      const [lo, hi] = this.windowOf(params[base + POS], this.fwhmOf(params, base), this.reachOf(params, base));
      this.lo[k] = Math.max(lo, regionStart);
      this.hi[k] = Math.max(Math.min(hi, regionEnd), this.lo[k] + 1);
    }
    const first = regionStart;
    const last = regionEnd;
    this.first = first;
    this.last = last;
    this.setBounds();
    this.middle = 0.5 * (this.x[first] + this.x[Math.max(first, last - 1)]);
  }

  private paramCapacity(): number {
    return Math.sqrt(this.normal.length) | 0;
  }

  /** Width, mixing and Kα2 position of every peak, with their derivatives, for the current parameters. */
  private prepare(params: Float64Array): void {
    const { perPeak, prep } = this;
    for (let k = 0; k < this.peakCount; k++) {
      const base = k * perPeak;
      const out = k * PREP;
      if (this.profile === 'tch') {
        const t = thompsonCoxHastingsWithDerivatives(params[base + WIDTH_A], params[base + WIDTH_B]);
        prep[out + P_FWHM] = t.fwhm;
        prep[out + P_ETA] = t.eta;
        prep[out + P_DW_DA] = t.dFwhmDGaussian;
        prep[out + P_DW_DB] = t.dFwhmDLorentzian;
        prep[out + P_DETA_DA] = t.dEtaDGaussian;
        prep[out + P_DETA_DB] = t.dEtaDLorentzian;
      } else {
        prep[out + P_FWHM] = params[base + WIDTH_A];
        prep[out + P_ETA] = params[base + WIDTH_B];
        prep[out + P_DW_DA] = 1;
        prep[out + P_DW_DB] = 0;
        prep[out + P_DETA_DA] = 0;
        prep[out + P_DETA_DB] = 1;
      }
      const eta = prep[out + P_ETA];
      const norm = eta * LORENTZ_NORM + (1 - eta) * GAUSS_NORM;
      prep[out + P_MIX] = (eta * LORENTZ_NORM) / norm;
      prep[out + P_DMIX] = (LORENTZ_NORM * GAUSS_NORM) / (norm * norm);
      const pos = params[base + POS];
      if (this.lambda2 !== null) {
        // Same d at λ2: sin(θ2) = (λ2/λ1)·sin(θ1); dθ2/dθ1 = (λ2/λ1)·cos θ1 / cos θ2.
        const half1 = (pos * DEG_TO_RAD) / 2;
        const s = Math.min((this.lambda2 / this.lambda1) * Math.sin(half1), 1 - 1e-12);
        const half2 = Math.asin(s);
        prep[out + P_POS2] = (2 * half2) / DEG_TO_RAD;
        prep[out + P_DPOS2] = ((this.lambda2 / this.lambda1) * Math.cos(half1)) / Math.cos(half2);
      }
    }
  }

  /**
   * χ² of the group at `params`; with `withNormal`, also fills the normal matrix JᵀWJ and gradient JᵀW(y − model).
   * Each point touches only the peaks whose windows hold it, so the matrix is filled block by block.
   */
  private evaluate(params: Float64Array, withNormal: boolean): number {
    this.prepare(params);
    const { x, y, weight, background, perPeak, prep, lo, hi, jacIndex, jacValue, normal, gradient } = this;
    const paramCount = this.paramCount;
    const asymmetric = perPeak === 5;
    const doublet = this.lambda2 !== null;
    const ratio = this.ratio;
    const bgBase = this.peakCount * perPeak;
    const offset = params[bgBase];
    const slope = params[bgBase + 1];
    if (withNormal) {
      normal.fill(0, 0, paramCount * paramCount);
      gradient.fill(0, 0, paramCount);
    }
    let chi2 = 0;
    for (let i = this.first; i < this.last; i++) {
      const xi = x[i];
      const t = xi - this.middle;
      let model = background[i] + offset + slope * t;
      let active = 0;
      if (withNormal) {
        jacIndex[0] = bgBase;
        jacValue[0] = 1;
        jacIndex[1] = bgBase + 1;
        jacValue[1] = t;
        active = 2;
      }
      for (let k = 0; k < this.peakCount; k++) {
        if (i < lo[k] || i >= hi[k]) continue;
        const base = k * perPeak;
        const pr = k * PREP;
        const height = params[base + HEIGHT];
        const fwhm = prep[pr + P_FWHM];
        const mix = prep[pr + P_MIX];
        const dMix = prep[pr + P_DMIX];
        const asym = asymmetric ? params[base + ASYM] : 0;
        // Kα1 component.
        let dx = xi - params[base + POS];
        let side = dx < 0 ? 1 : -1; // low-angle half is wider for positive asymmetry
        let sideWidth = fwhm * (1 + side * asym);
        let u = dx / sideWidth;
        let u2 = u * u;
        let lor = 1 / (1 + 4 * u2);
        let gau = gaussianTail(u2);
        let shape = mix * lor + (1 - mix) * gau;
        model += height * shape;
        if (!withNormal) {
          if (doublet) {
            dx = xi - prep[pr + P_POS2];
            side = dx < 0 ? 1 : -1;
            sideWidth = fwhm * (1 + side * asym);
            u = dx / sideWidth;
            u2 = u * u;
            model += ratio * height * (mix / (1 + 4 * u2) + (1 - mix) * gaussianTail(u2));
          }
          continue;
        }
        // d(shape)/du, then the chain rule to each parameter.
        let dShape = -8 * u * (mix * lor * lor + (1 - mix) * LN2 * gau);
        let dPos = (-height * dShape) / sideWidth;
        let dWidth = (-height * dShape * u) / fwhm;
        let dEta = height * (lor - gau) * dMix;
        let dAsym = (-height * dShape * u * side * fwhm) / sideWidth;
        let dHeight = shape;
        if (doublet) {
          const h2 = ratio * height;
          dx = xi - prep[pr + P_POS2];
          side = dx < 0 ? 1 : -1;
          sideWidth = fwhm * (1 + side * asym);
          u = dx / sideWidth;
          u2 = u * u;
          lor = 1 / (1 + 4 * u2);
          gau = gaussianTail(u2);
          shape = mix * lor + (1 - mix) * gau;
          model += h2 * shape;
          dShape = -8 * u * (mix * lor * lor + (1 - mix) * LN2 * gau);
          dPos += ((-h2 * dShape) / sideWidth) * prep[pr + P_DPOS2];
          dWidth += (-h2 * dShape * u) / fwhm;
          dEta += h2 * (lor - gau) * dMix;
          dAsym += (-h2 * dShape * u * side * fwhm) / sideWidth;
          dHeight += ratio * shape;
        }
        jacIndex[active] = base + POS;
        jacValue[active++] = dPos;
        jacIndex[active] = base + HEIGHT;
        jacValue[active++] = dHeight;
        jacIndex[active] = base + WIDTH_A;
        jacValue[active++] = dWidth * prep[pr + P_DW_DA] + dEta * prep[pr + P_DETA_DA];
        jacIndex[active] = base + WIDTH_B;
        jacValue[active++] = dWidth * prep[pr + P_DW_DB] + dEta * prep[pr + P_DETA_DB];
        if (asymmetric) {
          jacIndex[active] = base + ASYM;
          jacValue[active++] = dAsym;
        }
      }
      const residual = y[i] - model;
      const w = weight[i];
      chi2 += w * residual * residual;
      if (withNormal) {
        // Active indices increase along the list except the two background slots first: fill the
        // lower triangle by (row = larger index), mirrored below.
        for (let a = 0; a < active; a++) {
          const wa = w * jacValue[a];
          const ia = jacIndex[a];
          gradient[ia] += wa * residual;
          for (let b = 0; b <= a; b++) {
            const ib = jacIndex[b];
            if (ia >= ib) normal[ia * paramCount + ib] += wa * jacValue[b];
            else normal[ib * paramCount + ia] += wa * jacValue[b];
          }
        }
      }
    }
    if (withNormal) {
      for (let r = 0; r < paramCount; r++) for (let c = r + 1; c < paramCount; c++) normal[r * paramCount + c] = normal[c * paramCount + r];
    }
    return chi2;
  }

  /** Limits that keep parameters physical: heights ≥ 0, widths within limits, 0 ≤ η ≤ 1, position inside its window. */
  private setBounds(): void {
    const { perPeak, x, lower, upper } = this;
    lower.fill(Number.NEGATIVE_INFINITY, 0, this.paramCount);
    upper.fill(Number.POSITIVE_INFINITY, 0, this.paramCount);
    for (let k = 0; k < this.peakCount; k++) {
      const base = k * perPeak;
      lower[base + POS] = x[this.lo[k]];
      upper[base + POS] = x[this.hi[k] - 1];
      lower[base + HEIGHT] = 0;
      if (this.profile === 'tch') {
        lower[base + WIDTH_A] = this.minFwhm / 4;
        upper[base + WIDTH_A] = this.maxFwhm;
        lower[base + WIDTH_B] = 0;
        upper[base + WIDTH_B] = this.maxFwhm;
      } else {
        lower[base + WIDTH_A] = this.minFwhm / 2;
        upper[base + WIDTH_A] = this.maxFwhm;
        lower[base + WIDTH_B] = 0;
        upper[base + WIDTH_B] = 1;
      }
      if (perPeak === 5) {
        lower[base + ASYM] = -MAX_ASYMMETRY;
        upper[base + ASYM] = MAX_ASYMMETRY;
      }
    }
  }

  private constrain(params: Float64Array): void {
    const { lower, upper } = this;
    for (let a = 0; a < this.paramCount; a++) params[a] = Math.min(Math.max(params[a], lower[a]), upper[a]);
  }

  /** Marquardt's damped Gauss–Newton iteration; leaves the best parameters in this.params, returns χ². */
  private levenbergMarquardt(): number {
    const { paramCount, work, step } = this;
    const params = this.params;
    const trial = new Float64Array(paramCount);
    let chi2 = this.evaluate(params, true);
    let damping = 1e-3;
    let growth = 2;
    for (let iteration = 0; iteration < this.maxIterations && damping < MAX_DAMPING; iteration++) {
      const { normal, gradient } = this;
      for (let a = 0; a < paramCount * paramCount; a++) work[a] = normal[a];
      for (let a = 0; a < paramCount; a++) {
        const d = normal[a * paramCount + a];
        work[a * paramCount + a] = d + damping * (d > 0 ? d : 1e-12);
        step[a] = gradient[a];
        // A parameter on its limit that the gradient pushes outwards stays where it is for this step.
        if ((params[a] <= this.lower[a] && gradient[a] < 0) || (params[a] >= this.upper[a] && gradient[a] > 0)) {
          for (let b = 0; b < paramCount; b++) {
            work[a * paramCount + b] = 0;
            work[b * paramCount + a] = 0;
          }
          work[a * paramCount + a] = 1;
          step[a] = 0;
        }
      }
      if (!choleskyFactor(work, paramCount)) {
        damping *= growth;
        growth *= 2;
        continue;
      }
      choleskySolve(work, paramCount, step);
      // A step that would cross a limit is shortened to 90 % of the way there (clipping it instead can
      // drive a height to zero, where its peak has no derivatives left to come back with).
      let fraction = 1;
      for (let a = 0; a < paramCount; a++) {
        const to = params[a] + step[a];
        if (to < this.lower[a] && params[a] > this.lower[a]) fraction = Math.min(fraction, (0.9 * (this.lower[a] - params[a])) / step[a]);
        if (to > this.upper[a] && params[a] < this.upper[a]) fraction = Math.min(fraction, (0.9 * (this.upper[a] - params[a])) / step[a]);
      }
      // Reduction of χ² the linearised model promises: δᵀ(g + λ·diag·δ), scaled for a shortened step.
      let predicted = 0;
      for (let a = 0; a < paramCount; a++) {
        const d = normal[a * paramCount + a];
        predicted += step[a] * (gradient[a] + damping * (d > 0 ? d : 1e-12) * step[a]);
        trial[a] = params[a] + fraction * step[a];
      }
      predicted *= fraction;
      this.constrain(trial);
      // Evaluate the trial with its normal matrix into the spare buffers; keep them only if accepted.
      this.swapNormalBuffers();
      const trialChi2 = this.evaluate(trial, true);
      if (trialChi2 < chi2) {
        const gain = (chi2 - trialChi2) / Math.max(chi2, 1e-300);
        const rho = (chi2 - trialChi2) / Math.max(predicted, 1e-300);
        params.set(trial);
        chi2 = trialChi2;
        // Nielsen's damping update (H. B. Nielsen, IMM-REP-1999-05, DTU (1999)).
        damping *= Math.max(1 / 3, 1 - (2 * Math.min(rho, 1) - 1) ** 3);
        damping = Math.max(damping, 1e-12);
        growth = 2;
        // A tiny gain means convergence only for a near Gauss–Newton step, not a heavily damped one.
        if (gain < CHI2_TOLERANCE && damping < 1) break;
      } else {
        this.swapNormalBuffers();
        damping *= growth;
        growth *= 2;
      }
    }
    // The normal matrix in place is that of `params`: ready for the covariance.
    return chi2;
  }

  private swapNormalBuffers(): void {
    const normal = this.normal;
    this.normal = this.spareNormal;
    this.spareNormal = normal;
    const gradient = this.gradient;
    this.gradient = this.spareGradient;
    this.spareGradient = gradient;
  }

  /** Covariance = (JᵀWJ)⁻¹ · χ²/(N − P), or null when the normal matrix is singular. */
  private covariance(chi2: number): Float64Array | null {
    const { paramCount, normal, work } = this;
    for (let a = 0; a < paramCount * paramCount; a++) work[a] = normal[a];
    // Parameters that no point sees (e.g. a slope over one point) are held fixed.
    for (let a = 0; a < paramCount; a++) if (!(work[a * paramCount + a] > 0)) work[a * paramCount + a] = 1;
    if (!choleskyFactor(work, paramCount)) return null;
    const points = this.last - this.first;
    const scale = chi2 / Math.max(points - paramCount, 1);
    const inverse = new Float64Array(paramCount * paramCount);
    const column = this.step;
    for (let c = 0; c < paramCount; c++) {
      column.fill(0, 0, paramCount);
      column[c] = 1;
      choleskySolve(work, paramCount, column);
      for (let r = 0; r < paramCount; r++) inverse[r * paramCount + c] = column[r] * scale;
    }
    return inverse;
  }

  /** The fitted peaks with derived quantities and their standard uncertainties. */
  private describe(covariance: Float64Array | null, chi2: number, groupIndex: number): FittedPeak[] {
    const { params, perPeak, prep, paramCount } = this;
    this.prepare(params);
    const points = this.last - this.first;
    const reducedChi2 = chi2 / Math.max(points - paramCount, 1);
    const peaks: FittedPeak[] = [];
    const grad = new Float64Array(perPeak);
    const sigmaOf = (base: number): number => {
      if (covariance === null) return Number.POSITIVE_INFINITY;
      let v = 0;
      for (let a = 0; a < perPeak; a++) {
        if (grad[a] === 0) continue;
        for (let b = 0; b < perPeak; b++) v += grad[a] * grad[b] * covariance[(base + a) * paramCount + base + b];
      }
      return Math.sqrt(Math.max(v, 0));
    };
    const single = (base: number, slot: number): number => {
      grad.fill(0);
      grad[slot] = 1;
      return sigmaOf(base);
    };
    for (let k = 0; k < this.peakCount; k++) {
      const base = k * perPeak;
      const pr = k * PREP;
      const height = params[base + HEIGHT];
      const fwhm = prep[pr + P_FWHM];
      const eta = prep[pr + P_ETA];
      const norm = eta * LORENTZ_NORM + (1 - eta) * GAUSS_NORM;
      const breadth = fwhm / norm;
      const dBreadthDw = 1 / norm;
      const dBreadthDeta = (-fwhm * NORM_DIFF) / (norm * norm);
      const dwA = prep[pr + P_DW_DA];
      const dwB = prep[pr + P_DW_DB];
      const deA = prep[pr + P_DETA_DA];
      const deB = prep[pr + P_DETA_DB];

      grad.fill(0);
      grad[WIDTH_A] = dwA;
      grad[WIDTH_B] = dwB;
      const fwhmSigma = sigmaOf(base);
      grad[WIDTH_A] = deA;
      grad[WIDTH_B] = deB;
      const etaSigma = sigmaOf(base);
      grad[WIDTH_A] = dBreadthDw * dwA + dBreadthDeta * deA;
      grad[WIDTH_B] = dBreadthDw * dwB + dBreadthDeta * deB;
      const breadthSigma = sigmaOf(base);
      grad[WIDTH_A] *= height;
      grad[WIDTH_B] *= height;
      grad[HEIGHT] = breadth;
      const areaSigma = sigmaOf(base);

      const twoTheta = params[base + POS];
      const peak: FittedPeak = {
        twoTheta,
        twoThetaSigma: single(base, POS),
        d: dFromTwoTheta(twoTheta, this.lambda1),
        height,
        heightSigma: single(base, HEIGHT),
        area: height * breadth,
        areaSigma,
        fwhm,
        fwhmSigma,
        integralBreadth: breadth,
        integralBreadthSigma: breadthSigma,
        eta,
        etaSigma,
        group: groupIndex,
        groupChi2: reducedChi2,
        overlapped: false,
      };
      if (this.profile === 'tch') {
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
    for (let k = 0; k < peaks.length; k++) {
      for (let j = 0; j < peaks.length; j++) {
        if (j === k) continue;
        const limit = (OVERLAP_FWHM * (peaks[k].fwhm + peaks[j].fwhm)) / 2;
        const partner = this.lambda2 === null ? Number.NaN : prep[j * PREP + P_POS2];
        if (Math.abs(peaks[k].twoTheta - peaks[j].twoTheta) < limit || Math.abs(peaks[k].twoTheta - partner) < limit) {
          peaks[k].overlapped = true;
        }
      }
    }
    return peaks;
  }

  /** Add the current group's background correction and peaks to the full-length arrays. */
  addToModel(background: Float64Array, model: Float64Array): void {
    if (this.peakCount === 0) return;
    const { params, perPeak, prep, x } = this;
    this.prepare(params);
    const bgBase = this.peakCount * perPeak;
    for (let i = this.first; i < this.last; i++) {
      const correction = params[bgBase] + params[bgBase + 1] * (x[i] - this.middle);
      background[i] += correction;
      model[i] += correction;
    }
    for (let k = 0; k < this.peakCount; k++) {
      const base = k * perPeak;
      const pr = k * PREP;
      const asym = perPeak === 5 ? params[base + ASYM] : 0;
      for (let i = this.lo[k]; i < this.hi[k]; i++) {
        model[i] += params[base + HEIGHT] * splitPseudoVoigt(x[i] - params[base + POS], prep[pr + P_FWHM], prep[pr + P_MIX], asym);
        if (this.lambda2 !== null) {
          model[i] += this.ratio * params[base + HEIGHT] * splitPseudoVoigt(x[i] - prep[pr + P_POS2], prep[pr + P_FWHM], prep[pr + P_MIX], asym);
        }
      }
    }
  }
}

/**
 * Unit-height pseudo-Voigt (Lorentzian share `mix` of the height) whose low-angle half has FWHM·(1 + asym)
 * and high-angle half FWHM·(1 − asym): total FWHM and integral breadth stay those of the symmetric
 * profile (split-profile asymmetry, Toraya, J. Appl. Cryst. 23, 485 (1990) — from memory).
 */
function splitPseudoVoigt(dx: number, fwhm: number, mix: number, asym: number): number {
  const u = dx / (fwhm * (1 + (dx < 0 ? asym : -asym)));
  const u2 = u * u;
  return mix / (1 + 4 * u2) + (1 - mix) * gaussianTail(u2);
}

/** exp(−4 ln2 u²), taken as 0 beyond 6 half-widths (below 1e-43): most points of a window lie there. */
function gaussianTail(u2: number): number {
  return u2 > 36 ? 0 : Math.exp(-FOUR_LN2 * u2);
}

/** In-place Cholesky factor (lower triangle) of a symmetric positive-definite n×n matrix; false if not PD. */
function choleskyFactor(m: Float64Array, n: number): boolean {
  for (let j = 0; j < n; j++) {
    let d = m[j * n + j];
    for (let k = 0; k < j; k++) d -= m[j * n + k] * m[j * n + k];
    if (!(d > 0)) return false;
    const root = Math.sqrt(d);
    m[j * n + j] = root;
    for (let i = j + 1; i < n; i++) {
      let s = m[i * n + j];
      for (let k = 0; k < j; k++) s -= m[i * n + k] * m[j * n + k];
      m[i * n + j] = s / root;
    }
  }
  return true;
}

/** Solve L·Lᵀ·v = b in place (L from choleskyFactor). */
function choleskySolve(l: Float64Array, n: number, b: Float64Array): void {
  for (let i = 0; i < n; i++) {
    let s = b[i];
    for (let k = 0; k < i; k++) s -= l[i * n + k] * b[k];
    b[i] = s / l[i * n + i];
  }
  for (let i = n - 1; i >= 0; i--) {
    let s = b[i];
    for (let k = i + 1; k < n; k++) s -= l[k * n + i] * b[k];
    b[i] = s / l[i * n + i];
  }
}

function lowerIndex(x: Float64Array, value: number): number {
  let lo = 0;
  let hi = x.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (x[mid] < value) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

function nearestIndex(x: Float64Array, value: number): number {
  const i = lowerIndex(x, value);
  if (i <= 0) return 0;
  if (i >= x.length) return x.length - 1;
  return value - x[i - 1] < x[i] - value ? i - 1 : i;
}
