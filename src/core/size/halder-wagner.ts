/**
 * Halder–Wagner size–strain plot: with β* = β·cosθ/λ and d* = 2·sinθ/λ of each reflection's sample
 * integral breadth, (β* / d*)² = (1/D)·(β* / d*²) + (2ε)², from the approximation β*² ≈ β*·β*_L + β*_G² for a
 * Voigt (Halder & Wagner, Acta Cryst. 20, 312 (1966), from memory). Slope and intercept are fitted by
 * weighted least squares with effective variances, since x and y both carry the breadth's error
 * (Orear, Am. J. Phys. 50, 912 (1982)). The plot's approximation is good to a few % in β but biases the
 * strain (its intercept) by up to 20 % where size dominates, so where a strain is detected the two
 * parameters are then refined with the exact Voigt integral breadth β = β_G/erfcx(β_L/(√π·β_G)) in its
 * place (same model: Lorentzian size, Gaussian strain). D and ε come out in the integral-breadth convention (K = 1) and
 * are restated in the result's convention: for the FWHM, D·K/φ_L and ε·φ_G, with φ = FWHM/β of a
 * pure Lorentzian and Gaussian.
 */
import { DEG_TO_RAD } from '../model/units.js';
import { erfcx, invertSmall, weightedLinearFit } from '../numeric/numeric.js';
import {
  describeConvention,
  sizeStrainRefusal,
  STRAIN_SIGNIFICANT_SIGMAS,
  strainStatementOf,
  twoThetaSpan,
  type SizeStrainConvention,
  type SizeStrainOutcome,
  type SizeStrainPoint,
} from './size-strain-points.js';
import { PHI_GAUSSIAN, PHI_LORENTZIAN } from './voigt.js';

export interface HalderWagnerPlotPoint {
  twoThetaDeg: number;
  /** x = β* / d*² (Å), y = (β* / d*)² (dimensionless), and σ of y's effective residual. */
  x: number;
  y: number;
  sigmaY: number;
}

/** `limit` is "instrument" when the slope is not above zero by 2σ (sizeNm is then the lower bound). */
export interface SizeStrainResult extends SizeStrainOutcome {
  method: 'halder-wagner';
  reflections: number;
  /** True when size and strain were refined with the exact Voigt breadth after the plot (a strain was detected). */
  exactVoigt: boolean;
  /** The fitted line y = slope·x + intercept (slope 1/D in Å⁻¹, intercept (2ε)², integral-breadth convention). */
  slope: number;
  slopeSigma: number;
  intercept: number;
  interceptSigma: number;
  plot: HalderWagnerPlotPoint[];
}

/** Effective-variance passes (the weights depend on the slope; three to five settle it). */
const PASSES = 5;

