/**
 * Growth of a phase's share with exposure time: first-order f(t) = f∞(1 − e^(−kt)) or
 * Johnson–Mehl–Avrami–Kolmogorov f(t) = f∞(1 − e^(−(kt)^n)) (Avrami, J. Chem. Phys. 7, 1103 (1939)),
 * fitted by Levenberg–Marquardt (Marquardt, J. Soc. Ind. Appl. Math. 11, 431 (1963)), with the
 * half-time t½ = (ln 2)^(1/n)/k, and only when the data support it.
 */
import { invertSmall, quadraticForm } from '../numeric/numeric.js';
import { LevenbergMarquardt, type NormalEquationsTarget } from '../numeric/levenberg-marquardt.js';

export type GrowthModel = 'first-order' | 'jmak';

export interface GrowthPoint {
  timeHours: number;
  share: number;
  /** σ of the share (absolute, 0–1); DEFAULT_SHARE_SIGMA is used where none is given. */
  shareSigma?: number | null;
}

export interface GrowthOptions {
  /** σ assumed for shares given without one (default DEFAULT_SHARE_SIGMA). */
  defaultShareSigma?: number;
  /** The share whose crossing time is reported (default 0.05 = 5 %). */
  thresholdShare?: number;
}

/** σ of a share given without one: 0.01 (1 % absolute), our stated default for semi-quantitative XRD shares (common practice, from memory). */
const DEFAULT_SHARE_SIGMA = 0.01;
/** Default share at which the crossing time is reported (5 %). */
const DEFAULT_THRESHOLD_SHARE = 0.05;

export interface GrowthFit {
  model: GrowthModel;
  /** Final share f∞, rate constant k (per hour), Avrami exponent n (1 for first order). */
  plateau: number;
  plateauSigma: number;
  rateConstantPerHour: number;
  rateConstantSigma: number;
  exponent: number;
  exponentSigma: number | null;
  halfTimeHours: number;
  halfTimeSigmaHours: number;
  r2: number;
  residualSd: number;
  /** Induction time t0 in hours (0 when the model has none) and its σ (null when not fitted). */
  inductionHours: number;
  inductionSigmaHours: number | null;
  /** χ²/dof of the weighted fit; the σ above are scaled by √(χ²/dof) only when it is > 1 (sigmaScaled). */
  reducedChiSquare: number;
  sigmaScaled: boolean;
  /** Corrected Akaike information criterion of the fit (Hurvich & Tsai, Biometrika 76, 297 (1989)). */
  aicc: number;
  /** Time at which the share reaches thresholdShare, with its σ; null when the plateau lies below it. */
  thresholdShare: number;
  thresholdTimeHours: number | null;
  thresholdTimeSigmaHours: number | null;
}

export interface GrowthAnalysis {
  /** True when a curve was fitted and its half-time is determined by the data. */
  supported: boolean;
  fit: GrowthFit | null;
  /** The other model, when both were fitted (for the record). */
  alternative: GrowthFit | null;
  points: number;
  statement: string;
}

/** Fewest distinct exposure times for each model (common practice: at least one point more than parameters). */
export const MIN_POINTS: Readonly<Record<GrowthModel, number>> = { 'first-order': 4, jmak: 5 };
/**
 * Avrami exponents a nucleation-and-growth process can have (about 0.5 to 4; Christian, The Theory of
 * Transformations in Metals and Alloys, 2002); a JMAK fit outside them is a step fitted, not a mechanism.
 */
const AVRAMI_EXPONENT_RANGE: readonly [number, number] = [0.5, 4];

/** share(t) = A(1 − e^{−(k(t−t0))^n}) for t > t0, else 0 (first order: n = 1). */
function growthCurve(t: number, plateau: number, k: number, n: number, t0 = 0): number {
  return t <= t0 ? 0 : plateau * (1 - Math.exp(-Math.pow(k * (t - t0), n)));
}

interface LmResult {
  params: Float64Array;
  covariance: Float64Array;
  ssr: number;
}

/**
 * The weighted least-squares fit of a growth model by the one Levenberg–Marquardt (core/numeric), its
 * normal matrix from a forward-difference Jacobian of the residuals; null when the normal matrix at the
 * end cannot be inverted (the parameters are not determined by the points).
 */
