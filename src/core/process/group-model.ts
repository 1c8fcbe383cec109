/**
 * The model of one group of peaks for the least-squares fit: on the group's region, the given background
 * plus the other peaks (held fixed) plus a straight-line correction plus each of its peaks, a split
 * pseudo-Voigt with its Kα2 partner at the same d; χ² and, from analytic derivatives, the normal matrix
 * JᵀWJ and gradient JᵀW(y − model), filled block by block (each point touches only the peaks whose
 * windows hold it). Also how far a peak's profile is modelled and its full profile added to a curve.
 */
import { DEG_TO_RAD } from '../model/units.js';
import { lowerBound, nearestIndex } from '../model/sorted.js';
import type { NormalEquationsTarget } from '../numeric/levenberg-marquardt.js';
import { fitWork } from './fit-work.js';
import { ASYM, etaOf, fwhmOf, HEIGHT, partnerPosition, peakWidths, POS, W_DETA_DA, W_DETA_DB, W_DFWHM_DA, W_DFWHM_DB, W_ETA, W_FWHM, WIDTH_A, WIDTH_B, type PeakFitSetting } from './peak-parameters.js';
import { FOUR_LN2, GAUSS_CUT_U2, LN2, lorentzianHeightShare, lorentzianHeightShareSlope, splitPseudoVoigt } from './profiles.js';

/** Adaptive model reach: until the Lorentzian tail is below half the noise σ, within these limits (FWHM). */
const MIN_REACH_FWHM = 5;
const MAX_REACH_FWHM = 25;
const TAIL_NOISE_FRACTION = 0.5;

// Per-peak values prepared once per evaluation: peakWidths' six (W_FWHM … W_DETA_DB), then these.
const PREP = 13;
const P_POS2 = 6;
const P_DPOS2 = 7;
const P_MIX = 8; // Lorentzian share of the peak height, from η (which mixes unit-area profiles)
const P_DMIX = 9; // its derivative by η
const P_INV_LOW = 10; // 1 / FWHM of the low-angle half
const P_INV_HIGH = 11; // 1 / FWHM of the high-angle half
const P_INV_FWHM = 12;

/** Points from `reach`·FWHM below the Kα1 line at pos to `reach`·FWHM above its Kα2 partner. */
export function windowOf(setting: PeakFitSetting, pos: number, fwhm: number, reach: number): [number, number] {
  return [lowerBound(setting.x, pos - reach * fwhm), lowerBound(setting.x, partnerPosition(setting, pos) + reach * fwhm)];
}

/**
 * How many FWHM a peak is modelled either side: the given windowFwhm, or far enough that a Lorentzian
 * tail of its height, H/(1 + 4K²), has dropped below half the noise σ there (5 to 25 FWHM).
 */
export function reachOf(setting: PeakFitSetting, windowFwhm: number | undefined, p: Float64Array, base: number): number {
  if (windowFwhm !== undefined) return windowFwhm;
  const fwhm = fwhmOf(setting, p, base);
  const edge = nearestIndex(setting.x, p[base + POS] - MIN_REACH_FWHM * fwhm);
  const noise = 1 / Math.sqrt(setting.weight[edge]);
  const reach = 0.5 * Math.sqrt(Math.max(p[base + HEIGHT] / (TAIL_NOISE_FRACTION * noise) - 1, 0));
  return Math.min(Math.max(reach, MIN_REACH_FWHM), MAX_REACH_FWHM);
}

/** Add one peak (Kα1 and its Kα2 partner) with parameters p to target[from … to). */
export function addPeak(setting: PeakFitSetting, target: Float64Array, p: Float64Array, from: number, to: number): void {
  const { x } = setting;
  const fwhm = fwhmOf(setting, p, 0);
  const mix = lorentzianHeightShare(etaOf(setting, p, 0));
  const asym = setting.perPeak === 5 ? p[ASYM] : 0;
  const height = p[HEIGHT];
  const pos = p[POS];
  const pos2 = partnerPosition(setting, pos);
  const h2 = setting.ratio * height;
  for (let i = from; i < to; i++) {
    let v = height * splitPseudoVoigt(x[i] - pos, fwhm, mix, asym);
    if (h2 > 0) v += h2 * splitPseudoVoigt(x[i] - pos2, fwhm, mix, asym);
    target[i] += v;
  }
}

