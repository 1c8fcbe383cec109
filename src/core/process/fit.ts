import { InputError } from '../errors.js';
import type { Pattern } from '../model/pattern.js';
import { DEG_TO_RAD, dFromTwoTheta } from '../model/units.js';
import { partnerTwoThetaDeg } from './kalpha2.js';
import { thompsonCoxHastingsWithDerivatives } from './profiles.js';
import type { FittedPeak, PeakFitOptions, PeakGuess, ProfileModel } from '../model/peak.js';
import { lowerBound } from '../model/sorted.js';
import { choleskyFactor, choleskySolve, conditionalInverse } from '../numeric/cholesky.js';

/**
 * Profile fitting of diffraction peaks: overlapping peaks are fitted together in groups, each peak a
 * pseudo-Voigt (free η, or the Thompson–Cox–Hastings mix of a Gaussian and a Lorentzian width) with its
 * Kα2 partner at the same d, optionally split into a wider low-angle and a narrower high-angle half,
 * on the given background plus a straight-line correction per group. Weighted least squares by
 * Levenberg–Marquardt (Marquardt, J. SIAM 11, 431 (1963)) with analytic derivatives; standard
 * uncertainties from the inverse normal matrix scaled by the reduced χ² (as scipy's curve_fit does).
 * Groups are small (peaks within a few FWHM of each other, long chains cut at their deepest valleys),
 * each fitted on its peaks' cores with all other peaks' full profiles held fixed under it, strongest
 * groups first, then refitted where those neighbours changed (block Gauss–Seidel): the work grows with
 * the number of peaks, not with the square of the longest chain of overlapping peaks.
 */

const LN2 = Math.LN2;
const FOUR_LN2 = 4 * LN2;
const GAUSS_NORM = 2 * Math.sqrt(LN2 / Math.PI);
const LORENTZ_NORM = 2 / Math.PI;
/** Unit-height pseudo-Voigt integral breadth = fwhm / (η·2/π + (1−η)·2√(ln2/π)). */
const NORM_DIFF = LORENTZ_NORM - GAUSS_NORM;
/** The Gaussian part exp(−4 ln2 u²) is taken as 0 beyond u² = 16 (4 FWHM out, 2⁻⁶⁴ ≈ 5e-20 of the height: below double precision). */
const GAUSS_CUT_U2 = 16;

/** Adaptive model reach: until the Lorentzian tail is below half the noise σ, within these limits (FWHM). */
const MIN_REACH_FWHM = 5;
const MAX_REACH_FWHM = 25;
const TAIL_NOISE_FRACTION = 0.5;
/** A group is fitted on this many FWHM either side of its peaks' Kα1 lines and Kα2 partners. */
const CORE_FWHM = 4;
/** …and at least this many points either side (enough for a fair χ² where peaks span few points). */
const MIN_CORE_POINTS = 60;
/**
 * Peaks closer than twice this many FWHM (Kα1 or Kα2 line to Kα1 or Kα2 line) are fitted together;
 * further apart they couple only through their tails, which the other groups' fits hold fixed.
 */
const COUPLING_FWHM = 1.5;
/** Largest group fitted at once; a longer chain of overlapping cores is cut at its weakest links. */
const MAX_GROUP_PEAKS = 6;
/** Passes over all groups, each with the other groups' latest peaks held fixed. */
const SWEEPS = 2;
/** In the second sweep a group is refitted only if the peaks held fixed under it changed by this many σ (rms). */
const REFIT_SIGMA = 1;
/** Widest Kα1–Kα2 separation to look past when flagging overlaps, degrees 2θ (Cu at 150°: about 2.4°). */
const MAX_PARTNER_GAP_DEG = 5;
/** A fitted peak that moved further than this many FWHM from where it was found is not the peak that was found. */
const MAX_MOVE_FWHM = 1;
/** Nor one that came out narrower than found by more than this factor. */
const MAX_WIDTH_CHANGE = 4;
const DEFAULT_MAX_ITERATIONS = 60;
/** Stop when an accepted step lowers χ² by less than this fraction. */
const CHI2_TOLERANCE = 1e-8;
/** Give up raising the damping beyond this (no downhill step exists within the constraints). */
const MAX_DAMPING = 1e8;
const MAX_ASYMMETRY = 0.8;
/**
 * A pivot of the covariance's Cholesky factor below this fraction of its diagonal element marks a
 * parameter that the data cannot tell from the others (its σ would be over 10⁵ times its independent σ).
 */
const SINGULAR_PIVOT = 1e-10;
/** A fitted width within this fraction of the upper limit counts as pinned there. */
const PINNED_WIDTH_FRACTION = 0.995;
/** Too-weak peaks whose heights correlate beyond this are taken out one at a time (see survivors). */
const SPARE_CORRELATION = 0.5;
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
const PREP = 13;
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
const P_INV_LOW = 10; // 1 / FWHM of the low-angle half
const P_INV_HIGH = 11; // 1 / FWHM of the high-angle half
const P_INV_FWHM = 12;

