/**
 * Williamson–Hall analysis, uniform deformation model: β cosθ = Kλ/D + 4ε sinθ
 * (Williamson & Hall, Acta Metall. 1, 22 (1953)), as a weighted straight-line fit with uncertainties,
 * and a check whether hkl families disagree beyond their errors (anisotropic broadening).
 */
import type { Hkl } from '../model/cell.js';
import { DEG_TO_RAD } from '../model/units.js';
import { chiSquareSurvival, weightedLinearFit } from '../numeric/numeric.js';

export interface BreadthPoint {
  twoThetaDeg: number;
  /** Sample breadth, degrees 2θ. */
  breadthDeg: number;
  breadthSigmaDeg: number;
  hkl: Hkl | null;
}

export interface WilliamsonHallOptions {
  wavelengthAngstrom: number;
  k: number;
  /** Below this many peaks the result carries a warning (default 4). */
  minPeaks?: number;
  /** p-value below which the peaks are said to disagree (default 0.001). */
  disagreementP?: number;
}

/** A strain smaller than this many σ is reported as not detected. */
const STRAIN_SIGNIFICANT_SIGMAS = 2;

export interface WilliamsonHallResult {
  /** Size in nm, or the lower bound when `limit` is "instrument" (intercept not above zero by 2σ). */
  sizeNm: number | null;
  sizeSigmaNm: number | null;
  limit: 'instrument' | null;
  /** Microstrain ε (dimensionless; β cosθ = Kλ/D + 4ε sinθ), as fitted even when not significant. */
  strain: number;
  strainSigma: number;
  /** |ε| ≥ 2σ: a strain is reported; otherwise "no strain detected". */
  strainDetected: boolean;
  /** The strain as a chemist reads it: "microstrain 1.10e-3 ± 2.0e-4", or "no strain detected (|ε| < 2σ = 4.0e-4)". */
  strainStatement: string;
  r2: number;
  peaksUsed: number;
  /** Intercept Kλ/D and slope ε with their uncertainties (β in radians). */
  intercept: number;
  interceptSigma: number;
  /** χ² of the breadths about the line and its tail probability. */
  chi2: number;
  dof: number;
  pValue: number;
  anisotropy: AnisotropyNote | null;
  statement: string;
  warnings: string[];
}

export interface FamilyResidual {
  family: Hkl;
  peaks: number;
  /** Weighted mean of (β cosθ − fit) for the family, radians. */
  meanResidual: number;
  sigma: number;
  /** Positive: broader than the line (smaller crystallite dimension or more strain along this direction). */
  z: number;
}

export interface AnisotropyNote {
  detected: boolean;
  pValue: number;
  families: FamilyResidual[];
  statement: string;
}

function gcd(a: number, b: number): number {
  a = Math.abs(a);
  b = Math.abs(b);
  while (b) [a, b] = [b, a % b];
  return a;
}

/** Direction family of a reflection: |h k l| divided by their common divisor (200 and 100 are one family). */
export function hklFamily(hkl: Hkl): Hkl {
  const g = gcd(gcd(hkl[0], hkl[1]), hkl[2]) || 1;
  return [Math.abs(hkl[0]) / g, Math.abs(hkl[1]) / g, Math.abs(hkl[2]) / g];
}

const Z_FAMILY = 3;