// lineAt's outputs besides the shape.
const L_BEND = 0; // −8u·(mix·L² + (1 − mix)·ln2·G): d(shape)/du
const L_LOR_MINUS_GAU = 1;
const L_INV = 2; // 1/FWHM of the half dx lies in
const L_U = 3;
const L_SIDE = 4; // +1 on the low-angle half, −1 on the high-angle half
const LINE_VALUES = 5;

/**
 * One line of a unit-height split pseudo-Voigt at dx from its centre (profiles.ts's splitPseudoVoigt):
 * returns the shape, and into out its derivative by u = dx/FWHM(half) and the parts the chain rule needs.
 */
function lineAt(dx: number, invLow: number, invHigh: number, mix: number, out: Float64Array): number {
  const low = dx < 0;
  const inv = low ? invLow : invHigh;
  const u = dx * inv;
  const u2 = u * u;
  const lor = 1 / (1 + 4 * u2);
  const gau = u2 > GAUSS_CUT_U2 ? 0 : Math.exp(-FOUR_LN2 * u2);
  const gaussShare = 1 - mix;
  out[L_BEND] = -8 * u * (mix * lor * lor + gaussShare * LN2 * gau);
  out[L_LOR_MINUS_GAU] = lor - gau;
  out[L_INV] = inv;
  out[L_U] = u;
  out[L_SIDE] = low ? 1 : -1;
  return mix * lor + gaussShare * gau;
}

// evaluate's sums over all points: χ², the background line's normal-matrix cells and gradient.
const S_CHI2 = 0;
const S_OFF_OFF = 1;
const S_SLOPE_OFF = 2;
const S_SLOPE_SLOPE = 3;
const S_G_OFF = 4;
const S_G_SLOPE = 5;
const SUM_VALUES = 6;

/** One group's model in a workspace sized for the largest group so far (nothing allocated per point). */
export class GroupModel implements NormalEquationsTarget {
  peakCount = 0;
  paramCount = 0;
  /** Points [first, last) the group is fitted on. */
  first = 0;
  last = 0;
  /** The background line's offset is its value at this 2θ. */
  middle = 0;
  /** Each peak's model window [lo[k], hi[k]) within the region. */
  lo = new Int32Array(0);
  hi = new Int32Array(0);
  /** The peaks outside the group, summed over its region (held fixed in its fit): filled by the caller. */
  readonly others: Float64Array;
  private prep = new Float64Array(0);
  private activeBase = new Int32Array(0);
  private jac = new Float64Array(0);
  private activePeak = new Int32Array(0);
  private readonly line = new Float64Array(LINE_VALUES);
  /** χ² and the background line's own cells, summed over the runs (S_…). */
  private readonly sums = new Float64Array(SUM_VALUES);
  /** Edges of the runs of points with one fixed set of peaks (see evaluate). */
  private edges = new Int32Array(0);
  private readonly doublet: boolean;

  constructor(private readonly setting: PeakFitSetting) {
    this.others = new Float64Array(setting.x.length);
    this.doublet = setting.lambda2 !== null;
  }

  /** Make ready for `peakCount` peaks at `params` on points [regionStart, regionEnd), each peak on its window within. */
  setUp(params: Float64Array, peakCount: number, regionStart: number, regionEnd: number, windowFwhm: number | undefined): void {
    const setting = this.setting;
    const perPeak = setting.perPeak;
    this.peakCount = peakCount;
    this.paramCount = peakCount * perPeak + 2;
    if (this.activeBase.length < this.paramCount) {
      const size = Math.max(this.paramCount, 2 * this.activeBase.length);
      this.activeBase = new Int32Array(size);
      this.jac = new Float64Array(size);
    }
    if (this.lo.length < peakCount) {
      const size = Math.max(peakCount, 2 * this.lo.length);
      this.lo = new Int32Array(size);
      this.hi = new Int32Array(size);
      this.prep = new Float64Array(size * PREP);
      this.activePeak = new Int32Array(size);
      this.edges = new Int32Array(2 * size + 2);
    }
    for (let k = 0; k < peakCount; k++) {
      const base = k * perPeak;
      const [lo, hi] = windowOf(setting, params[base + POS], fwhmOf(setting, params, base), reachOf(setting, windowFwhm, params, base));
      this.lo[k] = Math.max(lo, regionStart);
      this.hi[k] = Math.max(Math.min(hi, regionEnd), this.lo[k] + 1);
    }
    this.first = regionStart;
    this.last = regionEnd;
    this.middle = 0.5 * (setting.x[regionStart] + setting.x[Math.max(regionStart, regionEnd - 1)]);
  }