export function halderWagner(points: readonly SizeStrainPoint[], convention: SizeStrainConvention): SizeStrainResult | { reason: string } {
  const refusal = sizeStrainRefusal(points);
  if (refusal) return { reason: refusal };
  const lambda = convention.wavelengthAngstrom;
  const n = points.length;
  const x = new Float64Array(n);
  const y = new Float64Array(n);
  const dRdBeta = new Float64Array(n);
  const sigmaBeta = new Float64Array(n);
  const dStar2 = new Float64Array(n);
  const betaStar = new Float64Array(n);
  points.forEach((p, i) => {
    const theta = (p.twoThetaDeg / 2) * DEG_TO_RAD;
    const b = (p.integralBreadthDeg * DEG_TO_RAD * Math.cos(theta)) / lambda;
    const ds = (2 * Math.sin(theta)) / lambda;
    betaStar[i] = b;
    dStar2[i] = ds * ds;
    sigmaBeta[i] = (Math.max(p.integralBreadthSigmaDeg, 1e-7) * DEG_TO_RAD * Math.cos(theta)) / lambda;
    x[i] = b / dStar2[i];
    y[i] = (b * b) / dStar2[i];
  });
  const design = new Float64Array(2 * n);
  for (let i = 0; i < n; i++) {
    design[2 * i] = x[i];
    design[2 * i + 1] = 1;
  }
  const weights = new Float64Array(n).fill(1);
  let fit = weightedLinearFit(design, y, weights, 2);
  for (let pass = 0; pass < PASSES && fit; pass++) {
    const slope = fit.coefficients[0];
    for (let i = 0; i < n; i++) {
      // r = y − slope·x − c, dr/dβ* = (2β* − slope)/d*².
      dRdBeta[i] = (2 * betaStar[i] - slope) / dStar2[i];
      weights[i] = 1 / Math.max((dRdBeta[i] * sigmaBeta[i]) ** 2, 1e-300);
    }
    fit = weightedLinearFit(design, y, weights, 2);
  }
  if (!fit) return { reason: 'the Halder–Wagner points are degenerate (all at one x)' };
  const scale = fit.dof > 0 ? Math.max(1, fit.chi2 / fit.dof) : 1;
  const slope = fit.coefficients[0];
  const intercept = fit.coefficients[1];
  const slopeSigma = Math.sqrt(fit.covariance[0] * scale);
  const interceptSigma = Math.sqrt(fit.covariance[3] * scale);

  const sizeFactor = convention.breadth === 'fwhm' ? convention.k / PHI_LORENTZIAN : convention.k;
  const strainFactor = convention.breadth === 'fwhm' ? PHI_GAUSSIAN : 1;
  // The strain test is the plot's: its intercept (2ε)² above zero by 2σ.
  const strainDetected = intercept > STRAIN_SIGNIFICANT_SIGMAS * interceptSigma && interceptSigma > 0;
  const exact = strainDetected && slope > 0 ? exactVoigtFit(betaStar, sigmaBeta, dStar2, slope, Math.sqrt(intercept)) : null;
  // 1/D and 2ε (integral-breadth convention) with σ; ε = √c / 2 from the plot when no strain is detected.
  const inverseSize = exact ? exact.inverseSize : slope;
  const inverseSizeSigma = exact ? exact.inverseSizeSigma : slopeSigma;
  const strain = (exact ? exact.twiceStrain / 2 : intercept > 0 ? Math.sqrt(intercept) / 2 : 0) * strainFactor;
  const strainSigma =
    (exact
      ? exact.twiceStrainSigma / 2
      : intercept > interceptSigma
        ? interceptSigma / (4 * Math.sqrt(intercept))
        : Math.sqrt(Math.max(interceptSigma, 0)) / 2) * strainFactor;
  const strainStatement = strainStatementOf(strain, strainSigma, strainDetected);
  const warnings: string[] = [];
  let sizeNm: number | null;
  let sizeSigmaNm: number | null;
  let limit: 'instrument' | null = null;
  let statement: string;
  if (inverseSize > 2 * inverseSizeSigma) {
    sizeNm = sizeFactor / inverseSize / 10;
    sizeSigmaNm = (sizeNm * inverseSizeSigma) / inverseSize;
    statement = `${sizeNm.toPrecision(3)} ± ${sizeSigmaNm.toPrecision(2)} nm, ${strainStatement} (Halder–Wagner, ${n} reflections)`;
  } else {
    const bound = inverseSize + 2 * inverseSizeSigma;
    sizeNm = bound > 0 ? Math.floor(sizeFactor / bound / 10) : null;
    sizeSigmaNm = null;
    limit = 'instrument';
    statement = `${sizeNm === null ? 'size beyond the resolvable range' : `larger than ${sizeNm} nm (slope not above zero by 2σ)`}, ${strainStatement} (Halder–Wagner)`;
    warnings.push('the Halder–Wagner slope is not significantly above zero: the size is beyond the resolvable range');
  }
  if (fit.r2 < 0.8) warnings.push(`the Halder–Wagner points scatter about their line (r² = ${fit.r2.toFixed(2)}): the breadths do not follow one size and one strain well`);
  return {
    method: 'halder-wagner',
    convention: describeConvention(convention),
    sizeNm,
    sizeSigmaNm,
    limit,
    strain,
    strainSigma,
    strainDetected,
    strainStatement,
    r2: fit.r2,
    reflections: n,
    exactVoigt: exact !== null,
    twoThetaSpanDeg: twoThetaSpan(points),
    slope,
    slopeSigma,
    intercept,
    interceptSigma,
    plot: points.map((p, i) => ({ twoThetaDeg: p.twoThetaDeg, x: x[i], y: y[i], sigmaY: Math.abs(dRdBeta[i]) * sigmaBeta[i] })),
    statement,
    warnings,
  };
}

