/**
 * Williamson–Hall analysis on the Voigt parts of each reflection's sample broadening: the Lorentzian
 * part gives the size (w_L·cosθ = Kλ/D, the same for every order), the Gaussian part the strain
 * (w_G·cosθ = 4ε·sinθ) (Williamson & Hall, Acta Metall. 1, 22 (1953); Voigt separation after de Keijser,
 * Langford, Mittemeijer & Vogels, J. Appl. Cryst. 15, 308 (1982)). Adding whole Voigt widths linearly,
 * as the plain plot does, mixes the two and overstates the size. Also checks whether hkl families
 * disagree beyond their errors (anisotropic broadening).
 */
import type { Hkl } from '../model/cell.js';
import { DEG_TO_RAD } from '../model/units.js';
import { chiSquareSurvival, weightedMean } from '../numeric/numeric.js';
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

export interface WilliamsonHallOptions extends SizeStrainConvention {
  /** p-value below which the peaks are said to disagree (default 0.001). */
  disagreementP?: number;
}

/** One reflection on the plot: x = 4 sinθ, y = w cosθ (radians) of the Lorentzian (size) and Gaussian (strain) parts. */
export interface WilliamsonHallPlotPoint {
  twoThetaDeg: number;
  hkl: Hkl | null;
  x: number;
  sizeY: number;
  sizeSigmaY: number;
  strainY: number;
  strainSigmaY: number;
}

/** `limit` is "instrument" when the Lorentzian part is not above zero by 2σ; r² is the uncentred r² of the strain line through the origin. */
export interface WilliamsonHallResult extends SizeStrainOutcome {
  method: 'williamson-hall-voigt';
  peaksUsed: number;
  /** Kλ/D (the mean of w_L cosθ, radians) and its uncertainty. */
  intercept: number;
  interceptSigma: number;
  /** χ² of the Lorentzian parts about one size, and its tail probability. */
  chi2: number;
  dof: number;
  pValue: number;
  anisotropy: AnisotropyNote | null;
  plot: WilliamsonHallPlotPoint[];
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

/** A Voigt-part Williamson–Hall result, or the reason there is none (too few reflections, too short a span). */
export function williamsonHall(points: readonly SizeStrainPoint[], options: WilliamsonHallOptions): WilliamsonHallResult | { reason: string } {
  const refusal = sizeStrainRefusal(points);
  if (refusal) return { reason: refusal };
  const n = points.length;
  const kLambdaNm = (options.k * options.wavelengthAngstrom) / 10;
  const plot: WilliamsonHallPlotPoint[] = points.map((p) => {
    const theta = (p.twoThetaDeg / 2) * DEG_TO_RAD;
    const c = Math.cos(theta) * DEG_TO_RAD;
    return {
      twoThetaDeg: p.twoThetaDeg,
      hkl: p.hkl,
      x: 4 * Math.sin(theta),
      sizeY: p.lorentzianDeg * c,
      sizeSigmaY: Math.max(p.lorentzianSigmaDeg, 1e-7) * c,
      strainY: p.gaussianDeg * c,
      strainSigmaY: Math.max(p.gaussianSigmaDeg, 1e-7) * c,
    };
  });
  const warnings: string[] = [];

  // Size: one Kλ/D for every reflection, the weighted mean of the Lorentzian parts.
  const mean = weightedMean(plot.map((q) => q.sizeY), plot.map((q) => q.sizeSigmaY))!;
  const residuals = new Float64Array(plot.map((q) => q.sizeY - mean.mean));
  const weights = new Float64Array(plot.map((q) => 1 / q.sizeSigmaY ** 2));
  const pValue = mean.dof > 0 ? chiSquareSurvival(mean.chi2, mean.dof) : 1;

  // Strain: a line through the origin, w_G cosθ = ε·4 sinθ, σ scaled by √(χ²/dof) when the scatter exceeds the errors.
  let sxx = 0;
  let sxy = 0;
  let syy = 0;
  for (const q of plot) {
    const w = 1 / q.strainSigmaY ** 2;
    sxx += w * q.x * q.x;
    sxy += w * q.x * q.strainY;
    syy += w * q.strainY * q.strainY;
  }
  const strain = sxy / sxx;
  let strainChi2 = 0;
  for (const q of plot) strainChi2 += ((q.strainY - strain * q.x) / q.strainSigmaY) ** 2;
  const strainSigma = Math.sqrt(Math.max(1, strainChi2 / (n - 1)) / sxx);
  const r2 = syy > 0 ? 1 - strainChi2 / syy : 0;
  const strainDetected = strainSigma > 0 && strain >= STRAIN_SIGNIFICANT_SIGMAS * strainSigma;
  const strainStatement = strainStatementOf(strain, strainSigma, strainDetected);

  let sizeNm: number | null;
  let sizeSigmaNm: number | null;
  let limit: 'instrument' | null = null;
  let statement: string;
  if (mean.mean > 2 * mean.sigma) {
    sizeNm = kLambdaNm / mean.mean;
    sizeSigmaNm = (sizeNm * mean.sigma) / mean.mean;
    statement = `${sizeNm.toPrecision(3)} ± ${sizeSigmaNm.toPrecision(2)} nm, ${strainStatement}`;
  } else {
    const bound = mean.mean + 2 * mean.sigma;
    sizeNm = bound > 0 ? kLambdaNm / bound : null;
    sizeSigmaNm = null;
    limit = 'instrument';
    statement = sizeNm === null ? `size beyond the resolvable range, ${strainStatement}` : `larger than ${Math.floor(sizeNm)} nm (Lorentzian part not above zero by 2σ), ${strainStatement}`;
    warnings.push('the Lorentzian (size) part of the breadths is not significantly above zero: the size is beyond the resolvable range');
  }
  if (r2 < 0.5 && strainDetected) warnings.push(`the strain line fits poorly (r² = ${r2.toFixed(2)}): treat the strain as an estimate`);
  const anisotropy = mean.dof > 0 ? anisotropyNote(points, residuals, weights, pValue, options.disagreementP ?? 0.001) : null;
  return {
    method: 'williamson-hall-voigt',
    convention: describeConvention(options),
    sizeNm,
    sizeSigmaNm,
    limit,
    strain,
    strainSigma,
    strainDetected,
    strainStatement,
    r2,
    peaksUsed: n,
    twoThetaSpanDeg: twoThetaSpan(points),
    intercept: mean.mean,
    interceptSigma: mean.sigma,
    chi2: mean.chi2,
    dof: mean.dof,
    pValue,
    anisotropy,
    plot,
    statement,
    warnings,
  };
}

function familyLabel(f: Hkl): string {
  return `{${f.join(' ')}}`;
}

function anisotropyNote(points: readonly { hkl: Hkl | null }[], residuals: Float64Array, weights: Float64Array, pValue: number, threshold: number): AnisotropyNote {
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
    statement = `anisotropic broadening: hkl families disagree beyond their errors (${parts.join('; ')} than one size; p = ${pValue.toExponential(1)}); the crystallites are not the same size in every direction, or strain differs by direction`;
  } else {
    statement = `the peaks disagree beyond their errors (p = ${pValue.toExponential(1)}) but no hkl family stands out; the uniform-deformation model does not describe these breadths well`;
  }
  return { detected, pValue, families, statement };
}