  /** Width, mixing and Kα2 position of every peak, with their derivatives, for the given parameters. */
  private prepare(params: Float64Array): void {
    const { perPeak, profile, lambda1, lambda2 } = this.setting;
    const prep = this.prep;
    for (let k = 0; k < this.peakCount; k++) {
      const base = k * perPeak;
      const out = k * PREP;
      peakWidths(profile, params, base, prep, out);
      const eta = prep[out + W_ETA];
      prep[out + P_MIX] = lorentzianHeightShare(eta);
      prep[out + P_DMIX] = lorentzianHeightShareSlope(eta);
      const fwhm = prep[out + W_FWHM];
      const asym = perPeak === 5 ? params[base + ASYM] : 0;
      prep[out + P_INV_LOW] = 1 / (fwhm * (1 + asym));
      prep[out + P_INV_HIGH] = 1 / (fwhm * (1 - asym));
      prep[out + P_INV_FWHM] = 1 / fwhm;
      const pos = params[base + POS];
      if (lambda2 !== null) {
        // Same d at λ2: sin(θ2) = (λ2/λ1)·sin(θ1); dθ2/dθ1 = (λ2/λ1)·cos θ1 / cos θ2.
        const half1 = (pos * DEG_TO_RAD) / 2;
        const s = Math.min((lambda2 / lambda1) * Math.sin(half1), 1 - 1e-12);
        const half2 = Math.asin(s);
        prep[out + P_POS2] = (2 * half2) / DEG_TO_RAD;
        prep[out + P_DPOS2] = ((lambda2 / lambda1) * Math.cos(half1)) / Math.cos(half2);
      }
    }
  }

  /**
   * χ² of the group at `params`, filling `normal` with JᵀWJ and `gradient` with JᵀW(y − model); stops early,
   * returning a partial sum ≥ stopAt (normal and gradient then unfinished), once χ² is known to reach stopAt.
   * The points are taken in runs between window edges, each with one fixed set of peaks: a run under no peak
   * or (four parameters each) under one peak keeps its sums in locals; every cell still adds its terms point
   * by point in the same order, so the result is the same to the bit as a point-by-point accumulation.
   */
  evaluate(params: Float64Array, normal: Float64Array, gradient: Float64Array, stopAt = Number.POSITIVE_INFINITY): number {
    this.prepare(params);
    const { perPeak } = this.setting;
    const { lo, hi, activePeak, sums } = this;
    const paramCount = this.paramCount;
    const peakCount = this.peakCount;
    normal.fill(0, 0, paramCount * paramCount);
    gradient.fill(0, 0, paramCount);
    sums.fill(0);
    fitWork.evaluations++;
    for (let k = 0; k < peakCount; k++) fitWork.profilePoints += hi[k] - lo[k];
    const edgeCount = this.runEdges();
    const edges = this.edges;
    // Each kind of run in a function of its own: each is compiled once, on its own feedback (one function
    // holding all three was compiled mid-loop and dropped at the next kind of run, several times a search).
    for (let run = 0; run + 1 < edgeCount; run++) {
      const from = edges[run];
      const to = edges[run + 1];
      let active = 0;
      for (let k = 0; k < peakCount; k++) if (lo[k] <= from && from < hi[k]) activePeak[active++] = k;
      if (active === 0) this.runWithoutPeaks(params, from, to, stopAt);
      else if (active === 1 && perPeak === 4) this.runOnePeak(params, normal, gradient, from, to, stopAt);
      else this.runPeaks(params, normal, gradient, active, from, to, stopAt);
      if (sums[S_CHI2] >= stopAt) return sums[S_CHI2];
    }
    const bgBase = peakCount * perPeak;
    const bgRow = bgBase * paramCount;
    const slopeRow = bgRow + paramCount;
    normal[bgRow + bgBase] = sums[S_OFF_OFF];
    normal[slopeRow + bgBase] = sums[S_SLOPE_OFF];
    normal[slopeRow + bgBase + 1] = sums[S_SLOPE_SLOPE];
    gradient[bgBase] = sums[S_G_OFF];
    gradient[bgBase + 1] = sums[S_G_SLOPE];
    for (let r = 0; r < paramCount; r++) for (let c = r + 1; c < paramCount; c++) normal[r * paramCount + c] = normal[c * paramCount + r];
    return sums[S_CHI2];
  }

