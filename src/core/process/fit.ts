import { InputError } from '../errors.js';
import type { Pattern } from '../model/pattern.js';
import type { FittedPeak, PeakFitOptions, PeakGuess } from '../model/peak.js';
import { LevenbergMarquardt } from '../numeric/levenberg-marquardt.js';
import { fitWork } from './fit-work.js';
import { addPeak, GroupModel, reachOf, windowOf } from './group-model.js';
import { survivingPeaks, type PeakAcceptance } from './peak-acceptance.js';
import { describeGroupPeaks, flagOverlaps, groupCovariance } from './peak-description.js';
import { groupOverlappingPeaks, type PeakGroup } from './peak-grouping.js';
import { fwhmOf, HEIGHT, POS, setGroupLimits, startingPeak, type PeakFitSetting } from './peak-parameters.js';

export { fitWork, resetFitWork } from './fit-work.js';
export type { PeakAcceptance } from './peak-acceptance.js';

/**
 * Profile fitting of diffraction peaks: overlapping peaks are fitted together in groups (peak-grouping.ts),
 * each peak a pseudo-Voigt (free η, or the Thompson–Cox–Hastings mix of a Gaussian and a Lorentzian width)
 * with its Kα2 partner at the same d, optionally split into a wider low-angle and a narrower high-angle half,
 * on the given background plus a straight-line correction per group (group-model.ts). Weighted least squares
 * by Levenberg–Marquardt (numeric/levenberg-marquardt.ts) with analytic derivatives; standard uncertainties
 * from the inverse normal matrix scaled by the reduced χ² (peak-description.ts); in a search, peaks that do
 * not stand clear are dropped and their group refitted (peak-acceptance.ts).
 * Each group is fitted on its peaks' cores with all other peaks' full profiles held fixed under it, strongest
 * groups first, then refitted where those neighbours changed (block Gauss–Seidel): the work grows with
 * the number of peaks, not with the square of the longest chain of overlapping peaks.
 */

/** Passes over all groups, each with the other groups' latest peaks held fixed. */
const SWEEPS = 2;
/** In the second sweep a group is refitted only if the peaks held fixed under it changed by this many σ (rms). */
const REFIT_SIGMA = 1;
/** Rounds of dropping peaks that do not stand clear and refitting the rest, per group fit. */
const MAX_PRUNING_ROUNDS = 4;
const DEFAULT_MAX_ITERATIONS = 60;
/** Stop when an accepted step lowers χ² by less than this fraction. */
const CHI2_TOLERANCE = 1e-8;

export interface PeakFitResult {
  peaks: FittedPeak[];
  /** Background with each group's straight-line correction added, on pattern.x. */
  background: Float64Array;
  /** Background plus all fitted peaks and their Kα2 partners, on pattern.x. */
  model: Float64Array;
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
  const fitter = new GroupFitter(fitSetting(pattern, background, options, acceptance), options, acceptance);
  const starts = guesses
    .map((g) => startingPeak(fitter.setting, typeof g === 'number' ? { twoTheta: g } : g))
    .filter((g): g is Float64Array => g !== null)
    .sort((a, b) => a[POS] - b[POS]);
  return fitter.fitAll(starts);
}

/** The fixed setting of a pattern's fits: data, weights 1/σ² (the acceptance's σ where given), Kα2 partner, width limits. */
function fitSetting(pattern: Pattern, background: Float64Array, options: PeakFitOptions, acceptance: PeakAcceptance | undefined): PeakFitSetting {
  const { x, y } = pattern;
  const n = x.length;
  const { lambda1, lambda2, ratio } = options.wavelength;
  const doublet = lambda2 !== null && ratio > 0;
  const meanStep = n > 1 ? (x[n - 1] - x[0]) / (n - 1) : 1;
  const weight = new Float64Array(n);
  const sigma = acceptance?.weightSigma ?? pattern.sigma;
  for (let i = 0; i < n; i++) {
    const s = sigma[i];
    const variance = s > 0 && Number.isFinite(s) ? s * s : Math.max(y[i], 1);
    weight[i] = 1 / variance;
  }
  return {
    x,
    y,
    weight,
    background,
    profile: options.profile ?? 'pseudo-voigt',
    perPeak: options.asymmetry ? 5 : 4,
    lambda1,
    lambda2: doublet ? lambda2 : null,
    ratio: doublet ? ratio : 0,
    minFwhm: options.minFwhmDeg ?? meanStep,
    maxFwhm: options.maxFwhmDeg ?? 5,
  };
}