function leastSquares(residuals: (p: Float64Array) => Float64Array, start: number[], maxIterations = 200): LmResult | null {
  const m = start.length;
  const target: NormalEquationsTarget = {
    evaluate(at, normal, gradient) {
      const r = residuals(at);
      const n = r.length;
      let ssr = 0;
      for (let i = 0; i < n; i++) ssr += r[i] * r[i];
      if (!Number.isFinite(ssr)) return Infinity;
      normal.fill(0, 0, m * m);
      gradient.fill(0, 0, m);
      const jac = new Float64Array(n * m);
      for (let j = 0; j < m; j++) {
        const h = 1e-6 * Math.max(1, Math.abs(at[j]));
        const q = Float64Array.from(at);
        q[j] += h;
        const rq = residuals(q);
        for (let i = 0; i < n; i++) jac[i * m + j] = (rq[i] - r[i]) / h;
      }
      // The residuals are (model − data)/σ, so the solver's gradient Jᵀ(data − model)/σ² is −Jᵀr.
      for (let i = 0; i < n; i++) {
        for (let a = 0; a < m; a++) {
          gradient[a] -= jac[i * m + a] * r[i];
          for (let b = 0; b < m; b++) normal[a * m + b] += jac[i * m + a] * jac[i * m + b];
        }
      }
      return ssr;
    },
  };
  const params = Float64Array.from(start);
  const solver = new LevenbergMarquardt();
  const { chi2 } = solver.minimise(target, params, m, {
    lower: new Float64Array(m).fill(-Infinity),
    upper: new Float64Array(m).fill(Infinity),
    maxIterations,
    relativeTolerance: 1e-12,
  });
  if (!Number.isFinite(chi2)) return null;
  const inv = invertSmall(Float64Array.from(solver.normalMatrix.subarray(0, m * m)), m);
  if (!inv) return null;
  return { params, covariance: inv, ssr: chi2 };
}

interface Candidate {
  which: GrowthModel;
  induction: boolean;
}

/** Fit one model by weighted least squares; parameters are (A, ln k[, ln n][, t0]) so k and n stay positive. */
function fitModel(points: readonly GrowthPoint[], sigmas: readonly number[], c: Candidate, start: { plateau: number; k: number; n: number; t0: number }, threshold: number): GrowthFit | null {
  const t = points.map((p) => p.timeHours);
  const f = points.map((p) => p.share);
  const jmak = c.which === 'jmak';
  const iN = jmak ? 2 : -1;
  const iT0 = c.induction ? (jmak ? 3 : 2) : -1;
  const unpack = (q: ArrayLike<number>) => ({ A: q[0], k: Math.exp(q[1]), n: iN >= 0 ? Math.exp(q[iN]) : 1, t0: iT0 >= 0 ? q[iT0] : 0 });
  const residuals = (q: Float64Array) => {
    const { A, k, n, t0 } = unpack(q);
    const out = new Float64Array(t.length);
    for (let i = 0; i < t.length; i++) out[i] = (growthCurve(t[i], A, k, n, t0) - f[i]) / sigmas[i];
    return out;
  };
  const initial = [start.plateau, Math.log(start.k)];
  if (jmak) initial.push(Math.log(start.n));
  if (c.induction) initial.push(start.t0);
  const lm = leastSquares(residuals, initial);
  if (!lm) return null;
  const m = initial.length;
  const { A, k, n, t0 } = unpack(lm.params);
  if (c.induction && !(t0 > 0 && t0 < t[t.length - 1])) return null;
  const dof = t.length - m;
  const reducedChiSquare = dof > 0 ? lm.ssr / dof : Infinity;
  const sigmaScaled = reducedChiSquare > 1;
  const cov = Float64Array.from(lm.covariance, (v) => v * (sigmaScaled ? reducedChiSquare : 1));
  // σ of a derived quantity from the covariance, by a central-difference gradient in the fit's parameters.
  const sigmaOf = (g: (q: Float64Array) => number): number => {
    const grad = new Float64Array(m);
    for (let j = 0; j < m; j++) {
      const h = 1e-6 * Math.max(1, Math.abs(lm.params[j]));
      const up = Float64Array.from(lm.params);
      const down = Float64Array.from(lm.params);
      up[j] += h;
      down[j] -= h;
      grad[j] = (g(up) - g(down)) / (2 * h);
    }
    return Math.sqrt(Math.max(0, quadraticForm(grad, cov)));
  };
  // t½ = t0 + (ln 2)^(1/n)/k; time to a share s: t0 + (−ln(1 − s/A))^(1/n)/k (Avrami 1939, inverted).
  const halfTime = (q: ArrayLike<number>) => {
    const u = unpack(q);
    return u.t0 + Math.pow(Math.LN2, 1 / u.n) / u.k;
  };
  const crossing = (q: ArrayLike<number>) => {
    const u = unpack(q);
    return threshold < u.A ? u.t0 + Math.pow(-Math.log(1 - threshold / u.A), 1 / u.n) / u.k : NaN;
  };
  const thresholdTime = crossing(lm.params);
  const mean = f.reduce((s, v) => s + v, 0) / f.length;
  const total = f.reduce((s, v) => s + (v - mean) ** 2, 0);
  let ssrUnweighted = 0;
  for (let i = 0; i < t.length; i++) ssrUnweighted += (growthCurve(t[i], A, k, n, t0) - f[i]) ** 2;
  const pointsCount = t.length;
  return {
    model: c.which,
    plateau: A,
    plateauSigma: Math.sqrt(Math.max(0, cov[0])),
    rateConstantPerHour: k,
    rateConstantSigma: k * Math.sqrt(Math.max(0, cov[m + 1])),
    exponent: n,
    exponentSigma: jmak ? n * Math.sqrt(Math.max(0, cov[iN * m + iN])) : null,
    halfTimeHours: halfTime(lm.params),
    halfTimeSigmaHours: sigmaOf(halfTime),
    r2: total > 0 ? 1 - ssrUnweighted / total : 0,
    residualSd: Math.sqrt(ssrUnweighted / Math.max(1, pointsCount - m)),
    inductionHours: t0,
    inductionSigmaHours: c.induction ? Math.sqrt(Math.max(0, cov[iT0 * m + iT0])) : null,
    reducedChiSquare,
    sigmaScaled,
    aicc: pointsCount - m - 1 > 0 ? lm.ssr + 2 * m + (2 * m * (m + 1)) / (pointsCount - m - 1) : Infinity,
    thresholdShare: threshold,
    thresholdTimeHours: Number.isFinite(thresholdTime) ? thresholdTime : null,
    thresholdTimeSigmaHours: Number.isFinite(thresholdTime) ? sigmaOf(crossing) : null,
  };
}