  /** Points [from, to) under no peak of the group: χ² and the background line's cells into sums. */
  private runWithoutPeaks(params: Float64Array, from: number, to: number, stopAt: number): void {
    const { x, y, weight, background } = this.setting;
    const { others, sums } = this;
    const middle = this.middle;
    const bgBase = this.peakCount * this.setting.perPeak;
    const offset = params[bgBase];
    const slope = params[bgBase + 1];
    let chi2 = sums[S_CHI2];
    let nOffOff = sums[S_OFF_OFF];
    let nSlopeOff = sums[S_SLOPE_OFF];
    let nSlopeSlope = sums[S_SLOPE_SLOPE];
    let gOff = sums[S_G_OFF];
    let gSlope = sums[S_G_SLOPE];
    for (let i = from; i < to; i++) {
      const t = x[i] - middle;
      const residual = y[i] - (background[i] + others[i] + offset + slope * t);
      const w = weight[i];
      chi2 += w * residual * residual;
      nOffOff += w;
      nSlopeOff += w * t;
      nSlopeSlope += w * t * t;
      gOff += w * residual;
      gSlope += w * t * residual;
      if (chi2 >= stopAt) break;
    }
    sums[S_CHI2] = chi2;
    sums[S_OFF_OFF] = nOffOff;
    sums[S_SLOPE_OFF] = nSlopeOff;
    sums[S_SLOPE_SLOPE] = nSlopeSlope;
    sums[S_G_OFF] = gOff;
    sums[S_G_SLOPE] = gSlope;
  }

