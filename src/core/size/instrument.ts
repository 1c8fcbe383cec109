/**
 * Instrument profile from a measured line-profile standard (large, strain-free crystallites, so its
 * peak widths are the instrument's): Caglioti FWHM(2θ), a smooth pseudo-Voigt η(2θ), residuals.
 */
import { z } from 'zod';
import { InputError } from '../errors.js';
import type { Hkl } from '../model/cell.js';
import type { Reference } from '../model/reference.js';
import type { FittedPeak } from '../model/peak.js';
import type { Wavelength } from '../model/wavelengths.js';
import { assignReferenceLines } from './assign.js';
import { weightedLinearFit } from '../numeric/numeric.js';
import { cagliotiRow, instrumentWidthAt, isStandardReference, polynomialRow } from './instrument-width.js';
import { etaFromBreadths, PHI_GAUSSIAN, PHI_LORENTZIAN } from './voigt.js';

export { instrumentWidthAt, isStandardReference, type InstrumentWidth } from './instrument-width.js';

const INSTRUMENT_PROFILE_KIND = 'crystallog instrument profile';

export interface InstrumentPeakResidual {
  twoTheta: number;
  hkl: Hkl | null;
  fwhm: number;
  fwhmFit: number;
  /** Observed minus fitted FWHM, degrees 2θ. */
  fwhmResidual: number;
  eta: number;
  etaFit: number;
  etaResidual: number;
}

export interface InstrumentProfile {
  kind: typeof INSTRUMENT_PROFILE_KIND;
  formatVersion: 1;
  name: string;
  /** ISO 8601 date and time the profile was made. */
  date: string;
  wavelength: Wavelength;
  standard: { name: string; version: number | null; file: string | null; sha256: string | null };
  /** FWHM² = U tan²θ + V tanθ + W, degrees² of 2θ (Caglioti, Paoletti & Ricci, Nucl. Instrum. 3, 223 (1958)). */
  caglioti: { u: number; v: number; w: number };
  /** Covariance of (U, V, W), row-major 3×3. */
  cagliotiCovariance: number[];
  /**
   * η(2θ) = Σ eta[i]·(2θ in degrees)^i, clamped to [0, 1]: the Lorentzian fraction of a unit-area
   * pseudo-Voigt η·L + (1 − η)·G with the instrument's FWHM and integral breadth.
   */
  eta: number[];
  etaCovariance: number[];
  /** 2θ range covered by the standard's peaks, degrees. */
  twoThetaRangeDeg: [number, number];
  zeroShiftDeg: number;
  residuals: InstrumentPeakResidual[];
  /** Root-mean-square FWHM residual, degrees 2θ. */
  rms: number;
  /** Root-mean-square FWHM residual relative to the fitted FWHM. */
  rmsRelative: number;
  etaRms: number;
  warnings: string[];
}

export interface InstrumentFitOptions {
  wavelength: Wavelength;
  /** Name to save the profile under. */
  name: string;
  /** Date of the measurement or of the fit (ISO 8601; default now). */
  date?: string;
  /** Line-to-peak matching tolerance, degrees 2θ (default 0.1). */
  toleranceDeg?: number;
  standardFile?: { file: string; sha256: string | null };
  /** Version of the stored standard reference, if it came from the library. */
  standardVersion?: number | null;
}

/** Fewer peaks than this give a profile with a warning (common practice: the three Caglioti terms need spread in 2θ). */
export const MIN_GOOD_PEAKS = 5;
/** Relative FWHM rms above which the fit is called poor. */
const POOR_FIT_RELATIVE_RMS = 0.08;
/** Floor on the relative FWHM uncertainty used for weights (fitted σ are often optimistic). */
const MIN_RELATIVE_FWHM_SIGMA = 0.01;
const MIN_ETA_SIGMA = 0.02;

