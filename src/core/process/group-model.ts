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

  constructor(private readonly setting: PeakFitSetting) {
    this.others = new Float64Array(setting.x.length);
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

  /** χ² of the group at `params`, filling `normal` with JᵀWJ and `gradient` with JᵀW(y − model). */
  evaluate(params: Float64Array, normal: Float64Array, gradient: Float64Array): number {
    // An imported constant is read through its module binding at every use (measured: 5 % slower here), so
    // the hot loop reads local copies.
    const [posAt, heightAt, widthA, widthB, asymAt] = [POS, HEIGHT, WIDTH_A, WIDTH_B, ASYM];
    const [fwhmAt, dFwhmDA, dFwhmDB, dEtaDA, dEtaDB] = [W_FWHM, W_DFWHM_DA, W_DFWHM_DB, W_DETA_DA, W_DETA_DB];
    const [ln2, fourLn2, gaussCut] = [LN2, FOUR_LN2, GAUSS_CUT_U2];
    this.prepare(params);
    const { x, y, weight, background, perPeak, ratio } = this.setting;
    const { others, prep, lo, hi, activeBase, jac } = this;
    const paramCount = this.paramCount;
    const asymmetric = perPeak === 5;
    const doublet = this.setting.lambda2 !== null;
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
        const height = params[base + heightAt];
        const mix = prep[pr + P_MIX];
        const invLow = prep[pr + P_INV_LOW];
        const invHigh = prep[pr + P_INV_HIGH];
        const gaussShare = 1 - mix;
        // Kα1 component, then its Kα2 partner: shape, and d(shape)/du by the chain rule to each parameter
        // (profiles.ts's splitPseudoVoigt and its derivatives written out: this loop is the fit's hot spot, and a
        // kernel call per point, not inlined here, measured 11 % slower).
        let dx = xi - params[base + posAt];
        let inv = dx < 0 ? invLow : invHigh;
        let u = dx * inv;
        let u2 = u * u;
        let lor = 1 / (1 + 4 * u2);
        let gau = u2 > gaussCut ? 0 : Math.exp(-fourLn2 * u2);
        let shape = mix * lor + gaussShare * gau;
        let h = height;
        model += h * shape;
        let slopeTerm = -h * (-8 * u * (mix * lor * lor + gaussShare * ln2 * gau));
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
          gau = u2 > gaussCut ? 0 : Math.exp(-fourLn2 * u2);
          shape = mix * lor + gaussShare * gau;
          model += h * shape;
          slopeTerm = -h * (-8 * u * (mix * lor * lor + gaussShare * ln2 * gau));
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
        jac[j + posAt] = dPos;
        jac[j + heightAt] = dHeight;
        jac[j + widthA] = dWidth * prep[pr + dFwhmDA] + dEta * prep[pr + dEtaDA];
        jac[j + widthB] = dWidth * prep[pr + dFwhmDB] + dEta * prep[pr + dEtaDB];
        if (asymmetric) jac[j + asymAt] = dAsym * prep[pr + fwhmAt];
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
}