/**
 * Work done by the fits since the last reset, for judging the cost of a change by counting rather than
 * timing: evaluations of a group's model (with its normal matrix), Kα1 profile evaluations at points
 * (a doublet counts once), Levenberg–Marquardt steps tried, and group fits whose normal matrix was singular.
 */
export const fitWork = { evaluations: 0, profilePoints: 0, lmSteps: 0, singularFits: 0 };

export function resetFitWork(): void {
  fitWork.evaluations = 0;
  fitWork.profilePoints = 0;
  fitWork.lmSteps = 0;
  fitWork.singularFits = 0;
}

export interface PeakFitResult {
  peaks: FittedPeak[];
  /** Background with each group's straight-line correction added, on pattern.x. */
  background: Float64Array;
  /** Background plus all fitted peaks and their Kα2 partners, on pattern.x. */
  model: Float64Array;
}

interface Group {
  /** Indices (into the sorted starting peaks) of the group's peaks. */
  members: number[];
  /** Points [regionStart, regionEnd) the group is fitted on: its peaks' cores (may overlap other groups'). */
  regionStart: number;
  regionEnd: number;
  /** Points [ownStart, ownEnd) where its background correction applies: cut where the next group's begins. */
  ownStart: number;
  ownEnd: number;
  /** The other peaks under the region when it was last fitted (to tell whether a refit is needed). */
  othersAtFit: Float64Array | null;
  /** The group's straight-line background correction from its latest fit: value at `middle` and slope. */
  offset: number;
  slope: number;
  middle: number;
}

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
   * Also stop a fit once a step lowers χ² by less than this (absolute): Δχ² = 0.01 means the parameters
   * are within about a tenth of their standard uncertainties of the minimum, enough for a search.
   */
  convergedChi2Change?: number;
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
  return fitter.fitAll(starts);
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
  private readonly convergedChi2Change: number;

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
  private activeBase = new Int32Array(0);
  private jac = new Float64Array(0);
  private params = new Float64Array(0);
  private lower = new Float64Array(0);
  private upper = new Float64Array(0);
  private foundAt: Float64Array = new Float64Array(0);
  private foundFwhm: Float64Array = new Float64Array(0);
  /** σ of each group peak's area with the group's background line held at its fitted value (see standsClear). */
  private areaSigmaGivenLine: Float64Array = new Float64Array(0);

  // All peaks: latest parameters, still kept, latest description, where found and how broad.
  private current: Float64Array[] = [];
  private alive = new Uint8Array(0);
  private described: Array<FittedPeak | null> = [];
  private allFoundAt = new Float64Array(0);
  private allFoundFwhm = new Float64Array(0);
  /** Each peak's model window for its latest parameters, valid where windowStale is 0. */
  private windowLo = new Int32Array(0);
  private windowHi = new Int32Array(0);
  private windowStale = new Uint8Array(0);
  /** The peaks outside the group being fitted, summed over its region (held fixed in its fit). */
  private readonly others: Float64Array;

  constructor(pattern: Pattern, background: Float64Array, options: PeakFitOptions, acceptance?: PeakAcceptance) {
    this.acceptance = acceptance;
    this.convergedChi2Change = acceptance?.convergedChi2Change ?? 0;
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
    this.others = new Float64Array(n);
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
    return this.lambda2 === null ? pos : partnerTwoThetaDeg(pos, this.lambda1, this.lambda2);
  }

  /** Points from `reach`·FWHM below the Kα1 line to `reach`·FWHM above its Kα2 partner. */
  private windowOf(pos: number, fwhm: number, reach: number): [number, number] {
    return [lowerBound(this.x, pos - reach * fwhm), lowerBound(this.x, this.partnerPosition(pos) + reach * fwhm)];
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

  /**
   * Fit all peaks: groups of overlapping peaks one after another, each with the other peaks' profiles
   * (their latest values) held fixed under it, in SWEEPS passes over the pattern (block Gauss–Seidel:
   * peaks further apart couple only through their tails, which the second pass brings up to date).
   */
  fitAll(starts: Float64Array[]): PeakFitResult {
    const count = starts.length;
    this.current = starts.map((s) => s.slice());
    this.windowLo = new Int32Array(count);
    this.windowHi = new Int32Array(count);
    this.windowStale = new Uint8Array(count).fill(1);
    this.alive = new Uint8Array(count).fill(1);
    this.described = new Array<FittedPeak | null>(count).fill(null);
    this.allFoundAt = Float64Array.from(starts, (p) => p[POS]);
    this.allFoundFwhm = Float64Array.from(starts, (p) => this.fwhmOf(p, 0));
    const groups = this.groupPeaks(starts);
    // Strongest groups first: weaker peaks then sit on their fitted tails from the start, and the second
    // sweep has little left to change.
    const tallest = groups.map((group) => Math.max(...group.members.map((k) => starts[k][HEIGHT])));
    const order = groups.map((_, g) => g).sort((a, b) => tallest[b] - tallest[a] || a - b);
    for (let sweep = 0; sweep < SWEEPS; sweep++) {
      for (const g of order) this.fitGroup(groups[g], g, sweep > 0);
    }
    const background = this.background.slice();
    for (const group of groups) {
      for (let i = group.ownStart; i < group.ownEnd; i++) background[i] += group.offset + group.slope * (this.x[i] - group.middle);
    }
    const model = background.slice();
    const peaks: FittedPeak[] = [];
    for (let k = 0; k < count; k++) {
      const peak = this.described[k];
      if (!this.alive[k] || peak === null) continue;
      const [lo, hi] = this.modelWindowOf(k);
      this.addPeak(model, this.current[k], lo, hi);
      peaks.push(peak);
    }
    peaks.sort((a, b) => a.twoTheta - b.twoTheta);
    this.flagOverlaps(peaks);
    return { peaks, background, model };
  }

  /** Points a peak is modelled on: its reach below the Kα1 line to its reach above the Kα2 partner. */
  private modelWindow(p: Float64Array): [number, number] {
    return this.windowOf(p[POS], this.fwhmOf(p, 0), this.reachOf(p, 0));
  }

  /** modelWindow of peak k's latest parameters, remembered until they change (see peakChanged). */
  private modelWindowOf(k: number): [number, number] {
    if (this.windowStale[k]) {
      const [lo, hi] = this.modelWindow(this.current[k]);
      this.windowLo[k] = lo;
      this.windowHi[k] = hi;
      this.windowStale[k] = 0;
    }
    return [this.windowLo[k], this.windowHi[k]];
  }

  /**
   * Chains of peaks closer than 2·COUPLING_FWHM, each chain longer than MAX_GROUP_PEAKS cut at its
   * weakest links (the lowest valley relative to the smaller of the two peaks beside it). Each group is
   * fitted on its peaks' cores; its background correction holds up to the valley before the next group.
   */
  groupPeaks(starts: Float64Array[]): Group[] {
    const count = starts.length;
    const pieces: Array<[number, number]> = [];
    let chainStart = 0;
    let chainEnd = Number.NEGATIVE_INFINITY;
    for (let k = 0; k <= count; k++) {
      const fwhm = k < count ? COUPLING_FWHM * this.fwhmOf(starts[k], 0) : 0;
      if (k === count || starts[k][POS] - fwhm >= chainEnd) {
        if (k > 0) this.splitChain(starts, chainStart, k, pieces);
        chainStart = k;
        chainEnd = Number.NEGATIVE_INFINITY;
      }
      if (k < count) chainEnd = Math.max(chainEnd, this.partnerPosition(starts[k][POS]) + fwhm);
    }
    const groups: Group[] = pieces.map(([a, b]) => {
      let lo = this.x.length;
      let hi = 0;
      const members: number[] = [];
      for (let k = a; k < b; k++) {
        const [kLo, kHi] = this.windowOf(starts[k][POS], this.fwhmOf(starts[k], 0), this.fitReach());
        lo = Math.min(lo, kLo, nearestIndex(this.x, starts[k][POS]) - MIN_CORE_POINTS);
        hi = Math.max(hi, kHi, nearestIndex(this.x, this.partnerPosition(starts[k][POS])) + MIN_CORE_POINTS);
        members.push(k);
      }
      lo = Math.max(lo, 0);
      hi = Math.min(Math.max(hi, lo + 1), this.x.length);
      return { members, regionStart: lo, regionEnd: hi, ownStart: lo, ownEnd: hi, othersAtFit: null, offset: 0, slope: 0, middle: 0 };
    });
    for (let g = 1; g < groups.length; g++) {
      const left = groups[g - 1];
      const right = groups[g];
      const cut = this.valleyIndex(starts[left.members[left.members.length - 1]][POS], starts[right.members[0]][POS]);
      left.ownEnd = Math.max(Math.min(left.ownEnd, cut), left.ownStart);
      right.ownStart = Math.min(Math.max(right.ownStart, cut, left.ownEnd), right.ownEnd);
    }
    return groups;
  }

  /** Cut peaks [a, b) into pieces of at most MAX_GROUP_PEAKS at the weakest links. */
  private splitChain(starts: Float64Array[], a: number, b: number, pieces: Array<[number, number]>): void {
    if (b - a <= MAX_GROUP_PEAKS) {
      pieces.push([a, b]);
      return;
    }
    let weakest = a + 1;
    let lowest = Number.POSITIVE_INFINITY;
    for (let k = a + 1; k < b; k++) {
      const i = this.valleyIndex(starts[k - 1][POS], starts[k][POS]);
      const depth = (this.y[i] - this.background[i]) / Math.max(Math.min(starts[k - 1][HEIGHT], starts[k][HEIGHT]), 1e-300);
      if (depth < lowest) {
        lowest = depth;
        weakest = k;
      }
    }
    this.splitChain(starts, a, weakest, pieces);
    this.splitChain(starts, weakest, b, pieces);
  }

  /** Index of the lowest net intensity between two positions. */
  private valleyIndex(from: number, to: number): number {
    const { x, y, background } = this;
    let lo = nearestIndex(x, from);
    const hi = Math.max(nearestIndex(x, to), lo);
    let best = lo;
    for (let i = lo; i <= hi; i++) if (y[i] - background[i] < y[best] - background[best]) best = i;
    lo = best;
    return lo;
  }

  /** How many FWHM either side of a peak (and of its Kα2 partner) the fit looks: windowFwhm, or the core. */
  private fitReach(): number {
    return this.windowFwhm ?? CORE_FWHM;
  }

  /** Sum of all living peaks outside the group, at the group's region points, into this.others. */
  private fillOthers(group: Group, members: number[]): void {
    const { others } = this;
    const start = group.regionStart;
    const end = group.regionEnd;
    others.fill(0, start, end);
    for (let j = 0; j < this.current.length; j++) {
      if (!this.alive[j] || members.includes(j)) continue;
      const [lo, hi] = this.modelWindowOf(j);
      if (hi <= start || lo >= end) continue;
      this.addPeak(others, this.current[j], Math.max(lo, start), Math.min(hi, end));
    }
  }

  /** Whether the other peaks under the group moved by more than REFIT_SIGMA·σ (root mean square) since its last fit. */
  private othersChanged(group: Group): boolean {
    const before = group.othersAtFit;
    if (before === null) return true;
    let sum = 0;
    for (let i = group.regionStart; i < group.regionEnd; i++) {
      const change = this.others[i] - before[i - group.regionStart];
      sum += change * change * this.weight[i];
    }
    return sum > REFIT_SIGMA * REFIT_SIGMA * (group.regionEnd - group.regionStart);
  }

  /** Add one peak (Kα1 and its Kα2 partner) with parameters p to target[from … to). */
  private addPeak(target: Float64Array, p: Float64Array, from: number, to: number): void {
    const { x } = this;
    const fwhm = this.fwhmOf(p, 0);
    const eta = this.profile === 'tch' ? thompsonCoxHastingsWithDerivatives(p[WIDTH_A], p[WIDTH_B]).eta : p[WIDTH_B];
    const mix = (eta * LORENTZ_NORM) / (eta * LORENTZ_NORM + (1 - eta) * GAUSS_NORM);
    const asym = this.perPeak === 5 ? p[ASYM] : 0;
    const height = p[HEIGHT];
    const pos = p[POS];
    const pos2 = this.partnerPosition(pos);
    const h2 = this.ratio * height;
    for (let i = from; i < to; i++) {
      let v = height * splitPseudoVoigt(x[i] - pos, fwhm, mix, asym);
      if (h2 > 0) v += h2 * splitPseudoVoigt(x[i] - pos2, fwhm, mix, asym);
      target[i] += v;
    }
  }

  /** Peaks closer than OVERLAP_FWHM mean FWHMs to a neighbour or to its Kα2 partner are flagged. */
  private flagOverlaps(peaks: FittedPeak[]): void {
    for (let k = 0; k < peaks.length; k++) {
      for (let j = k + 1; j < peaks.length; j++) {
        const limit = (OVERLAP_FWHM * (peaks[k].fwhm + peaks[j].fwhm)) / 2;
        const gap = peaks[j].twoTheta - peaks[k].twoTheta;
        const partnerGap = this.lambda2 === null ? Number.POSITIVE_INFINITY : Math.abs(peaks[j].twoTheta - this.partnerPosition(peaks[k].twoTheta));
        if (gap < limit || partnerGap < limit) {
          peaks[k].overlapped = true;
          peaks[j].overlapped = true;
        }
        if (gap > limit + MAX_PARTNER_GAP_DEG) break;
      }
    }
  }

  /** Fit one group with everything else held fixed (dropping insignificant peaks and refitting when pruning is on). */
  private fitGroup(group: Group, groupIndex: number, onlyIfChanged: boolean): void {
    let members = group.members.filter((k) => this.alive[k] === 1);
    this.peakCount = 0;
    if (members.length === 0) {
      group.offset = 0;
      group.slope = 0;
      return;
    }
    this.fillOthers(group, members);
    if (onlyIfChanged && !this.othersChanged(group)) return;
    group.othersAtFit = this.others.slice(group.regionStart, group.regionEnd);
    const perPeak = this.perPeak;
    let params = new Float64Array(members.length * perPeak + 2);
    members.forEach((k, j) => params.set(this.current[k], j * perPeak));
    params[members.length * perPeak] = group.offset;
    params[members.length * perPeak + 1] = group.slope;
    for (let round = 0; ; round++) {
      this.foundAt = Float64Array.from(members, (k) => this.allFoundAt[k]);
      this.foundFwhm = Float64Array.from(members, (k) => this.allFoundFwhm[k]);
      this.setUp(params, members.length, group.regionStart, group.regionEnd);
      const chi2 = this.levenbergMarquardt();
      const covariance = this.covariance(chi2);
      const peaks = this.describe(covariance, chi2, groupIndex);
      const keep = this.pruneBelowSigma === undefined || round >= 4 ? null : this.survivors(peaks, covariance);
      if (keep === null || keep.length === members.length || keep.length === 0) {
        const bgBase = members.length * perPeak;
        if (keep !== null && keep.length === 0) {
          for (const k of members) this.alive[k] = 0;
          group.offset = 0;
          group.slope = 0;
          this.peakCount = 0;
          return;
        }
        members.forEach((k, j) => {
          this.current[k].set(this.params.subarray(j * perPeak, (j + 1) * perPeak));
          this.windowStale[k] = 1;
          this.described[k] = peaks[j];
        });
        group.offset = this.params[bgBase];
        group.slope = this.params[bgBase + 1];
        group.middle = this.middle;
        return;
      }
      // Refit the survivors from their fitted values.
      const next = new Float64Array(keep.length * perPeak + 2);
      keep.forEach((k, j) => next.set(this.params.subarray(k * perPeak, (k + 1) * perPeak), j * perPeak));
      next.set(this.params.subarray(members.length * perPeak, members.length * perPeak + 2), keep.length * perPeak);
      for (let j = 0; j < members.length; j++) if (!keep.includes(j)) this.alive[members[j]] = 0;
      members = keep.map((j) => members[j]);
      params = next;
    }
  }

  /**
   * Indices of peaks that stand clear of the noise, are wider than a spike, and are not duplicates. Of
   * peaks too weak only because they share their signal with another too-weak peak (heights correlated
   * beyond SPARE_CORRELATION: two fits of one line, say), only the least significant goes (or the duplicate);
   * the others are refitted without it (backward elimination, one of each correlated set per round).
   */
  private survivors(peaks: FittedPeak[], covariance: Float64Array): number[] {
    const threshold = this.pruneBelowSigma ?? 0;
    const keep: number[] = [];
    const weak: number[] = [];
    const dropped: number[] = [];
    for (let k = 0; k < peaks.length; k++) {
      const p = peaks[k];
      const atEdge = p.twoTheta <= this.x[this.lo[k]] || p.twoTheta >= this.x[this.hi[k] - 1];
      // In a search, a peak pinned at the broadest width allowed wants to be broader: a piece of an amorphous hump.
      const pinnedBroad = this.acceptance !== undefined && p.fwhm >= PINNED_WIDTH_FRACTION * this.maxFwhm;
      if (p.fwhm < this.minFwhm || p.fwhm > this.maxFwhm || atEdge || pinnedBroad) continue;
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
      if (duplicate) {
        dropped.push(k);
        continue;
      }
      if (!(p.height > threshold * p.heightSigma) || (this.acceptance && !this.standsClear(k, p))) weak.push(k);
      else keep.push(k);
    }
    if (weak.length === 0 || weak.length + dropped.length < 2) return keep;
    // Least significant first; a weak peak correlated with one already dropped (or a duplicate) is spared this round.
    const significance = (k: number): number => peaks[k].height / peaks[k].heightSigma;
    weak.sort((a, b) => significance(a) - significance(b));
    for (const k of weak) {
      if (dropped.some((j) => Math.abs(this.heightCorrelation(covariance, j, k)) > SPARE_CORRELATION)) keep.push(k);
      else dropped.push(k);
    }
    return keep.sort((a, b) => a - b);
  }

  /** Correlation of the heights of peaks j and k of the group (0 where either is held fixed). */
  private heightCorrelation(covariance: Float64Array, j: number, k: number): number {
    const n = this.paramCount;
    const a = j * this.perPeak + HEIGHT;
    const b = k * this.perPeak + HEIGHT;
    const rho = covariance[a * n + b] / Math.sqrt(covariance[a * n + a] * covariance[b * n + b]);
    return Number.isFinite(rho) ? rho : 0;
  }

  /** The acceptance rules on significance, movement and width (see PeakAcceptance). */
  private standsClear(k: number, peak: FittedPeak): boolean {
    const acceptance = this.acceptance as PeakAcceptance;
    const found = this.foundFwhm[k];
    if (Math.abs(peak.twoTheta - this.foundAt[k]) > MAX_MOVE_FWHM * Math.max(found, peak.fwhm)) return false;
    // Narrower than found is a spike on a peak's top; broader is allowed up to the pattern's width bound (the
    // width found on a weak peak's noisy top can be a fraction of its own, the more so the finer the step).
    if (peak.fwhm * MAX_WIDTH_CHANGE < found) return false;
    // Integrated significance: the area against the σ of the area, which (unlike a height against the
    // σ of one point) does not depend on the step size when the counting time per degree is the same.
    // It is taken with the group's straight background line held fixed: that line is pinned by however many
    // points the fit region spans beyond the peak, a number of points (not degrees), so its share of the
    // area's σ would change with the step.
    return peak.area >= acceptance.thresholdSigma * this.areaSigmaGivenLine[k];
  }

  /**
   * σ of a quantity of one peak (gradient `grad` over its parameters at `base`, marginal σ `sigma`) with the
   * background line's offset and slope held fixed: the Schur complement v − cᵀ·C_bb⁻¹·c, c = C_pb·g.
   */
  private givenBackgroundLine(covariance: Float64Array, base: number, grad: Float64Array, sigma: number): number {
    const n = this.paramCount;
    const bg = this.peakCount * this.perPeak;
    const c = [0, 0];
    for (let j = 0; j < 2; j++) {
      for (let a = 0; a < this.perPeak; a++) {
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
      this.activeBase = new Int32Array(size);
      this.jac = new Float64Array(size);
      this.lower = new Float64Array(size);
      this.upper = new Float64Array(size);
    }
    if (this.lo.length < peakCount) {
      const size = Math.max(peakCount, 2 * this.lo.length);
      this.lo = new Int32Array(size);
      this.hi = new Int32Array(size);
      this.prep = new Float64Array(size * PREP);
      this.areaSigmaGivenLine = new Float64Array(size);
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
      const fwhm = prep[out + P_FWHM];
      const asym = perPeak === 5 ? params[base + ASYM] : 0;
      prep[out + P_INV_LOW] = 1 / (fwhm * (1 + asym));
      prep[out + P_INV_HIGH] = 1 / (fwhm * (1 - asym));
      prep[out + P_INV_FWHM] = 1 / fwhm;
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
   * χ² of the group at `params`, filling the normal matrix JᵀWJ and gradient JᵀW(y − model).
   * Each point touches only the peaks whose windows hold it, so the matrix is filled block by block.
   */
  private evaluate(params: Float64Array): number {
    this.prepare(params);
    const { x, y, weight, background, others, perPeak, prep, lo, hi, activeBase, jac, normal, gradient } = this;
    const paramCount = this.paramCount;
    const asymmetric = perPeak === 5;
    const doublet = this.lambda2 !== null;
    const ratio = this.ratio;
    const bgBase = this.peakCount * perPeak;
    const offset = params[bgBase];
    const slope = params[bgBase + 1];
    normal.fill(0, 0, paramCount * paramCount);
    gradient.fill(0, 0, paramCount);
    fitWork.evaluations++;
    for (let k = 0; k < this.peakCount; k++) fitWork.profilePoints += hi[k] - lo[k];
    let chi2 = 0;
    for (let i = this.first; i < this.last; i++) {
      const xi = x[i];
      const t = xi - this.middle;
      let model = background[i] + others[i] + offset + slope * t;
      let active = 0; // peaks whose windows hold this point; their derivatives in jac, perPeak each
      for (let k = 0; k < this.peakCount; k++) {
        if (i < lo[k] || i >= hi[k]) continue;
        const base = k * perPeak;
        const pr = k * PREP;
        const height = params[base + HEIGHT];
        const mix = prep[pr + P_MIX];
        const gaussShare = 1 - mix;
        const invLow = prep[pr + P_INV_LOW];
        const invHigh = prep[pr + P_INV_HIGH];
        // Kα1 component, then its Kα2 partner: shape, and d(shape)/du by the chain rule to each parameter
        // (the unit-height split pseudo-Voigt, written out here: this loop is the fit's hot spot).
        let dx = xi - params[base + POS];
        let inv = dx < 0 ? invLow : invHigh;
        let u = dx * inv;
        let u2 = u * u;
        let lor = 1 / (1 + 4 * u2);
        let gau = u2 > GAUSS_CUT_U2 ? 0 : Math.exp(-FOUR_LN2 * u2);
        let shape = mix * lor + gaussShare * gau;
        let h = height;
        model += h * shape;
        let slopeTerm = -h * (-8 * u * (mix * lor * lor + gaussShare * LN2 * gau));
        let dPos = slopeTerm * inv;
        let dWidth = slopeTerm * u;
        let dAsym = slopeTerm * u * (dx < 0 ? 1 : -1) * inv;
        let dEta = h * (lor - gau);
        let dHeight = shape;
        if (doublet) {
          h = ratio * height;
          dx = xi - prep[pr + P_POS2];
          inv = dx < 0 ? invLow : invHigh;
          u = dx * inv;
          u2 = u * u;
          lor = 1 / (1 + 4 * u2);
          gau = u2 > GAUSS_CUT_U2 ? 0 : Math.exp(-FOUR_LN2 * u2);
          shape = mix * lor + gaussShare * gau;
          model += h * shape;
          slopeTerm = -h * (-8 * u * (mix * lor * lor + gaussShare * LN2 * gau));
          dPos += slopeTerm * inv * prep[pr + P_DPOS2];
          dWidth += slopeTerm * u;
          dAsym += slopeTerm * u * (dx < 0 ? 1 : -1) * inv;
          dEta += h * (lor - gau);
          dHeight += ratio * shape;
        }
        dWidth *= prep[pr + P_INV_FWHM];
        dEta *= prep[pr + P_DMIX];
        const j = active * perPeak;
        activeBase[active++] = base;
        jac[j + POS] = dPos;
        jac[j + HEIGHT] = dHeight;
        jac[j + WIDTH_A] = dWidth * prep[pr + P_DW_DA] + dEta * prep[pr + P_DETA_DA];
        jac[j + WIDTH_B] = dWidth * prep[pr + P_DW_DB] + dEta * prep[pr + P_DETA_DB];
        if (asymmetric) jac[j + ASYM] = dAsym * prep[pr + P_FWHM];
      }
      const residual = y[i] - model;
      const w = weight[i];
      chi2 += w * residual * residual;
      // Lower triangle (row ≥ column) block by block: peaks in increasing order, the background slots last.
      const bgRow = bgBase * paramCount;
      const slopeRow = bgRow + paramCount;
      for (let a = 0; a < active; a++) {
        const ja = a * perPeak;
        const baseA = activeBase[a];
        for (let r = 0; r < perPeak; r++) {
          const wr = w * jac[ja + r];
          const row = (baseA + r) * paramCount;
          gradient[baseA + r] += wr * residual;
          for (let b = 0; b < a; b++) {
            const jb = b * perPeak;
            const cell = row + activeBase[b];
            normal[cell] += wr * jac[jb];
            normal[cell + 1] += wr * jac[jb + 1];
            normal[cell + 2] += wr * jac[jb + 2];
            normal[cell + 3] += wr * jac[jb + 3];
            if (asymmetric) normal[cell + 4] += wr * jac[jb + 4];
          }
          for (let c = 0; c <= r; c++) normal[row + baseA + c] += wr * jac[ja + c];
          normal[bgRow + baseA + r] += wr;
          normal[slopeRow + baseA + r] += wr * t;
        }
      }
      normal[bgRow + bgBase] += w;
      normal[slopeRow + bgBase] += w * t;
      normal[slopeRow + bgBase + 1] += w * t * t;
      gradient[bgBase] += w * residual;
      gradient[bgBase + 1] += w * t * residual;
    }
    for (let r = 0; r < paramCount; r++) for (let c = r + 1; c < paramCount; c++) normal[r * paramCount + c] = normal[c * paramCount + r];
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

  /** Marquardt's damped Gauss–Newton iteration; leaves the best parameters in this.params, returns χ². */
  private levenbergMarquardt(): number {
    const { paramCount, work, step } = this;
    const params = this.params;
    const trial = new Float64Array(paramCount);
    let chi2 = this.evaluate(params);
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
      fitWork.lmSteps++;
      if (!choleskyFactor(work, paramCount)) {
        damping *= growth;
        growth *= 2;
        continue;
      }
      choleskySolve(work, paramCount, step);
      // A parameter whose step would cross a limit stops on it, except a height, which stops 90 % of the
      // way to zero (at zero its peak has no derivatives left to come back with); the others keep their
      // full step (shortening the whole step instead stalls the fit while η creeps towards 1).
      let clipped = false;
      for (let a = 0; a < paramCount; a++) {
        let to = params[a] + step[a];
        const isHeight = a < this.peakCount * this.perPeak && a % this.perPeak === HEIGHT;
        if (to < this.lower[a]) to = isHeight ? params[a] + 0.9 * (this.lower[a] - params[a]) : this.lower[a];
        if (to > this.upper[a]) to = this.upper[a];
        if (to !== params[a] + step[a]) clipped = true;
        trial[a] = to;
        step[a] = to - params[a];
      }
      // Reduction of χ² the linearised model promises for this step: 2δᵀg − δᵀNδ.
      let predicted = 0;
      for (let a = 0; a < paramCount; a++) {
        if (step[a] === 0) continue;
        let row = 0;
        for (let b = 0; b < paramCount; b++) row += normal[a * paramCount + b] * step[b];
        predicted += step[a] * (2 * gradient[a] - row);
      }
      // A search fit has converged when a near Gauss–Newton step, unclipped, promises less than
      // convergedChi2Change: it stops here, without evaluating that step.
      if (!clipped && damping < 1 && predicted < this.convergedChi2Change) break;
      // Evaluate the trial with its normal matrix into the spare buffers; keep them only if accepted.
      this.swapNormalBuffers();
      const trialChi2 = this.evaluate(trial);
      if (trialChi2 < chi2) {
        const chi2Before = chi2;
        const gain = (chi2 - trialChi2) / Math.max(chi2, 1e-300);
        const rho = (chi2 - trialChi2) / Math.max(predicted, 1e-300);
        params.set(trial);
        chi2 = trialChi2;
        // Nielsen's damping update (H. B. Nielsen, IMM-REP-1999-05, DTU (1999)).
        damping *= Math.max(1 / 3, 1 - (2 * Math.min(rho, 1) - 1) ** 3);
        damping = Math.max(damping, 1e-12);
        growth = 2;
        // A tiny gain means convergence only for a near Gauss–Newton step, not a heavily damped one.
        if ((gain < CHI2_TOLERANCE || chi2Before - trialChi2 < this.convergedChi2Change) && damping < 1) break;
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

  /**
   * Covariance = (JᵀWJ)⁻¹ · χ²/(N − P). Where the normal matrix is singular (a peak that has become
   * degenerate with the group's background line under a broad hump, a duplicate, a height at zero), the
   * parameters that carry no information of their own are held fixed, weakest first (η, then widths,
   * then positions, then heights; the background line last), and the covariance is that of the others,
   * conditional on them: a degenerate η costs that peak nothing, and a degenerate height drops only its peak.
   * Fixed parameters get a variance of NaN on the diagonal (see describe).
   */
  private covariance(chi2: number): Float64Array {
    const { paramCount } = this;
    const points = this.last - this.first;
    const { inverse, fixedCount } = conditionalInverse(this.normal, paramCount, this.pivotOrder(), SINGULAR_PIVOT, this.work, this.step);
    if (fixedCount > 0) fitWork.singularFits++;
    const scale = chi2 / Math.max(points - paramCount, 1);
    for (let a = 0; a < paramCount * paramCount; a++) inverse[a] *= scale;
    return inverse;
  }

  /** Parameters in the order the covariance keeps them: the background line, heights, positions, widths, η (and asymmetry). */
  private pivotOrder(): number[] {
    const { perPeak, peakCount } = this;
    const bgBase = peakCount * perPeak;
    const order = [bgBase, bgBase + 1];
    for (const slot of perPeak === 5 ? [HEIGHT, POS, WIDTH_A, WIDTH_B, ASYM] : [HEIGHT, POS, WIDTH_A, WIDTH_B]) {
      for (let k = 0; k < peakCount; k++) order.push(k * perPeak + slot);
    }
    return order;
  }

  /** The fitted peaks with derived quantities and their standard uncertainties. */
  private describe(covariance: Float64Array, chi2: number, groupIndex: number): FittedPeak[] {
    const { params, perPeak, prep, paramCount } = this;
    this.prepare(params);
    const points = this.last - this.first;
    const reducedChi2 = chi2 / Math.max(points - paramCount, 1);
    const peaks: FittedPeak[] = [];
    const grad = new Float64Array(perPeak);
    // A parameter held fixed (degenerate, see covariance) adds nothing to the σ of what derives from it:
    // those σ are conditional on it; its own σ is unknown (∞).
    const isFixed = (index: number): boolean => Number.isNaN(covariance[index * paramCount + index]);
    const sigmaOf = (base: number): number => {
      let v = 0;
      for (let a = 0; a < perPeak; a++) {
        if (grad[a] === 0 || isFixed(base + a)) continue;
        for (let b = 0; b < perPeak; b++) if (!isFixed(base + b)) v += grad[a] * grad[b] * covariance[(base + a) * paramCount + base + b];
      }
      return Math.sqrt(Math.max(v, 0));
    };
    const single = (base: number, slot: number): number => {
      if (isFixed(base + slot)) return Number.POSITIVE_INFINITY;
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
      this.areaSigmaGivenLine[k] = this.givenBackgroundLine(covariance, base, grad, areaSigma);

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
    return peaks;
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

/** exp(−4 ln2 u²), taken as 0 beyond GAUSS_CUT_U2: most points of a window lie there. */
function gaussianTail(u2: number): number {
  return u2 > GAUSS_CUT_U2 ? 0 : Math.exp(-FOUR_LN2 * u2);
}

function nearestIndex(x: Float64Array, value: number): number {
  const i = lowerBound(x, value);
  if (i <= 0) return 0;
  if (i >= x.length) return x.length - 1;
  return value - x[i - 1] < x[i] - value ? i - 1 : i;
}