/** Fit the growth of a share over exposure time; says when the data do not support a curve. */
export function fitGrowth(points: readonly GrowthPoint[], options: GrowthOptions = {}): GrowthAnalysis {
  const usable = points.filter((p) => Number.isFinite(p.timeHours) && p.timeHours >= 0 && Number.isFinite(p.share)).sort((a, b) => a.timeHours - b.timeHours);
  const times = new Set(usable.map((p) => p.timeHours));
  const none = (statement: string): GrowthAnalysis => ({ supported: false, fit: null, alternative: null, points: usable.length, statement });
  if (times.size < MIN_POINTS['first-order']) return none(`only ${times.size} distinct exposure times: at least ${MIN_POINTS['first-order']} are needed to fit a growth curve`);
  const first = usable[0].share;
  const last = usable[usable.length - 1].share;
  const maxShare = Math.max(...usable.map((p) => p.share));
  if (!(maxShare > 0) || !(last > first)) return none('the share does not grow with exposure time: no growth curve');
  const defaultSigma = options.defaultShareSigma ?? DEFAULT_SHARE_SIGMA;
  const threshold = options.thresholdShare ?? DEFAULT_THRESHOLD_SHARE;
  const defaulted = usable.filter((p) => !(typeof p.shareSigma === 'number' && p.shareSigma > 0)).length;
  const sigmas = usable.map((p) => (typeof p.shareSigma === 'number' && p.shareSigma > 0 ? p.shareSigma : defaultSigma));

  // Start: plateau a little above the largest share, k from the time the share first passes half of it, t0 from the last time still near zero.
  const halfway = usable.find((p) => p.share >= maxShare / 2) ?? usable[usable.length - 1];
  const nearZero = usable.filter((p, i) => p.timeHours < halfway.timeHours && p.share < 2 * sigmas[i]);
  const t0Start = nearZero.length ? Math.max(0.5 * nearZero[nearZero.length - 1].timeHours, 0.02 * halfway.timeHours) : 0.02 * Math.max(halfway.timeHours, 1e-3);
  const start = { plateau: maxShare * 1.05, k: Math.LN2 / Math.max(halfway.timeHours - t0Start, 1e-6), n: 1, t0: t0Start };
  const candidates: Candidate[] = [
    { which: 'first-order', induction: false },
    { which: 'first-order', induction: true },
    { which: 'jmak', induction: false },
    { which: 'jmak', induction: true },
  ];
  const fits: GrowthFit[] = [];
  for (const c of candidates) {
    if (c.which === 'jmak' && times.size < MIN_POINTS.jmak) continue;
    const tries = [start, { ...start, n: 2 }, { ...start, t0: 0.5 * start.t0 }];
    let best: GrowthFit | null = null;
    for (const s0 of tries) {
      const fit = fitModel(usable, sigmas, c, c.induction ? s0 : { ...s0, k: Math.LN2 / Math.max(halfway.timeHours, 1e-6) }, threshold);
      if (fit && Number.isFinite(fit.aicc) && (!best || fit.aicc < best.aicc)) best = fit;
    }
    if (best && best.model === 'jmak' && !(best.exponent >= AVRAMI_EXPONENT_RANGE[0] && best.exponent <= AVRAMI_EXPONENT_RANGE[1])) best = null;
    if (best) fits.push(best);
  }
  // Model choice by the smallest AICc (Burnham & Anderson, Model Selection and Multimodel Inference, 2002).
  fits.sort((x, y) => x.aicc - y.aicc);
  const chosen: GrowthFit | null = fits[0] ?? null;
  const alternative: GrowthFit | null = fits.find((f) => chosen && f.model !== chosen.model) ?? fits[1] ?? null;
  if (!chosen) return none('the growth curve did not converge');
  const maxTime = usable[usable.length - 1].timeHours;
  const relative = chosen.halfTimeSigmaHours / chosen.halfTimeHours;
  const reasons: string[] = [];
  if (!(relative < 0.5)) reasons.push(`the half-time is uncertain by ${Number.isFinite(relative) ? Math.round(100 * relative) : '∞'} %`);
  if (chosen.halfTimeHours > 2 * maxTime) reasons.push('the half-time lies far beyond the longest exposure');
  if (chosen.plateau > 1.05 || chosen.plateau <= 0) reasons.push(`the fitted final share ${chosen.plateau.toFixed(2)} is not a possible share`);
  if (chosen.r2 < 0.8) reasons.push(`the curve explains only ${Math.round(100 * chosen.r2)} % of the variation`);
  const label =
    (chosen.model === 'jmak' ? `JMAK (n = ${chosen.exponent.toFixed(2)} ± ${(chosen.exponentSigma ?? 0).toFixed(2)})` : 'first-order') +
    (chosen.inductionSigmaHours !== null ? ` with induction time ${chosen.inductionHours.toPrecision(3)} ± ${chosen.inductionSigmaHours.toPrecision(2)} h` : '');
  const weightNote =
    (defaulted === usable.length ? `shares weighted with an assumed σ of ${defaultSigma} (none given)` : defaulted > 0 ? `${defaulted} shares without σ weighted with an assumed σ of ${defaultSigma}` : 'shares weighted by their σ') +
    `; χ²/dof = ${chosen.reducedChiSquare.toFixed(2)}` +
    (chosen.sigmaScaled ? ', σ scaled by √(χ²/dof)' : ', σ not scaled') +
    '; model chosen by AICc';
  const crossingNote =
    chosen.thresholdTimeHours !== null
      ? `, reaches ${(100 * threshold).toPrecision(2)} % at ${chosen.thresholdTimeHours.toPrecision(3)} ± ${(chosen.thresholdTimeSigmaHours ?? 0).toPrecision(2)} h`
      : `, never reaches ${(100 * threshold).toPrecision(2)} % (plateau below it)`;
  if (reasons.length) {
    return { supported: false, fit: chosen, alternative, points: usable.length, statement: `a ${label} curve was fitted but the data do not support it: ${reasons.join('; ')} (${weightNote})` };
  }
  return {
    supported: true,
    fit: chosen,
    alternative,
    points: usable.length,
    statement: `${label} growth to a share of ${chosen.plateau.toFixed(2)}, half-time ${chosen.halfTimeHours.toPrecision(3)} ± ${chosen.halfTimeSigmaHours.toPrecision(2)} h${crossingNote} (R² = ${chosen.r2.toFixed(3)}; ${weightNote})`,
  };
}