/** Fit the instrument profile to the fitted peaks of a measured standard. */
export function fitInstrumentProfile(peaks: readonly FittedPeak[], standard: Reference, options: InstrumentFitOptions): InstrumentProfile {
  if (!isStandardReference(standard)) {
    throw new InputError(
      `reference "${standard.name}" is not a line-profile standard; use LaB6, silicon, or a reference tagged "standard" (large, strain-free crystallites)`,
    );
  }
  const { assignments, zeroShiftDeg } = assignReferenceLines(peaks, standard.lines, options.wavelength.lambda1, {
    toleranceDeg: options.toleranceDeg ?? 0.1,
  });
  const clean = assignments.filter((a) => !a.overlap && peaks[a.peakIndex].fwhm > 0);
  if (clean.length === 0) {
    throw new InputError(
      `no resolved peak of the standard "${standard.name}" was found in ${options.standardFile?.file ?? 'the pattern'}; check the standard and the wavelength`,
    );
  }
  const warnings: string[] = [];
  const n = clean.length;
  // η is taken from each peak's FWHM and integral breadth (unit-area pseudo-Voigt convention).
  const used = clean.map((a) => {
    const peak = peaks[a.peakIndex];
    const eta = etaFromBreadths(peak);
    const etaSigma = (peak.fwhm * (peak.integralBreadthSigma || 0)) / (peak.integralBreadth ** 2 * (PHI_GAUSSIAN - PHI_LORENTZIAN));
    return { twoTheta: peak.twoTheta, fwhm: peak.fwhm, fwhmSigma: peak.fwhmSigma, eta, etaSigma };
  });

  // FWHM² against (tan²θ, tanθ, 1), weighted by 1/σ(FWHM²)²; fewer than 3 peaks: W alone.
  const p = n >= 3 ? 3 : 1;
  if (n < MIN_GOOD_PEAKS) {
    warnings.push(
      `only ${n} resolved peak${n === 1 ? '' : 's'} of ${standard.name}: the instrument profile is ${p === 1 ? 'a constant width' : 'poorly constrained'}; at least ${MIN_GOOD_PEAKS} peaks spread over 2θ are advised`,
    );
  }
  const design = new Float64Array(n * p);
  const y = new Float64Array(n);
  const weights = new Float64Array(n);
  used.forEach((peak, i) => {
    const row = cagliotiRow(peak.twoTheta);
    for (let j = 0; j < p; j++) design[i * p + j] = p === 3 ? row[j] : 1;
    y[i] = peak.fwhm * peak.fwhm;
    const sigma = Math.max(peak.fwhmSigma, MIN_RELATIVE_FWHM_SIGMA * peak.fwhm);
    weights[i] = 1 / (2 * peak.fwhm * sigma) ** 2;
  });
  const fwhmFit = weightedLinearFit(design, y, weights, p);
  if (!fwhmFit) throw new InputError(`the peaks of ${standard.name} do not constrain the Caglioti widths (all at the same angle?)`);
  const uvw = p === 3 ? Array.from(fwhmFit.coefficients) : [0, 0, fwhmFit.coefficients[0]];
  const cagliotiCovariance = new Array<number>(9).fill(0);
  if (p === 3) for (let i = 0; i < 9; i++) cagliotiCovariance[i] = fwhmFit.covariance[i];
  else cagliotiCovariance[8] = fwhmFit.covariance[0];
  scaleCovarianceByFit(cagliotiCovariance, fwhmFit.chi2, fwhmFit.dof);

  // η(2θ): a low-order polynomial in 2θ (constant, line, or parabola with enough peaks).
  const etaDegree = n >= 6 ? 2 : n >= 3 ? 1 : 0;
  const q = etaDegree + 1;
  const etaDesign = new Float64Array(n * q);
  const etaY = new Float64Array(n);
  const etaW = new Float64Array(n);
  used.forEach((peak, i) => {
    polynomialRow(peak.twoTheta, etaDegree).forEach((v, j) => (etaDesign[i * q + j] = v));
    etaY[i] = peak.eta;
    etaW[i] = 1 / Math.max(peak.etaSigma, MIN_ETA_SIGMA) ** 2;
  });
  const etaFit = weightedLinearFit(etaDesign, etaY, etaW, q);
  const eta = etaFit ? Array.from(etaFit.coefficients) : [used.reduce((s, pk) => s + pk.eta, 0) / n];
  const etaCovariance = etaFit ? Array.from(etaFit.covariance) : [0];
  if (etaFit) scaleCovarianceByFit(etaCovariance, etaFit.chi2, etaFit.dof);

  const lo = Math.min(...used.map((pk) => pk.twoTheta));
  const hi = Math.max(...used.map((pk) => pk.twoTheta));
  const partial: Omit<InstrumentProfile, 'residuals' | 'rms' | 'rmsRelative' | 'etaRms' | 'warnings'> = {
    kind: INSTRUMENT_PROFILE_KIND,
    formatVersion: 1,
    name: options.name,
    date: options.date ?? new Date().toISOString(),
    wavelength: options.wavelength,
    standard: {
      name: standard.name,
      version: options.standardVersion ?? null,
      file: options.standardFile?.file ?? null,
      sha256: options.standardFile?.sha256 ?? null,
    },
    caglioti: { u: uvw[0], v: uvw[1], w: uvw[2] },
    cagliotiCovariance,
    eta,
    etaCovariance,
    twoThetaRangeDeg: [lo, hi],
    zeroShiftDeg,
  };
  const residuals: InstrumentPeakResidual[] = clean.map((a, i) => {
    const peak = used[i];
    const at = instrumentWidthAt(partial, peak.twoTheta);
    return {
      twoTheta: peak.twoTheta,
      hkl: a.hkl,
      fwhm: peak.fwhm,
      fwhmFit: at.fwhm,
      fwhmResidual: peak.fwhm - at.fwhm,
      eta: peak.eta,
      etaFit: at.eta,
      etaResidual: peak.eta - at.eta,
    };
  });
  const rms = Math.sqrt(residuals.reduce((s, r) => s + r.fwhmResidual ** 2, 0) / n);
  const rmsRelative = Math.sqrt(residuals.reduce((s, r) => s + (r.fwhmResidual / r.fwhmFit) ** 2, 0) / n);
  const etaRms = Math.sqrt(residuals.reduce((s, r) => s + r.etaResidual ** 2, 0) / n);
  if (rmsRelative > POOR_FIT_RELATIVE_RMS) {
    warnings.push(
      `poor fit: the FWHM residuals are ${(100 * rmsRelative).toFixed(1)} % rms of the fitted widths; check the standard's peaks (impurity, overlap, wrong wavelength) before using this profile`,
    );
  }
  for (let i = 0; i <= 20; i++) {
    const tt = lo + ((hi - lo) * i) / 20;
    const [a, b, c] = cagliotiRow(tt);
    if (uvw[0] * a + uvw[1] * b + uvw[2] * c <= 0) {
      warnings.push(`the fitted Caglioti curve gives no positive width near ${tt.toFixed(1)}° 2θ; the profile is unphysical there`);
      break;
    }
  }
  if (Math.abs(zeroShiftDeg) > 0.05) warnings.push(`the standard's peaks are offset by ${zeroShiftDeg.toFixed(3)}° 2θ from its reference lines (zero offset or displacement)`);
  return { ...partial, residuals, rms, rmsRelative, etaRms, warnings };
}