/** Fits the groups one at a time, each with the others' latest peaks held fixed under it. */
class GroupFitter {
  private readonly windowFwhm: number | undefined;
  private readonly maxIterations: number;
  private readonly pruneBelowSigma: number | undefined;
  private readonly convergedChi2Change: number;
  private readonly model: GroupModel;
  private readonly solver = new LevenbergMarquardt();
  private lower = new Float64Array(0);
  private upper = new Float64Array(0);
  private approachLower = new Uint8Array(0);
  /** σ of each group peak's area with the group's background line held at its fitted value (see describeGroupPeaks). */
  private areaSigmaGivenLine = new Float64Array(0);

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

  constructor(
    readonly setting: PeakFitSetting,
    options: PeakFitOptions,
    private readonly acceptance: PeakAcceptance | undefined,
  ) {
    this.windowFwhm = options.windowFwhm;
    this.maxIterations = options.maxIterations ?? DEFAULT_MAX_ITERATIONS;
    this.pruneBelowSigma = options.pruneBelowSigma ?? acceptance?.thresholdSigma;
    this.convergedChi2Change = acceptance?.convergedChi2Change ?? 0;
    this.model = new GroupModel(setting);
  }

  /**
   * Fit all peaks: groups of overlapping peaks one after another, each with the other peaks' profiles
   * (their latest values) held fixed under it, in SWEEPS passes over the pattern (block Gauss–Seidel:
   * peaks further apart couple only through their tails, which the second pass brings up to date).
   */
  fitAll(starts: Float64Array[]): PeakFitResult {
    const { setting } = this;
    const count = starts.length;
    this.current = starts.map((s) => s.slice());
    this.windowLo = new Int32Array(count);
    this.windowHi = new Int32Array(count);
    this.windowStale = new Uint8Array(count).fill(1);
    this.alive = new Uint8Array(count).fill(1);
    this.described = new Array<FittedPeak | null>(count).fill(null);
    this.allFoundAt = Float64Array.from(starts, (p) => p[POS]);
    this.allFoundFwhm = Float64Array.from(starts, (p) => fwhmOf(setting, p, 0));
    const groups = groupOverlappingPeaks(setting, starts, this.windowFwhm);
    // Strongest groups first: weaker peaks then sit on their fitted tails from the start, and the second
    // sweep has little left to change.
    const tallest = groups.map((group) => Math.max(...group.members.map((k) => starts[k][HEIGHT])));
    const order = groups.map((_, g) => g).sort((a, b) => tallest[b] - tallest[a] || a - b);
    for (let sweep = 0; sweep < SWEEPS; sweep++) {
      for (const g of order) this.fitGroup(groups[g], g, sweep > 0);
    }
    const background = setting.background.slice();
    for (const group of groups) {
      for (let i = group.ownStart; i < group.ownEnd; i++) background[i] += group.offset + group.slope * (setting.x[i] - group.middle);
    }
    const model = background.slice();
    const peaks: FittedPeak[] = [];
    for (let k = 0; k < count; k++) {
      const peak = this.described[k];
      if (!this.alive[k] || peak === null) continue;
      const [lo, hi] = this.modelWindowOf(k);
      addPeak(setting, model, this.current[k], lo, hi);
      peaks.push(peak);
    }
    peaks.sort((a, b) => a.twoTheta - b.twoTheta);
    flagOverlaps(setting, peaks);
    return { peaks, background, model };
  }

  /** Points peak k's latest parameters are modelled on (its reach below the Kα1 line to its reach above the Kα2 partner), remembered until they change. */
  private modelWindowOf(k: number): [number, number] {
    if (this.windowStale[k]) {
      const p = this.current[k];
      const [lo, hi] = windowOf(this.setting, p[POS], fwhmOf(this.setting, p, 0), reachOf(this.setting, this.windowFwhm, p, 0));
      this.windowLo[k] = lo;
      this.windowHi[k] = hi;
      this.windowStale[k] = 0;
    }
    return [this.windowLo[k], this.windowHi[k]];
  }

  /** Sum of all living peaks outside the group, at the group's region points, into the model's `others`. */
  private fillOthers(group: PeakGroup, members: number[]): void {
    const { others } = this.model;
    const start = group.regionStart;
    const end = group.regionEnd;
    others.fill(0, start, end);
    for (let j = 0; j < this.current.length; j++) {
      if (!this.alive[j] || members.includes(j)) continue;
      const [lo, hi] = this.modelWindowOf(j);
      if (hi <= start || lo >= end) continue;
      addPeak(this.setting, others, this.current[j], Math.max(lo, start), Math.min(hi, end));
    }
  }

