/**
 * The instrument's peak width at a 2θ from a stored profile, and which references are line-profile
 * standards: the part of the instrument profile the analysis of every pattern needs, kept apart from
 * the profile file's schema (see instrument.ts) so the batch workers load no validation library.
 */
import type { Reference } from '../model/reference.js';
import { DEG_TO_RAD } from '../model/units.js';
import type { InstrumentProfile } from './instrument.js';
import { quadraticForm } from '../numeric/numeric.js';
import { breadthsFromPseudoVoigt, type ProfileBreadths } from './voigt.js';

const STANDARD_NAMES = /^(lab6|si|silicon|lanthanum hexaboride)\b/i;

/** Is this reference usable as a line-profile standard (tagged standard, or LaB6 / silicon)? */
export function isStandardReference(ref: Reference): boolean {
  return ref.tags.some((t) => t.toLowerCase() === 'standard') || STANDARD_NAMES.test(ref.name) || /^(LaB6|Si)$/.test(ref.formula.replace(/\s/g, ''));
}

/** The row (tan²θ, tanθ, 1) of FWHM² = U tan²θ + V tanθ + W (Caglioti, Paoletti & Ricci, Nucl. Instrum. 3, 223 (1958)). */
export function cagliotiRow(twoThetaDeg: number): [number, number, number] {
  const t = Math.tan((twoThetaDeg / 2) * DEG_TO_RAD);
  return [t * t, t, 1];
}

/** The row (1, x, x², …, x^degree) of a polynomial in x. */
export function polynomialRow(x: number, degree: number): number[] {
  const row: number[] = [];
  for (let i = 0; i <= degree; i++) row.push(x ** i);
  return row;
}

export interface InstrumentWidth {
  fwhm: number;
  fwhmSigma: number;
  eta: number;
  etaSigma: number;
  breadths: ProfileBreadths;
  /** True when 2θ lies outside the standard's peaks by more than 5°. */
  extrapolated: boolean;
}

type ProfileShape = Pick<InstrumentProfile, 'caglioti' | 'cagliotiCovariance' | 'eta' | 'etaCovariance' | 'twoThetaRangeDeg'>;

/** The instrument's FWHM and η at a 2θ (degrees), with their standard uncertainties. */
export function instrumentWidthAt(profile: ProfileShape, twoThetaDeg: number): InstrumentWidth {
  const row = cagliotiRow(twoThetaDeg);
  const { u, v, w } = profile.caglioti;
  const square = Math.max(u * row[0] + v * row[1] + w * row[2], 1e-10);
  const fwhm = Math.sqrt(square);
  const fwhmSigma = Math.sqrt(Math.max(0, quadraticForm(row, Float64Array.from(profile.cagliotiCovariance)))) / (2 * fwhm);
  const etaRow = polynomialRow(twoThetaDeg, profile.eta.length - 1);
  const eta = Math.min(1, Math.max(0, etaRow.reduce((s, xi, i) => s + xi * profile.eta[i], 0)));
  const etaSigma = Math.sqrt(Math.max(0, quadraticForm(etaRow, Float64Array.from(profile.etaCovariance))));
  const [lo, hi] = profile.twoThetaRangeDeg;
  return { fwhm, fwhmSigma, eta, etaSigma, breadths: breadthsFromPseudoVoigt(fwhm, eta), extrapolated: twoThetaDeg < lo - 5 || twoThetaDeg > hi + 5 };
}
