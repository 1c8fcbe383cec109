/**
 * Growth of a phase's share with exposure time: first-order f(t) = f∞(1 − e^(−kt)) or
 * Johnson–Mehl–Avrami–Kolmogorov f(t) = f∞(1 − e^(−(kt)^n)) (Avrami, J. Chem. Phys. 7, 1103 (1939)),
 * fitted by Levenberg–Marquardt (Marquardt, J. Soc. Ind. Appl. Math. 11, 431 (1963)), with the
 * half-time t½ = (ln 2)^(1/n)/k, and only when the data support it.
 */
import { fDistributionSurvival, invertSmall } from '../numeric/numeric.js';

export type GrowthModel = 'first-order' | 'jmak';

export interface GrowthPoint {
  timeHours: number;
  share: number;
}

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
/** JMAK is preferred over first order only when its extra exponent lowers the residuals significantly (F-test p below this). */
const F_TEST_P = 0.05;
/**
 * Avrami exponents a nucleation-and-growth process can have (about 0.5 to 4; Christian, The Theory of
 * Transformations in Metals and Alloys, 2002); a JMAK fit outside them is a step fitted, not a mechanism.
 */
const AVRAMI_EXPONENT_RANGE: readonly [number, number] = [0.5, 4];

function model(t: number, plateau: number, k: number, n: number): number {
  return t <= 0 ? 0 : plateau * (1 - Math.exp(-Math.pow(k * t, n)));
}

interface LmResult {
  params: Float64Array;
  covariance: Float64Array;
  ssr: number;
}

/** Levenberg–Marquardt on a small problem with a numerical Jacobian; returns null when it does not settle. */
function levenbergMarquardt(residuals: (p: Float64Array) => Float64Array, start: number[], maxIterations = 200): LmResult | null {
  const m = start.length;
  let p = Float64Array.from(start);
  let r = residuals(p);
  const n = r.length;
  let ssr = r.reduce((s, v) => s + v * v, 0);
  let lambda = 1e-3;
  const jac = new Float64Array(n * m);
  const jacobian = (at: Float64Array) => {
    for (let j = 0; j < m; j++) {
      const h = 1e-6 * Math.max(1, Math.abs(at[j]));
      const q = Float64Array.from(at);
      q[j] += h;
      const rq = residuals(q);
      for (let i = 0; i < n; i++) jac[i * m + j] = (rq[i] - r[i]) / h;
    }
  };
  for (let iter = 0; iter < maxIterations; iter++) {
    jacobian(p);
    const jtj = new Float64Array(m * m);
    const jtr = new Float64Array(m);
    for (let i = 0; i < n; i++) {
      for (let a = 0; a < m; a++) {
        jtr[a] += jac[i * m + a] * r[i];
        for (let b = 0; b < m; b++) jtj[a * m + b] += jac[i * m + a] * jac[i * m + b];
      }
    }
    let improved = false;
    while (lambda < 1e12) {
      const damped = Float64Array.from(jtj);
      for (let a = 0; a < m; a++) damped[a * m + a] *= 1 + lambda;
      const inv = invertSmall(damped, m);
      if (!inv) {
        lambda *= 10;
        continue;
      }
      const trial = Float64Array.from(p);
      for (let a = 0; a < m; a++) for (let b = 0; b < m; b++) trial[a] -= inv[a * m + b] * jtr[b];
      const rt = residuals(trial);
      const st = rt.reduce((s, v) => s + v * v, 0);
      if (Number.isFinite(st) && st < ssr) {
        const converged = ssr - st < 1e-12 * Math.max(ssr, 1e-30);
        p = trial;
        r = rt;
        ssr = st;
        lambda = Math.max(lambda / 10, 1e-12);
        improved = true;
        if (converged) iter = maxIterations;
        break;
      }
      lambda *= 10;
    }
    if (!improved) break;
  }
  jacobian(p);
  const jtj = new Float64Array(m * m);
  for (let i = 0; i < n; i++) for (let a = 0; a < m; a++) for (let b = 0; b < m; b++) jtj[a * m + b] += jac[i * m + a] * jac[i * m + b];
  const inv = invertSmall(jtj, m);
  if (!inv) return null;
  const s2 = n > m ? ssr / (n - m) : 0;
  for (let i = 0; i < inv.length; i++) inv[i] *= s2;
  return { params: p, covariance: inv, ssr };
}