  /** Points [from, to) under one peak of four parameters: its 4×4 block, its background-row cells and its gradient in locals. */
  private runOnePeak(params: Float64Array, normal: Float64Array, gradient: Float64Array, from: number, to: number, stopAt: number): void {
    const { x, y, weight, background } = this.setting;
    const { others, activePeak, jac, sums } = this;
    const paramCount = this.paramCount;
    const middle = this.middle;
    const bgBase = this.peakCount * 4;
    const offset = params[bgBase];
    const slope = params[bgBase + 1];
    const bgRow = bgBase * paramCount;
    const slopeRow = bgRow + paramCount;
    let chi2 = sums[S_CHI2];
    let nOffOff = sums[S_OFF_OFF];
    let nSlopeOff = sums[S_SLOPE_OFF];
    let nSlopeSlope = sums[S_SLOPE_SLOPE];
    let gOff = sums[S_G_OFF];
    let gSlope = sums[S_G_SLOPE];
    const k = activePeak[0];
    const b = k * 4;
    const r0 = b * paramCount + b;
    const r1 = r0 + paramCount;
    const r2 = r1 + paramCount;
    const r3 = r2 + paramCount;
    let n00 = normal[r0];
    let n10 = normal[r1];
    let n11 = normal[r1 + 1];
    let n20 = normal[r2];
    let n21 = normal[r2 + 1];
    let n22 = normal[r2 + 2];
    let n30 = normal[r3];
    let n31 = normal[r3 + 1];
    let n32 = normal[r3 + 2];
    let n33 = normal[r3 + 3];
    let o0 = normal[bgRow + b];
    let o1 = normal[bgRow + b + 1];
    let o2 = normal[bgRow + b + 2];
    let o3 = normal[bgRow + b + 3];
    let s0 = normal[slopeRow + b];
    let s1 = normal[slopeRow + b + 1];
    let s2 = normal[slopeRow + b + 2];
    let s3 = normal[slopeRow + b + 3];
    let g0 = gradient[b];
    let g1 = gradient[b + 1];
    let g2 = gradient[b + 2];
    let g3 = gradient[b + 3];
    for (let i = from; i < to; i++) {
      const xi = x[i];
      const t = xi - middle;
      const model = this.peakAt(xi, k, params, background[i] + others[i] + offset + slope * t, 0);
      const j0 = jac[0];
      const j1 = jac[1];
      const j2 = jac[2];
      const j3 = jac[3];
      const residual = y[i] - model;
      const w = weight[i];
      chi2 += w * residual * residual;
      const w0 = w * j0;
      g0 += w0 * residual;
      n00 += w0 * j0;
      o0 += w0;
      s0 += w0 * t;
      const w1 = w * j1;
      g1 += w1 * residual;
      n10 += w1 * j0;
      n11 += w1 * j1;
      o1 += w1;
      s1 += w1 * t;
      const w2 = w * j2;
      g2 += w2 * residual;
      n20 += w2 * j0;
      n21 += w2 * j1;
      n22 += w2 * j2;
      o2 += w2;
      s2 += w2 * t;
      const w3 = w * j3;
      g3 += w3 * residual;
      n30 += w3 * j0;
      n31 += w3 * j1;
      n32 += w3 * j2;
      n33 += w3 * j3;
      o3 += w3;
      s3 += w3 * t;
      nOffOff += w;
      nSlopeOff += w * t;
      nSlopeSlope += w * t * t;
      gOff += w * residual;
      gSlope += w * t * residual;
      if (chi2 >= stopAt) break;
    }
    normal[r0] = n00;
    normal[r1] = n10;
    normal[r1 + 1] = n11;
    normal[r2] = n20;
    normal[r2 + 1] = n21;
    normal[r2 + 2] = n22;
    normal[r3] = n30;
    normal[r3 + 1] = n31;
    normal[r3 + 2] = n32;
    normal[r3 + 3] = n33;
    normal[bgRow + b] = o0;
    normal[bgRow + b + 1] = o1;
    normal[bgRow + b + 2] = o2;
    normal[bgRow + b + 3] = o3;
    normal[slopeRow + b] = s0;
    normal[slopeRow + b + 1] = s1;
    normal[slopeRow + b + 2] = s2;
    normal[slopeRow + b + 3] = s3;
    gradient[b] = g0;
    gradient[b + 1] = g1;
    gradient[b + 2] = g2;
    gradient[b + 3] = g3;
    sums[S_CHI2] = chi2;
    sums[S_OFF_OFF] = nOffOff;
    sums[S_SLOPE_OFF] = nSlopeOff;
    sums[S_SLOPE_SLOPE] = nSlopeSlope;
    sums[S_G_OFF] = gOff;
    sums[S_G_SLOPE] = gSlope;
  }