  /** Whether the other peaks under the group moved by more than REFIT_SIGMA·σ (root mean square) since its last fit. */
  private othersChanged(group: PeakGroup): boolean {
    const before = group.othersAtFit;
    if (before === null) return true;
    const { others } = this.model;
    const { weight } = this.setting;
    let sum = 0;
    for (let i = group.regionStart; i < group.regionEnd; i++) {
      const change = others[i] - before[i - group.regionStart];
      sum += change * change * weight[i];
    }
    return sum > REFIT_SIGMA * REFIT_SIGMA * (group.regionEnd - group.regionStart);
  }

  /** Room for the limits of a group of paramCount parameters. */
  private reserveLimits(paramCount: number): void {
    if (this.lower.length >= paramCount) return;
    const size = Math.max(paramCount, 2 * this.lower.length);
    this.lower = new Float64Array(size);
    this.upper = new Float64Array(size);
    this.approachLower = new Uint8Array(size);
    this.areaSigmaGivenLine = new Float64Array(size);
  }

  /** Fit one group with everything else held fixed (dropping peaks that do not stand clear and refitting when pruning is on). */
  private fitGroup(group: PeakGroup, groupIndex: number, onlyIfChanged: boolean): void {
    const { setting, model } = this;
    const perPeak = setting.perPeak;
    let members = group.members.filter((k) => this.alive[k] === 1);
    if (members.length === 0) {
      group.offset = 0;
      group.slope = 0;
      return;
    }
    this.fillOthers(group, members);
    if (onlyIfChanged && !this.othersChanged(group)) return;
    group.othersAtFit = model.others.slice(group.regionStart, group.regionEnd);
    let start = new Float64Array(members.length * perPeak + 2);
    members.forEach((k, j) => start.set(this.current[k], j * perPeak));
    start[members.length * perPeak] = group.offset;
    start[members.length * perPeak + 1] = group.slope;
    for (let round = 0; ; round++) {
      const peakCount = members.length;
      const paramCount = peakCount * perPeak + 2;
      model.setUp(start, peakCount, group.regionStart, group.regionEnd, this.windowFwhm);
      this.reserveLimits(paramCount);
      const positionLow = Array.from({ length: peakCount }, (_, k) => setting.x[model.lo[k]]);
      const positionHigh = Array.from({ length: peakCount }, (_, k) => setting.x[model.hi[k] - 1]);
      setGroupLimits(setting, peakCount, positionLow, positionHigh, this.lower, this.upper, this.approachLower);
      const params = start.slice();
      const solved = this.solver.minimise(model, params, paramCount, {
        lower: this.lower,
        upper: this.upper,
        approachLower: this.approachLower,
        maxIterations: this.maxIterations,
        relativeTolerance: CHI2_TOLERANCE,
        absoluteTolerance: this.convergedChi2Change,
        degreesOfFreedom: Math.max(model.last - model.first - paramCount, 1),
      });
      fitWork.lmSteps += solved.steps;
      const points = model.last - model.first;
      const covariance = groupCovariance(this.solver.normalMatrix, peakCount, perPeak, solved.chi2, points);
      const peaks = describeGroupPeaks(setting, { params, peakCount, covariance, chi2: solved.chi2, points, group: groupIndex }, this.areaSigmaGivenLine);
      const keep =
        this.pruneBelowSigma === undefined || round >= MAX_PRUNING_ROUNDS
          ? null
          : survivingPeaks(setting, {
              peaks,
              covariance,
              lower: this.lower,
              upper: this.upper,
              heightSigmas: this.pruneBelowSigma,
              acceptance: this.acceptance,
              foundAt: Float64Array.from(members, (k) => this.allFoundAt[k]),
              foundFwhm: Float64Array.from(members, (k) => this.allFoundFwhm[k]),
              areaSigmaGivenLine: this.areaSigmaGivenLine,
            });
      const bgBase = peakCount * perPeak;
      if (keep !== null && keep.length === 0) {
        for (const k of members) this.alive[k] = 0;
        group.offset = 0;
        group.slope = 0;
        return;
      }
      if (keep === null || keep.length === peakCount) {
        members.forEach((k, j) => {
          this.current[k].set(params.subarray(j * perPeak, (j + 1) * perPeak));
          this.windowStale[k] = 1;
          this.described[k] = peaks[j];
        });
        group.offset = params[bgBase];
        group.slope = params[bgBase + 1];
        group.middle = model.middle;
        return;
      }
      // Refit the survivors from their fitted values.
      const next = new Float64Array(keep.length * perPeak + 2);
      keep.forEach((k, j) => next.set(params.subarray(k * perPeak, (k + 1) * perPeak), j * perPeak));
      next.set(params.subarray(bgBase, bgBase + 2), keep.length * perPeak);
      for (let j = 0; j < peakCount; j++) if (!keep.includes(j)) this.alive[members[j]] = 0;
      members = keep.map((j) => members[j]);
      start = next;
    }
  }
}