/** Fit one model; parameters are (f∞, ln k[, ln n]) so k and n stay positive. */
function fitModel(points: readonly GrowthPoint[], which: GrowthModel, start: { plateau: number; k: number; n: number }): GrowthFit | null {
  const t = points.map((p) => p.timeHours);
  const f = points.map((p) => p.share);
  const residuals = (q: Float64Array) => {
    const out = new Float64Array(t.length);
    const k = Math.exp(q[1]);
    const n = which === 'jmak' ? Math.exp(q[2]) : 1;
    for (let i = 0; i < t.length; i++) out[i] = model(t[i], q[0], k, n) - f[i];
    return out;
  };
  const initial = which === 'jmak' ? [start.plateau, Math.log(start.k), Math.log(start.n)] : [start.plateau, Math.log(start.k)];
  const lm = levenbergMarquardt(residuals, initial);
  if (!lm) return null;
  const m = initial.length;
  const [plateau, lnK] = lm.params;
  const n = which === 'jmak' ? Math.exp(lm.params[2]) : 1;
  const k = Math.exp(lnK);
  const cov = (a: number, b: number) => lm.covariance[a * m + b];
  const lnHalf = Math.log(Math.LN2) / n - lnK;
  const halfTime = Math.exp(lnHalf);
  // ln t½ = ln(ln 2)/n − ln k: gradient with respect to (ln k, ln n).
  const gK = -1;
  const gN = which === 'jmak' ? -Math.log(Math.LN2) / n : 0;
  const varLnHalf = gK * gK * cov(1, 1) + (which === 'jmak' ? 2 * gK * gN * cov(1, 2) + gN * gN * cov(2, 2) : 0);
  const mean = f.reduce((s, v) => s + v, 0) / f.length;
  const total = f.reduce((s, v) => s + (v - mean) ** 2, 0);
  return {
    model: which,
    plateau,
    plateauSigma: Math.sqrt(Math.max(0, cov(0, 0))),
    rateConstantPerHour: k,
    rateConstantSigma: k * Math.sqrt(Math.max(0, cov(1, 1))),
    exponent: n,
    exponentSigma: which === 'jmak' ? n * Math.sqrt(Math.max(0, cov(2, 2))) : null,
    halfTimeHours: halfTime,
    halfTimeSigmaHours: halfTime * Math.sqrt(Math.max(0, varLnHalf)),
    r2: total > 0 ? 1 - lm.ssr / total : 0,
    residualSd: Math.sqrt(lm.ssr / Math.max(1, f.length - m)),
  };
}

/** Fit the growth of a share over exposure time; says when the data do not support a curve. */
export function fitGrowth(points: readonly GrowthPoint[]): GrowthAnalysis {
  const usable = points.filter((p) => Number.isFinite(p.timeHours) && p.timeHours >= 0 && Number.isFinite(p.share)).sort((a, b) => a.timeHours - b.timeHours);
  const times = new Set(usable.map((p) => p.timeHours));
  const none = (statement: string): GrowthAnalysis => ({ supported: false, fit: null, alternative: null, points: usable.length, statement });
  if (times.size < MIN_POINTS['first-order']) return none(`only ${times.size} distinct exposure times: at least ${MIN_POINTS['first-order']} are needed to fit a growth curve`);
  const first = usable[0].share;
  const last = usable[usable.length - 1].share;
  const maxShare = Math.max(...usable.map((p) => p.share));
  if (!(maxShare > 0) || !(last > first)) return none('the share does not grow with exposure time: no growth curve');

  // Start: plateau a little above the largest share, k from the time the share first passes half of it.
  const halfway = usable.find((p) => p.share >= maxShare / 2) ?? usable[usable.length - 1];
  const start = { plateau: maxShare * 1.05, k: Math.LN2 / Math.max(halfway.timeHours, 1e-6), n: 1 };
  const firstOrder = fitModel(usable, 'first-order', start);
  let jmak: GrowthFit | null = null;
  if (times.size >= MIN_POINTS.jmak) {
    jmak = fitModel(usable, 'jmak', { ...start, n: 1 }) ?? (firstOrder ? fitModel(usable, 'jmak', { plateau: firstOrder.plateau, k: firstOrder.rateConstantPerHour, n: 1 }) : null);
  }
  let chosen = firstOrder;
  let alternative = jmak;
  if (jmak && !(jmak.exponent >= AVRAMI_EXPONENT_RANGE[0] && jmak.exponent <= AVRAMI_EXPONENT_RANGE[1])) jmak = null;
  if (firstOrder && jmak) {
    const n = usable.length;
    const ssr1 = firstOrder.residualSd ** 2 * Math.max(1, n - 2);
    const ssr2 = jmak.residualSd ** 2 * Math.max(1, n - 3);
    const d2 = n - 3;
    const fStat = d2 > 0 && ssr2 > 0 ? ((ssr1 - ssr2) / 1) / (ssr2 / d2) : 0;
    if (d2 > 0 && fStat > 0 && fDistributionSurvival(fStat, 1, d2) < F_TEST_P) {
      chosen = jmak;
      alternative = firstOrder;
    }
  } else if (!firstOrder && jmak) {
    chosen = jmak;
    alternative = null;
  }
  if (!chosen) return none('the growth curve did not converge');
  const maxTime = usable[usable.length - 1].timeHours;
  const relative = chosen.halfTimeSigmaHours / chosen.halfTimeHours;
  const reasons: string[] = [];
  if (!(relative < 0.5)) reasons.push(`the half-time is uncertain by ${Number.isFinite(relative) ? Math.round(100 * relative) : '∞'} %`);
  if (chosen.halfTimeHours > 2 * maxTime) reasons.push('the half-time lies far beyond the longest exposure');
  if (chosen.plateau > 1.05 || chosen.plateau <= 0) reasons.push(`the fitted final share ${chosen.plateau.toFixed(2)} is not a possible share`);
  if (chosen.r2 < 0.8) reasons.push(`the curve explains only ${Math.round(100 * chosen.r2)} % of the variation`);
  const label = chosen.model === 'jmak' ? `JMAK (n = ${chosen.exponent.toFixed(2)} ± ${(chosen.exponentSigma ?? 0).toFixed(2)})` : 'first-order';
  if (reasons.length) {
    return { supported: false, fit: chosen, alternative, points: usable.length, statement: `a ${label} curve was fitted but the data do not support it: ${reasons.join('; ')}` };
  }
  return {
    supported: true,
    fit: chosen,
    alternative,
    points: usable.length,
    statement: `${label} growth to a share of ${chosen.plateau.toFixed(2)}, half-time ${chosen.halfTimeHours.toPrecision(3)} ± ${chosen.halfTimeSigmaHours.toPrecision(2)} h (R² = ${chosen.r2.toFixed(3)})`,
  };
}