  /** Points [from, to) under `active` peaks (activePeak), or under one with an asymmetry: the lower triangle point by point. */
  private runPeaks(params: Float64Array, normal: Float64Array, gradient: Float64Array, active: number, from: number, to: number, stopAt: number): void {
    const { x, y, weight, background, perPeak } = this.setting;
    const { others, activeBase, activePeak, jac, sums } = this;
    const paramCount = this.paramCount;
    const middle = this.middle;
    const bgBase = this.peakCount * perPeak;
    const offset = params[bgBase];
    const slope = params[bgBase + 1];
    const bgRow = bgBase * paramCount;
    const slopeRow = bgRow + paramCount;
    let chi2 = sums[S_CHI2];
    let nOffOff = sums[S_OFF_OFF];
    let nSlopeOff = sums[S_SLOPE_OFF];
    let nSlopeSlope = sums[S_SLOPE_SLOPE];
    let gOff = sums[S_G_OFF];
    let gSlope = sums[S_G_SLOPE];
    for (let a = 0; a < active; a++) activeBase[a] = activePeak[a] * perPeak;
    for (let i = from; i < to; i++) {
      const xi = x[i];
      const t = xi - middle;
      let model = background[i] + others[i] + offset + slope * t;
      for (let a = 0; a < active; a++) model = this.peakAt(xi, activePeak[a], params, model, a * perPeak);
      const residual = y[i] - model;
      const w = weight[i];
      chi2 += w * residual * residual;
      // Lower triangle (row ≥ column) block by block: peaks in increasing order.
      if (perPeak === 4) {
        this.addPoint4(normal, gradient, active, w, residual, t, bgRow, slopeRow);
      } else for (let a = 0; a < active; a++) {
        const ja = a * perPeak;
        const baseA = activeBase[a];
        for (let r = 0; r < perPeak; r++) {
          const wr = w * jac[ja + r];
          const row = (baseA + r) * paramCount;
          gradient[baseA + r] += wr * residual;
          for (let c = 0; c < a; c++) {
            const jb = c * perPeak;
            const cell = row + activeBase[c];
            normal[cell] += wr * jac[jb];
            normal[cell + 1] += wr * jac[jb + 1];
            normal[cell + 2] += wr * jac[jb + 2];
            normal[cell + 3] += wr * jac[jb + 3];
            if (perPeak === 5) normal[cell + 4] += wr * jac[jb + 4];
          }
          for (let c = 0; c <= r; c++) normal[row + baseA + c] += wr * jac[ja + c];
          normal[bgRow + baseA + r] += wr;
          normal[slopeRow + baseA + r] += wr * t;
        }
      }
      nOffOff += w;
      nSlopeOff += w * t;
      nSlopeSlope += w * t * t;
      gOff += w * residual;
      gSlope += w * t * residual;
      if (chi2 >= stopAt) break;
    }
    sums[S_CHI2] = chi2;
    sums[S_OFF_OFF] = nOffOff;
    sums[S_SLOPE_OFF] = nSlopeOff;
    sums[S_SLOPE_SLOPE] = nSlopeSlope;
    sums[S_G_OFF] = gOff;
    sums[S_G_SLOPE] = gSlope;
  }

  /**
   * One point's terms of the lower triangle (row ≥ column) for `active` peaks of four parameters each, their
   * derivatives in jac (in activeBase's order): each peak's row block against the peaks before it and itself,
   * its background-line cells and its gradient.
   */
  private addPoint4(normal: Float64Array, gradient: Float64Array, active: number, w: number, residual: number, t: number, bgRow: number, slopeRow: number): void {
    const { jac, activeBase, paramCount } = this;
    for (let a = 0; a < active; a++) {
      const ja = a * 4;
      const baseA = activeBase[a];
      const a0 = jac[ja];
      const a1 = jac[ja + 1];
      const a2 = jac[ja + 2];
      const a3 = jac[ja + 3];
      const w0 = w * a0;
      const w1 = w * a1;
      const w2 = w * a2;
      const w3 = w * a3;
      const row0 = baseA * paramCount;
      const row1 = row0 + paramCount;
      const row2 = row1 + paramCount;
      const row3 = row2 + paramCount;
      for (let c = 0; c < a; c++) {
        const jb = c * 4;
        const col = activeBase[c];
        const b0 = jac[jb];
        const b1 = jac[jb + 1];
        const b2 = jac[jb + 2];
        const b3 = jac[jb + 3];
        normal[row0 + col] += w0 * b0;
        normal[row0 + col + 1] += w0 * b1;
        normal[row0 + col + 2] += w0 * b2;
        normal[row0 + col + 3] += w0 * b3;
        normal[row1 + col] += w1 * b0;
        normal[row1 + col + 1] += w1 * b1;
        normal[row1 + col + 2] += w1 * b2;
        normal[row1 + col + 3] += w1 * b3;
        normal[row2 + col] += w2 * b0;
        normal[row2 + col + 1] += w2 * b1;
        normal[row2 + col + 2] += w2 * b2;
        normal[row2 + col + 3] += w2 * b3;
        normal[row3 + col] += w3 * b0;
        normal[row3 + col + 1] += w3 * b1;
        normal[row3 + col + 2] += w3 * b2;
        normal[row3 + col + 3] += w3 * b3;
      }
      normal[row0 + baseA] += w0 * a0;
      normal[row1 + baseA] += w1 * a0;
      normal[row1 + baseA + 1] += w1 * a1;
      normal[row2 + baseA] += w2 * a0;
      normal[row2 + baseA + 1] += w2 * a1;
      normal[row2 + baseA + 2] += w2 * a2;
      normal[row3 + baseA] += w3 * a0;
      normal[row3 + baseA + 1] += w3 * a1;
      normal[row3 + baseA + 2] += w3 * a2;
      normal[row3 + baseA + 3] += w3 * a3;
      normal[bgRow + baseA] += w0;
      normal[bgRow + baseA + 1] += w1;
      normal[bgRow + baseA + 2] += w2;
      normal[bgRow + baseA + 3] += w3;
      normal[slopeRow + baseA] += w0 * t;
      normal[slopeRow + baseA + 1] += w1 * t;
      normal[slopeRow + baseA + 2] += w2 * t;
      normal[slopeRow + baseA + 3] += w3 * t;
      gradient[baseA] += w0 * residual;
      gradient[baseA + 1] += w1 * residual;
      gradient[baseA + 2] += w2 * residual;
      gradient[baseA + 3] += w3 * residual;
    }
  }

