/**
 * What a size–strain plot is made from, and when it is a result at all. Each point is one resolved
 * reflection's sample broadening (instrument removed), split into its Lorentzian (size) and Gaussian
 * (strain) parts (de Keijser, Langford, Mittemeijer & Vogels, J. Appl. Cryst. 15, 308 (1982)).
 */
import type { Hkl } from '../model/cell.js';
import { DEG_TO_RAD } from '../model/units.js';
import type { BreadthKind } from './voigt.js';

export interface SizeStrainPoint {
  twoThetaDeg: number;
  /** The sample's Lorentzian and Gaussian parts, in the breadth kind of the convention (FWHM or integral breadth), degrees 2θ. */
  lorentzianDeg: number;
  lorentzianSigmaDeg: number;
  gaussianDeg: number;
  gaussianSigmaDeg: number;
  /** The sample's whole integral breadth (Voigt of the two parts), degrees 2θ. */
  integralBreadthDeg: number;
  integralBreadthSigmaDeg: number;
  hkl: Hkl | null;
}

/**
 * The convention every size–strain result states: size D = Kλ/(w_L cosθ) from the Lorentzian part's
 * width w_L, strain ε = w_G/(4 tanθ) from the Gaussian part's width w_G, both widths of the same kind.
 */
export interface SizeStrainConvention {
  k: number;
  breadth: BreadthKind;
  wavelengthAngstrom: number;
}

export function describeConvention(c: SizeStrainConvention): string {
  const w = c.breadth === 'fwhm' ? 'FWHM' : 'integral breadth';
  return `size D = Kλ/(w_L·cosθ) with K = ${c.k} and w_L the ${w} of the Lorentzian part; strain ε = w_G/(4·tanθ) with w_G the ${w} of the Gaussian part`;
}

/** What every size–strain result states, whichever plot it comes from. */
export interface SizeStrainOutcome {
  /** The size and strain definitions used (K, breadth kind), in words. */
  convention: string;
  /** Size in nm, or the lower bound when `limit` is "instrument"; null when beyond what the widths can tell. */
  sizeNm: number | null;
  sizeSigmaNm: number | null;
  limit: 'instrument' | null;
  /** Microstrain ε, as fitted even when not significant. */
  strain: number;
  strainSigma: number;
  /** |ε| ≥ 2σ: a strain is reported; otherwise "no strain detected". */
  strainDetected: boolean;
  strainStatement: string;
  r2: number;
  twoThetaSpanDeg: { min: number; max: number };
  statement: string;
  warnings: string[];
}

/** At least this many resolved reflections make a size–strain plot (common practice). */
export const MIN_SIZE_STRAIN_REFLECTIONS = 4;
/** The reflections must span at least this ratio of sinθ (of d*) to separate a constant from a d*-proportional breadth. */
export const MIN_SIN_THETA_RATIO = 1.5;

/** Why these points make no size–strain result, or null when they do. */
export function sizeStrainRefusal(points: readonly SizeStrainPoint[]): string | null {
  if (points.length < MIN_SIZE_STRAIN_REFLECTIONS) {
    return `${points.length} resolved reflection(s); a size–strain plot needs at least ${MIN_SIZE_STRAIN_REFLECTIONS}`;
  }
  const sines = points.map((p) => Math.sin((p.twoThetaDeg / 2) * DEG_TO_RAD));
  const ratio = Math.max(...sines) / Math.min(...sines);
  if (!(ratio >= MIN_SIN_THETA_RATIO)) {
    const span = twoThetaSpan(points);
    return `the resolved reflections span only ${span.min.toFixed(1)}–${span.max.toFixed(1)}° 2θ (sinθ ratio ${ratio.toFixed(2)}; at least ${MIN_SIN_THETA_RATIO} is needed to tell size from strain)`;
  }
  return null;
}

export function twoThetaSpan(points: readonly SizeStrainPoint[]): { min: number; max: number } {
  const tt = points.map((p) => p.twoThetaDeg);
  return { min: Math.min(...tt), max: Math.max(...tt) };
}

/** Strain is reported only when it stands above its own uncertainty by this many σ (common practice). */
export const STRAIN_SIGNIFICANT_SIGMAS = 2;

export function strainStatementOf(strain: number, sigma: number, detected: boolean): string {
  return detected
    ? `microstrain ${strain.toExponential(2)} ± ${sigma.toExponential(1)}`
    : `no strain detected (|ε| < ${STRAIN_SIGNIFICANT_SIGMAS}σ = ${(STRAIN_SIGNIFICANT_SIGMAS * sigma).toExponential(1)})`;
}

/**
 * When the quoted size–strain method (Halder–Wagner) and the Williamson–Hall cross-check disagree on
 * whether there is strain, a sentence saying so and what to make of it; null when they agree.
 */
export function strainDisagreement(
  quoted: { strain: number; strainSigma: number; strainDetected: boolean },
  crossCheck: { strain: number; strainSigma: number; strainDetected: boolean },
): string | null {
  if (quoted.strainDetected === crossCheck.strainDetected) return null;
  const [found, notFound] = quoted.strainDetected ? ['Halder–Wagner', 'Williamson–Hall'] : ['Williamson–Hall', 'Halder–Wagner'];
  const detected = quoted.strainDetected ? quoted : crossCheck;
  return (
    `${found} finds a microstrain of ${detected.strain.toExponential(1)} ± ${detected.strainSigma.toExponential(1)}, ${notFound} none above ${STRAIN_SIGNIFICANT_SIGMAS}σ: ` +
    `the two weigh the reflections differently, so the strain is not established; quote the Halder–Wagner result and treat any strain as at most about ${(Math.abs(detected.strain) + STRAIN_SIGNIFICANT_SIGMAS * detected.strainSigma).toExponential(1)}`
  );
}
