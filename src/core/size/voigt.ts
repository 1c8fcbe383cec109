/**
 * Line breadths and the instrument correction: a profile is described by its FWHM and its integral
 * breadth β (area / height), both in degrees 2θ. A Voigt profile is split into its Lorentzian and
 * Gaussian integral breadths, corrected part by part, and put together again.
 */
import { pseudoVoigtIntegralBreadth } from '../process/profiles.js';
import { erfcx } from '../numeric/numeric.js';

export type BreadthKind = 'fwhm' | 'integral';
export type CorrectionKind = 'voigt' | 'lorentzian' | 'gaussian';

export const BREADTH_KINDS: readonly BreadthKind[] = ['fwhm', 'integral'];
export const CORRECTION_KINDS: readonly CorrectionKind[] = ['voigt', 'lorentzian', 'gaussian'];

export interface ProfileBreadths {
  fwhm: number;
  integralBreadth: number;
}

/** Integral breadths of the Lorentzian and Gaussian components of a Voigt profile, degrees 2θ. */
export interface VoigtParts {
  lorentzian: number;
  gaussian: number;
}

/** φ = FWHM/β of a pure Lorentzian (2/π) and of a pure Gaussian (2√(ln2/π)). */
export const PHI_LORENTZIAN = 2 / Math.PI;
export const PHI_GAUSSIAN = 2 * Math.sqrt(Math.LN2 / Math.PI);

export function breadthsFromPseudoVoigt(fwhm: number, eta: number): ProfileBreadths {
  return { fwhm, integralBreadth: pseudoVoigtIntegralBreadth(fwhm, Math.min(1, Math.max(0, eta))) };
}

/**
 * The Lorentzian fraction η of the unit-area pseudo-Voigt η·L + (1 − η)·G with this FWHM and integral
 * breadth (clamped to [0, 1]). Taking η from the two breadths makes it independent of how a peak fitter
 * defines its own mixing parameter.
 */
export function etaFromBreadths(breadths: ProfileBreadths): number {
  const heightTimesFwhm = breadths.fwhm / breadths.integralBreadth;
  return Math.min(1, Math.max(0, (PHI_GAUSSIAN - heightTimesFwhm) / (PHI_GAUSSIAN - PHI_LORENTZIAN)));
}

/** The breadth of the chosen kind. */
export function pickBreadth(breadths: ProfileBreadths, kind: BreadthKind): number {
  return kind === 'fwhm' ? breadths.fwhm : breadths.integralBreadth;
}

/**
 * Lorentzian and Gaussian integral breadths of a Voigt profile from its FWHM and integral breadth,
 * with φ = FWHM/β: βL/β = 2.0207 − 0.4803φ − 1.7756φ², βG/β = 0.6420 + 1.4187(φ − 2/π)^½ − 2.2043φ + 1.8706φ²
 * (de Keijser, Langford, Mittemeijer & Vogels, J. Appl. Cryst. 15, 308 (1982)).
 * φ is clamped to the Voigt range [2/π, 2√(ln2/π)] and the parts to ≥ 0.
 */
export function voigtParts(breadths: ProfileBreadths): VoigtParts {
  const beta = breadths.integralBreadth;
  if (!(beta > 0)) return { lorentzian: 0, gaussian: 0 };
  const phi = Math.min(PHI_GAUSSIAN, Math.max(PHI_LORENTZIAN, breadths.fwhm / beta));
  const lorentzian = beta * (2.0207 - 0.4803 * phi - 1.7756 * phi * phi);
  const gaussian = beta * (0.642 + 1.4187 * Math.sqrt(phi - PHI_LORENTZIAN) - 2.2043 * phi + 1.8706 * phi * phi);
  return { lorentzian: Math.max(0, lorentzian), gaussian: Math.max(0, gaussian) };
}

/**
 * Integral breadth of the Voigt with the given parts: β = βG·exp(−k²)/erfc(k), k = βL/(√π βG)
 * (the exact convolution result, as used by de Keijser et al., J. Appl. Cryst. 15, 308 (1982)).
 */
export function voigtIntegralBreadth(parts: VoigtParts): number {
  const { lorentzian, gaussian } = parts;
  if (!(gaussian > 0)) return lorentzian;
  if (!(lorentzian > 0)) return gaussian;
  const k = lorentzian / (Math.sqrt(Math.PI) * gaussian);
  return gaussian / erfcx(k);
}

/**
 * FWHM of the Voigt with the given parts: fV ≈ 0.5346 fL + (0.2166 fL² + fG²)^½, accurate to 0.02 %
 * (Olivero & Longbothum, J. Quant. Spectrosc. Radiat. Transfer 17, 233 (1977)).
 */
export function voigtFwhm(parts: VoigtParts): number {
  const fL = parts.lorentzian * PHI_LORENTZIAN;
  const fG = parts.gaussian * PHI_GAUSSIAN;
  return 0.5346 * fL + Math.sqrt(0.2166 * fL * fL + fG * fG);
}

export function voigtBreadths(parts: VoigtParts): ProfileBreadths {
  return { fwhm: voigtFwhm(parts), integralBreadth: voigtIntegralBreadth(parts) };
}

export interface SampleBreadths extends ProfileBreadths {
  /** Voigt correction only: the sample's Lorentzian and Gaussian integral breadths. */
  parts: VoigtParts | null;
}

/**
 * The sample's own breadth after removing the instrument's. Lorentzian: breadths subtract;
 * Gaussian: they subtract in quadrature; Voigt: each part is corrected its own way (Lorentzian
 * parts subtract, Gaussian parts in quadrature) and the sample Voigt is rebuilt
 * (de Keijser et al., J. Appl. Cryst. 15, 308 (1982)). Negative differences become 0.
 */
export function sampleBreadths(observed: ProfileBreadths, instrument: ProfileBreadths, correction: CorrectionKind): SampleBreadths {
  if (correction === 'lorentzian') {
    return {
      fwhm: Math.max(0, observed.fwhm - instrument.fwhm),
      integralBreadth: Math.max(0, observed.integralBreadth - instrument.integralBreadth),
      parts: null,
    };
  }
  if (correction === 'gaussian') {
    return {
      fwhm: Math.sqrt(Math.max(0, observed.fwhm ** 2 - instrument.fwhm ** 2)),
      integralBreadth: Math.sqrt(Math.max(0, observed.integralBreadth ** 2 - instrument.integralBreadth ** 2)),
      parts: null,
    };
  }
  const o = voigtParts(observed);
  const i = voigtParts(instrument);
  const parts: VoigtParts = {
    lorentzian: Math.max(0, o.lorentzian - i.lorentzian),
    gaussian: Math.sqrt(Math.max(0, o.gaussian ** 2 - i.gaussian ** 2)),
  };
  return { ...voigtBreadths(parts), parts };
}