  /** The sorted distinct edges of the runs: first, last and every window's ends, into `edges`; returns their count. */
  private runEdges(): number {
    const { edges, lo, hi } = this;
    let count = 0;
    const insert = (at: number): void => {
      let j = count;
      while (j > 0 && edges[j - 1] > at) j--;
      if (j > 0 && edges[j - 1] === at) return;
      edges.copyWithin(j + 1, j, count);
      edges[j] = at;
      count++;
    };
    insert(this.first);
    insert(this.last);
    for (let k = 0; k < this.peakCount; k++) {
      insert(lo[k]);
      insert(hi[k]);
    }
    return count;
  }

  /**
   * `model` plus peak k (Kα1 and Kα2 partner) at xi, its derivatives by the peak's parameters into
   * jac[at …]: profiles.ts's splitPseudoVoigt and its derivatives by u (lineAt), by the chain rule to each parameter.
   */
  private peakAt(xi: number, k: number, params: Float64Array, model: number, at: number): number {
    const { perPeak, ratio } = this.setting;
    const { prep, jac, line } = this;
    const base = k * perPeak;
    const pr = k * PREP;
    const height = params[base + HEIGHT];
    const mix = prep[pr + P_MIX];
    const invLow = prep[pr + P_INV_LOW];
    const invHigh = prep[pr + P_INV_HIGH];
    let shape = lineAt(xi - params[base + POS], invLow, invHigh, mix, line);
    model += height * shape;
    let slopeTerm = -height * line[L_BEND];
    let dPos = slopeTerm * line[L_INV];
    let dWidth = slopeTerm * line[L_U];
    let dAsym = perPeak === 5 ? dWidth * line[L_SIDE] * line[L_INV] : 0;
    let dEta = height * line[L_LOR_MINUS_GAU];
    let dHeight = shape;
    if (this.doublet) {
      const h = ratio * height;
      shape = lineAt(xi - prep[pr + P_POS2], invLow, invHigh, mix, line);
      model += h * shape;
      slopeTerm = -h * line[L_BEND];
      dPos += slopeTerm * line[L_INV] * prep[pr + P_DPOS2];
      dWidth += slopeTerm * line[L_U];
      if (perPeak === 5) dAsym += slopeTerm * line[L_U] * line[L_SIDE] * line[L_INV];
      dEta += h * line[L_LOR_MINUS_GAU];
      dHeight += ratio * shape;
    }
    dWidth *= prep[pr + P_INV_FWHM];
    dEta *= prep[pr + P_DMIX];
    jac[at + POS] = dPos;
    jac[at + HEIGHT] = dHeight;
    jac[at + WIDTH_A] = dWidth * prep[pr + W_DFWHM_DA] + dEta * prep[pr + W_DETA_DA];
    jac[at + WIDTH_B] = dWidth * prep[pr + W_DFWHM_DB] + dEta * prep[pr + W_DETA_DB];
    if (perPeak === 5) jac[at + ASYM] = dAsym * prep[pr + W_FWHM];
    return model;
  }
}