/** Integral breadth of the Voigt of a Lorentzian and a Gaussian of these integral breadths (exact convolution). */
function voigtBeta(lorentzian: number, gaussian: number): number {
  if (!(gaussian > 0)) return lorentzian;
  return gaussian / erfcx(lorentzian / (Math.sqrt(Math.PI) * gaussian));
}

/**
 * Gauss–Newton fit of β*_i = V(a, s·d*_i) with a = 1/D and s = 2ε, weighted by σ(β*), from the plot's values;
 * σ from (JᵀWJ)⁻¹ scaled by χ²/dof when the scatter exceeds the errors. Null when it does not converge.
 */
function exactVoigtFit(
  betaStar: Float64Array,
  sigmaBeta: Float64Array,
  dStar2: Float64Array,
  a0: number,
  s0: number,
): { inverseSize: number; inverseSizeSigma: number; twiceStrain: number; twiceStrainSigma: number } | null {
  const n = betaStar.length;
  let a = a0;
  let s = s0;
  const dStar = Array.from(dStar2, Math.sqrt);
  const normal = new Float64Array(4);
  let chi2 = 0;
  const evaluate = (aa: number, ss: number): { r: number[]; ja: number[]; js: number[]; chi2: number } => {
    const r: number[] = [];
    const ja: number[] = [];
    const js: number[] = [];
    let c2 = 0;
    for (let i = 0; i < n; i++) {
      const model = voigtBeta(aa, ss * dStar[i]);
      const ha = 1e-6 * Math.max(aa, 1e-9);
      const hs = 1e-6 * Math.max(ss, 1e-9);
      ja.push((voigtBeta(aa + ha, ss * dStar[i]) - voigtBeta(aa - ha, ss * dStar[i])) / (2 * ha) / sigmaBeta[i]);
      js.push((voigtBeta(aa, (ss + hs) * dStar[i]) - voigtBeta(aa, (ss - hs) * dStar[i])) / (2 * hs) / sigmaBeta[i]);
      r.push((betaStar[i] - model) / sigmaBeta[i]);
      c2 += r[i] * r[i];
    }
    return { r, ja, js, chi2: c2 };
  };
  let state = evaluate(a, s);
  for (let iteration = 0; iteration < 30; iteration++) {
    normal.fill(0);
    let ga = 0;
    let gs = 0;
    for (let i = 0; i < n; i++) {
      normal[0] += state.ja[i] * state.ja[i];
      normal[1] += state.ja[i] * state.js[i];
      normal[3] += state.js[i] * state.js[i];
      ga += state.ja[i] * state.r[i];
      gs += state.js[i] * state.r[i];
    }
    normal[2] = normal[1];
    const inverse = invertSmall(normal, 2);
    if (!inverse) return null;
    let da = inverse[0] * ga + inverse[1] * gs;
    let ds = inverse[2] * ga + inverse[3] * gs;
    // Step halving keeps both parameters positive and χ² falling.
    let accepted = false;
    for (let half = 0; half < 20 && !accepted; half++) {
      const na = a + da;
      const ns = s + ds;
      if (na > 0 && ns > 0) {
        const next = evaluate(na, ns);
        if (next.chi2 <= state.chi2) {
          const converged = Math.abs(da) < 1e-10 * a && Math.abs(ds) < 1e-10 * s;
          a = na;
          s = ns;
          state = next;
          accepted = true;
          if (converged) iteration = 30;
        }
      }
      da /= 2;
      ds /= 2;
    }
    if (!accepted) break;
  }
  chi2 = state.chi2;
  normal.fill(0);
  for (let i = 0; i < n; i++) {
    normal[0] += state.ja[i] * state.ja[i];
    normal[1] += state.ja[i] * state.js[i];
    normal[3] += state.js[i] * state.js[i];
  }
  normal[2] = normal[1];
  const covariance = invertSmall(normal, 2);
  if (!covariance) return null;
  const scale = n > 2 ? Math.max(1, chi2 / (n - 2)) : 1;
  return {
    inverseSize: a,
    inverseSizeSigma: Math.sqrt(covariance[0] * scale),
    twiceStrain: s,
    twiceStrainSigma: Math.sqrt(covariance[3] * scale),
  };
}