function scaleCovarianceByFit(covariance: number[], chi2: number, dof: number): void {
  if (dof <= 0) return;
  const factor = Math.max(1, chi2 / dof);
  for (let i = 0; i < covariance.length; i++) covariance[i] *= factor;
}

const finite = z.number().refine(Number.isFinite, 'must be a finite number');
const profileSchema = z.object({
  kind: z.literal(INSTRUMENT_PROFILE_KIND),
  formatVersion: z.literal(1),
  name: z.string().min(1),
  date: z.string().min(1),
  wavelength: z.object({ label: z.string(), lambda1: finite, lambda2: finite.nullable(), ratio: finite }),
  standard: z.object({ name: z.string(), version: z.number().nullable(), file: z.string().nullable(), sha256: z.string().nullable() }),
  caglioti: z.object({ u: finite, v: finite, w: finite }),
  cagliotiCovariance: z.array(finite).length(9),
  eta: z.array(finite).min(1).max(4),
  etaCovariance: z.array(finite),
  twoThetaRangeDeg: z.tuple([finite, finite]),
  zeroShiftDeg: finite,
  residuals: z.array(
    z.object({
      twoTheta: finite,
      hkl: z.tuple([z.number(), z.number(), z.number()]).nullable(),
      fwhm: finite,
      fwhmFit: finite,
      fwhmResidual: finite,
      eta: finite,
      etaFit: finite,
      etaResidual: finite,
    }),
  ),
  rms: finite,
  rmsRelative: finite,
  etaRms: finite,
  warnings: z.array(z.string()),
});

/** Read an instrument profile JSON file's text, checking every field. */
export function parseInstrumentProfile(text: string, fileName: string): InstrumentProfile {
  let data: unknown;
  try {
    data = JSON.parse(text);
  } catch (err) {
    throw new InputError(`not a JSON file (${err instanceof Error ? err.message : String(err)}); give an instrument profile made by "crystallog instrument"`, { file: fileName });
  }
  const parsed = profileSchema.safeParse(data);
  if (!parsed.success) {
    const issue = parsed.error.issues[0];
    const where = issue.path.length ? `field "${issue.path.join('.')}"` : 'the document';
    throw new InputError(`not a usable instrument profile: ${where} ${issue.message}; make one with "crystallog instrument"`, { file: fileName });
  }
  const profile = parsed.data as InstrumentProfile;
  const q = profile.eta.length;
  if (profile.etaCovariance.length !== q * q) {
    throw new InputError(`not a usable instrument profile: etaCovariance must have ${q * q} entries`, { file: fileName });
  }
  return profile;
}

export function instrumentProfileToJson(profile: InstrumentProfile): string {
  return JSON.stringify(profile, null, 2) + '\n';
}