export function williamsonHall(points: readonly BreadthPoint[], options: WilliamsonHallOptions): WilliamsonHallResult | null {
  const n = points.length;
  if (n < 2) return null;
  const minPeaks = options.minPeaks ?? 4;
  const design = new Float64Array(n * 2);
  const y = new Float64Array(n);
  const weights = new Float64Array(n);
  points.forEach((pt, i) => {
    const theta = (pt.twoThetaDeg / 2) * DEG_TO_RAD;
    design[2 * i] = 1;
    design[2 * i + 1] = 4 * Math.sin(theta);
    y[i] = pt.breadthDeg * DEG_TO_RAD * Math.cos(theta);
    const sigma = Math.max(pt.breadthSigmaDeg, 1e-6) * DEG_TO_RAD * Math.cos(theta);
    weights[i] = 1 / (sigma * sigma);
  });
  const fit = weightedLinearFit(design, y, weights, 2);
  if (!fit) return null;
  const scale = fit.dof > 0 ? Math.max(1, fit.chi2 / fit.dof) : 1;
  const intercept = fit.coefficients[0];
  const slope = fit.coefficients[1];
  const interceptSigma = Math.sqrt(fit.covariance[0] * scale);
  const strainSigma = Math.sqrt(fit.covariance[3] * scale);
  const pValue = fit.dof > 0 ? chiSquareSurvival(fit.chi2, fit.dof) : 1;
  const warnings: string[] = [];
  if (n < minPeaks) warnings.push(`only ${n} usable peaks: the Williamson–Hall line needs at least ${minPeaks} to be trusted`);
  if (slope < -2 * strainSigma) {
    warnings.push(
      'negative Williamson–Hall slope: no physical strain; the breadths do not follow the uniform-deformation model (anisotropic size or strain, or unreliable breadths)',
    );
  } else if (slope < 0) {
    warnings.push('the Williamson–Hall slope is negative but zero within its uncertainty: no measurable strain');
  }
  // Strain is reported only when it stands above its own uncertainty (2σ, common practice).
  const strainDetected = Math.abs(slope) >= STRAIN_SIGNIFICANT_SIGMAS * strainSigma && strainSigma > 0 ? slope > 0 : false;
  const strainStatement = strainDetected
    ? `microstrain ${slope.toExponential(2)} ± ${strainSigma.toExponential(1)}`
    : `no strain detected (|ε| < ${STRAIN_SIGNIFICANT_SIGMAS}σ = ${(STRAIN_SIGNIFICANT_SIGMAS * strainSigma).toExponential(1)})`;
  const kLambdaNm = (options.k * options.wavelengthAngstrom) / 10;
  let sizeNm: number | null;
  let sizeSigmaNm: number | null;
  let limit: 'instrument' | null = null;
  let statement: string;
  if (intercept > 2 * interceptSigma) {
    sizeNm = kLambdaNm / intercept;
    sizeSigmaNm = (sizeNm * interceptSigma) / intercept;
    statement = `${sizeNm.toPrecision(3)} ± ${sizeSigmaNm.toPrecision(2)} nm, ${strainStatement}`;
  } else {
    const bound = intercept + 2 * interceptSigma;
    sizeNm = bound > 0 ? kLambdaNm / bound : null;
    sizeSigmaNm = null;
    limit = 'instrument';
    statement = sizeNm === null ? 'size beyond the resolvable range' : `larger than ${Math.floor(sizeNm)} nm (intercept not above zero by 2σ)`;
    warnings.push('the Williamson–Hall intercept is not significantly above zero: the size is beyond the resolvable range');
  }
  const anisotropy = fit.dof > 0 ? anisotropyNote(points, fit.residuals, weights, pValue, options.disagreementP ?? 0.001) : null;
  return {
    sizeNm,
    sizeSigmaNm,
    limit,
    strain: slope,
    strainSigma,
    strainDetected,
    strainStatement,
    r2: fit.r2,
    peaksUsed: n,
    intercept,
    interceptSigma,
    chi2: fit.chi2,
    dof: fit.dof,
    pValue,
    anisotropy,
    statement,
    warnings,
  };
}

function familyLabel(f: Hkl): string {
  return `{${f.join(' ')}}`;
}

function anisotropyNote(points: readonly BreadthPoint[], residuals: Float64Array, weights: Float64Array, pValue: number, threshold: number): AnisotropyNote {
  const groups = new Map<string, { family: Hkl; sw: number; swr: number; count: number }>();
  points.forEach((pt, i) => {
    if (!pt.hkl) return;
    const family = hklFamily(pt.hkl);
    const key = family.join(',');
    const g = groups.get(key) ?? { family, sw: 0, swr: 0, count: 0 };
    g.sw += weights[i];
    g.swr += weights[i] * residuals[i];
    g.count++;
    groups.set(key, g);
  });
  const families: FamilyResidual[] = [...groups.values()].map((g) => {
    const meanResidual = g.swr / g.sw;
    const sigma = 1 / Math.sqrt(g.sw);
    return { family: g.family, peaks: g.count, meanResidual, sigma, z: meanResidual / sigma };
  });
  const detected = pValue < threshold;
  const broader = families.filter((f) => f.z > Z_FAMILY).map((f) => familyLabel(f.family));
  const narrower = families.filter((f) => f.z < -Z_FAMILY).map((f) => familyLabel(f.family));
  let statement: string;
  if (!detected) statement = 'the peaks agree with one size and strain within their errors';
  else if (broader.length || narrower.length) {
    const parts: string[] = [];
    if (broader.length) parts.push(`${broader.join(', ')} broader`);
    if (narrower.length) parts.push(`${narrower.join(', ')} narrower`);
    statement = `anisotropic broadening: hkl families disagree beyond their errors (${parts.join('; ')} than the Williamson–Hall line; p = ${pValue.toExponential(1)}); the crystallites are not the same size in every direction, or strain differs by direction`;
  } else {
    statement = `the peaks disagree beyond their errors (p = ${pValue.toExponential(1)}) but no hkl family stands out; the uniform-deformation model does not describe these breadths well`;
  }
  return { detected, pValue, families, statement };
}
