/**
 * Crystallite sizes from fitted peaks: per-peak Scherrer sizes after instrument correction, their
 * weighted mean, the size–strain plots (Halder–Wagner, and Williamson–Hall on the Voigt parts), and the
 * limits of what the widths can tell.
 */
import { InputError } from '../errors.js';
import type { Hkl } from '../model/cell.js';
import type { ReferenceLine } from '../model/reference.js';
import type { FittedPeak } from '../model/peak.js';
import { DEG_TO_RAD } from '../model/units.js';
import type { Wavelength } from '../model/wavelengths.js';
import { assignReferenceLines, type OtherPhaseLine } from './assign.js';
import type { InstrumentProfile } from './instrument.js';
import { instrumentWidthAt, isStandardReference } from './instrument-width.js';
import { weightedMean } from '../numeric/numeric.js';
import { resolveScherrerK, SCHERRER_K_PRESETS, scherrerSizeNm } from './scherrer.js';
import {
  breadthsFromPseudoVoigt,
  pickBreadth,
  PHI_GAUSSIAN,
  PHI_LORENTZIAN,
  sampleBreadths,
  voigtBreadths,
  voigtParts,
  type BreadthKind,
  type CorrectionKind,
  type ProfileBreadths,
} from './voigt.js';
import { halderWagner, type SizeStrainResult } from './halder-wagner.js';
import { STRAIN_SIGNIFICANT_SIGMAS, strainDisagreement, type SizeStrainPoint } from './size-strain-points.js';
import { williamsonHall, type WilliamsonHallResult } from './williamson-hall.js';
import type { GroupFitSize } from './group-fit.js';

export type SizeLimit = 'instrument' | 'overlap' | null;

export interface SizePhase {
  name: string;
  version?: number | null;
  lines: readonly ReferenceLine[];
  /** The reference's tags; a line-profile standard ("standard", or LaB6 / silicon by name) has no size of its own to report. */
  tags?: readonly string[];
}

export interface SizeOptions {
  wavelength: Wavelength;
  /** Instrument profile from a measured standard; without one the breadths are not corrected. */
  instrument?: InstrumentProfile | null;
  /** The pattern is the one the instrument profile was fitted to (its widths are the profile). */
  patternIsInstrumentStandard?: boolean;
  /** The phase sized is the user's target (a line-profile standard then gets a size like any phase). */
  phaseIsTarget?: boolean;
  /** Scherrer K as a number or preset name (default 0.9). */
  k?: number | string;
  breadth?: BreadthKind;
  correction?: CorrectionKind;
  /** Use only the lines of this phase (with hkl); otherwise every fitted peak. */
  phase?: SizePhase | null;
  /** Line-to-peak tolerance, degrees 2θ (default 0.1). */
  toleranceDeg?: number;
  /** Known zero offset, degrees 2θ (default: estimated from the phase's lines). */
  zeroShiftDeg?: number;
  /** A peak whose observed breadth is below (1 + this) × the instrument's gives only a lower bound (default 0.2). */
  resolvableExcess?: number;
  /** Lines of other phases present; peaks they blend with are overlaps. */
  otherLines?: readonly OtherPhaseLine[];
}

export interface PeakSize {
  twoTheta: number;
  hkl: Hkl | null;
  /** Size in nm; the lower bound when limit is "instrument"; null when limit is "overlap". */
  sizeNm: number | null;
  sizeSigmaNm: number | null;
  limit: SizeLimit;
  statement: string;
  observedBreadthDeg: number;
  instrumentBreadthDeg: number | null;
  sampleBreadthDeg: number;
  sampleBreadthSigmaDeg: number;
  /** Part of the breadth's uncertainty that comes from the peak's own fit (not the instrument profile). */
  sampleBreadthSigmaFitDeg: number;
  /** Voigt correction only: size from the sample's Lorentzian part and microstrain from its Gaussian part (single-line analysis). */
  lorentzianSizeNm: number | null;
  gaussianStrain: number | null;
}

export interface ScherrerSummary {
  /** Weighted mean of the resolved peaks' sizes; the lower bound when limit is "instrument"; null when nothing is usable. */
  sizeNm: number | null;
  sizeSigmaNm: number | null;
  /** Uncertainty from the sample's own peak fits only (the instrument profile's share left out). */
  sizeSigmaFitNm: number | null;
  limit: 'instrument' | null;
  peaksUsed: number;
  statement: string;
}

export interface SizeSettings {
  k: number;
  kSource: string;
  breadth: BreadthKind;
  correction: CorrectionKind | 'none';
  wavelength: Wavelength;
  instrument: { name: string; date: string; standard: string } | null;
  phase: { name: string; version: number | null } | null;
  toleranceDeg: number;
  resolvableExcess: number;
}

export interface SizeResult {
  k: number;
  breadth: BreadthKind;
  correction: CorrectionKind | 'none';
  peaks: PeakSize[];
  scherrer: ScherrerSummary;
  /** Williamson–Hall on the Voigt parts; null with williamsonHallReason when it is no result. */
  williamsonHall: WilliamsonHallResult | null;
  williamsonHallReason?: string;
  /** The size–strain result to quote (Halder–Wagner); null with sizeStrainReason when it is no result. */
  sizeStrain: SizeStrainResult | null;
  sizeStrainReason?: string;
  /**
   * Where every line of the phase is overlapped by another phase's: its size from a constrained group fit
   * of the pattern (analysis/overlapped-size.ts), or the reason even that failed. Absent where not tried.
   */
  groupFit?: GroupFitSize | null;
  groupFitReason?: string;
  /** Voigt correction only: mean of the Lorentzian-part sizes and of the Gaussian-part strains. */
  singleLine: { sizeNm: number | null; sizeSigmaNm: number | null; strain: number | null; strainSigma: number | null } | null;
  zeroShiftDeg: number;
  settings: SizeSettings;
  warnings: string[];
  cautions: string[];
}

export const SIZE_CAUTIONS: readonly string[] = [
  'Scherrer and Williamson–Hall sizes are volume-weighted apparent sizes of the coherently diffracting domains; they are not the particle or aggregate size seen in microscopy, which is often 10–1000 times larger.',
  'Where strain or defects also broaden the peaks, a Scherrer size is a lower bound.',
  'Size–strain plots assume one size and one strain for every direction; their sizes and strains depend on the stated convention (K, breadth) and are comparable only within it.',
];

/** How the warning that no peak stands alone begins (the group fit replaces it when it gives a size). */
export const EVERY_PEAK_OVERLAPS = 'every peak';

/**
 * The size to quote: the Scherrer mean of the resolved peaks, else the constrained group fit's where every
 * line was overlapped; null when there is neither.
 */
export function quotedSize(size: SizeResult): { sizeNm: number; sizeSigmaNm: number | null; sizeSigmaFitNm: number | null; limit: 'instrument' | null; method: 'scherrer' | 'constrained-group-fit'; statement: string } | null {
  const s = size.scherrer;
  if (s.sizeNm !== null) return { sizeNm: s.sizeNm, sizeSigmaNm: s.sizeSigmaNm, sizeSigmaFitNm: s.sizeSigmaFitNm, limit: s.limit, method: 'scherrer', statement: s.statement };
  const g = size.groupFit;
  if (g) return { sizeNm: g.sizeNm, sizeSigmaNm: g.sizeSigmaNm, sizeSigmaFitNm: g.sizeSigmaFitNm ?? g.sizeSigmaNm, limit: null, method: 'constrained-group-fit', statement: g.statement };
  return null;
}

/** Floor on a fitted breadth's relative uncertainty (a fit never knows a width better than this in practice). */
const MIN_SIGMA_RELATIVE = 0.002;

type Quad = [number, number, number, number];
/** [sample breadth of the chosen kind, its Lorentzian part, its Gaussian part (both of the chosen kind), its integral breadth], degrees 2θ. */
type SampleWidths = [number, number, number, number];

/**
 * The sample's breadths from v = [observed FWHM, observed integral breadth, instrument FWHM, instrument η]:
 * the chosen kind, its Voigt parts in that kind (de Keijser et al. 1982; from the observed profile when
 * there is no instrument profile), and the integral breadth.
 */
function sampleOf(v: Quad, correction: CorrectionKind | 'none', kind: BreadthKind, withoutGaussian = false): SampleWidths {
  const observed = { fwhm: v[0], integralBreadth: v[1] };
  let sample = correction === 'none' ? { ...observed, parts: null } : sampleBreadths(observed, breadthsFromPseudoVoigt(v[2], v[3]), correction);
  if (withoutGaussian && sample.parts) {
    const lorentzianOnly = { lorentzian: sample.parts.lorentzian, gaussian: 0 };
    sample = { ...voigtBreadths(lorentzianOnly), parts: lorentzianOnly };
  }
  const parts = sample.parts ?? voigtParts(sample);
  const [l, g] = kind === 'fwhm' ? [parts.lorentzian * PHI_LORENTZIAN, parts.gaussian * PHI_GAUSSIAN] : [parts.lorentzian, parts.gaussian];
  return [pickBreadth(sample, kind), l, g, sample.integralBreadth];
}

/**
 * Standard uncertainties of the sample widths by numerical differentiation, split into the peak's fit and
 * the instrument's share. The observed FWHM and integral breadth come from one fit and are correlated
 * (coefficient rho, from the fit's covariance): their contributions are added with that correlation.
 */
function propagate(x: Quad, sx: Quad, rho: number, f: (v: Quad) => SampleWidths): { fit: SampleWidths; instrument: SampleWidths } {
  const gradient: number[][] = [];
  for (let j = 0; j < 4; j++) {
    gradient.push([0, 0, 0, 0]);
    if (!(sx[j] > 0)) continue;
    const isEta = j === 3;
    const h = isEta ? 1e-4 : 1e-4 * x[j];
    const up: Quad = [...x];
    const down: Quad = [...x];
    up[j] = isEta ? Math.min(1, x[j] + h) : x[j] + h;
    down[j] = isEta ? Math.max(0, x[j] - h) : x[j] - h;
    const span = up[j] - down[j];
    if (!(span > 0)) continue;
    const fu = f(up);
    const fd = f(down);
    for (let o = 0; o < 4; o++) gradient[j][o] = ((fu[o] - fd[o]) / span) * sx[j];
  }
  const fit = [0, 1, 2, 3].map((o) => Math.sqrt(Math.max(0, gradient[0][o] ** 2 + gradient[1][o] ** 2 + 2 * rho * gradient[0][o] * gradient[1][o]))) as SampleWidths;
  const instrument = [0, 1, 2, 3].map((o) => Math.hypot(gradient[2][o], gradient[3][o])) as SampleWidths;
  return { fit, instrument };
}

interface Candidate {
  peak: FittedPeak;
  hkl: Hkl | null;
  overlap: boolean;
}

/** A peak's size with the uncertainty shares and Voigt parts the summaries need (not part of the output). */
interface PeakWork {
  size: PeakSize;
  /** Breadth uncertainty from the peak's own fit and from the instrument profile, degrees 2θ. */
  fitSigmaDeg: number;
  instrumentSigmaDeg: number;
  /** The sample's Voigt parts in the chosen breadth kind and its integral breadth, with σ, degrees 2θ. */
  lorentzianDeg: number;
  lorentzianSigmaDeg: number;
  gaussianDeg: number;
  gaussianSigmaDeg: number;
  integralBreadthDeg: number;
  integralBreadthSigmaDeg: number;
}

/** Crystallite sizes from a pattern's fitted peaks. */
export function crystalliteSizes(peaks: readonly FittedPeak[], options: SizeOptions): SizeResult {
  const { k, source: kSource, preset } = resolveScherrerK(options.k);
  const named = typeof options.k === 'string' ? SCHERRER_K_PRESETS.find((p) => p.id === preset) : undefined;
  // A preset named for one breadth is never used with the other without a word (Langford & Wilson 1978).
  const breadth = options.breadth ?? named?.breadth ?? 'fwhm';
  if (named && named.breadth !== breadth) {
    throw new InputError(`the Scherrer K preset "${named.id}" (K = ${named.k}) belongs with the ${named.breadth === 'fwhm' ? 'FWHM' : 'integral breadth'}; it cannot be used with the ${breadth === 'fwhm' ? 'FWHM' : 'integral breadth'}`);
  }
  const instrument = options.instrument ?? null;
  const correction: CorrectionKind | 'none' = instrument ? (options.correction ?? 'voigt') : 'none';
  const lambda = options.wavelength.lambda1;
  const toleranceDeg = options.toleranceDeg ?? 0.1;
  const excess = options.resolvableExcess ?? 0.2;
  const warnings: string[] = [];

  let candidates: Candidate[];
  let zeroShiftDeg = options.zeroShiftDeg ?? 0;
  if (options.phase) {
    const assigned = assignReferenceLines(peaks, options.phase.lines, lambda, {
      toleranceDeg,
      estimateZeroShift: options.zeroShiftDeg === undefined,
      otherLines: options.otherLines,
    });
    if (options.zeroShiftDeg === undefined) zeroShiftDeg = assigned.zeroShiftDeg;
    candidates = assigned.assignments.map((a) => ({ peak: peaks[a.peakIndex], hkl: a.hkl, overlap: a.overlap }));
    if (candidates.length === 0) warnings.push(`no peak of ${options.phase.name} was found within ${toleranceDeg}° 2θ of its lines`);
  } else {
    candidates = peaks.map((peak) => ({ peak, hkl: null, overlap: peak.overlapped }));
  }
  if (!instrument) {
    warnings.push(
      'no instrument profile: the breadths include the instrument\'s own broadening, so these sizes are too small (lower bounds); fit an instrument profile from a measured line-profile standard (LaB6 or silicon) to correct them',
    );
  } else if (Math.abs(instrument.wavelength.lambda1 - lambda) > 1e-3) {
    warnings.push(`the instrument profile "${instrument.name}" was measured at ${instrument.wavelength.lambda1} Å, this pattern at ${lambda} Å`);
  }

  const work: PeakWork[] = [];
  let extrapolated = 0;
  for (const { peak, hkl, overlap } of candidates) {
    const tt = peak.twoTheta;
    const inst = instrument ? instrumentWidthAt(instrument, tt) : null;
    if (inst?.extrapolated) extrapolated++;
    // The observed profile by its FWHM and integral breadth (area/height), whatever the fitter's own η convention.
    const x: Quad = [peak.fwhm, peak.integralBreadth, inst?.fwhm ?? 0, inst?.eta ?? 0];
    const sx: Quad = [
      Math.max(peak.fwhmSigma || 0, MIN_SIGMA_RELATIVE * peak.fwhm),
      Math.max(peak.integralBreadthSigma || 0, MIN_SIGMA_RELATIVE * peak.integralBreadth),
      inst?.fwhmSigma ?? 0,
      inst?.etaSigma ?? 0,
    ];
    const whole = (v: Quad): SampleWidths => sampleOf(v, correction, breadth);
    const [, lorentzianDeg, gaussianDeg, integralBreadthDeg] = whole(x);
    const sig = propagate(x, sx, peak.fwhmBreadthCorrelation ?? 0, whole);
    // A sample Gaussian part below 2σ is not a measured broadening: a pseudo-Voigt fit of a Voigt line
    // leaves a small spurious Gaussian excess over the instrument's, which would bias large sizes low
    // (about −2 % at 150 nm, measured on the true-Voigt simulator). The Scherrer breadth is then the
    // Lorentzian part alone; the size–strain plots keep both parts.
    const gaussianSigmaDeg = Math.hypot(sig.fit[2], sig.instrument[2]);
    const dropGaussian = correction === 'voigt' && !(gaussianDeg > STRAIN_SIGNIFICANT_SIGMAS * gaussianSigmaDeg);
    const f = dropGaussian ? (v: Quad): SampleWidths => sampleOf(v, correction, breadth, true) : whole;
    const [sampleDeg] = f(x);
    const scherrerSig = dropGaussian ? propagate(x, sx, peak.fwhmBreadthCorrelation ?? 0, f) : sig;
    const sampleSigmaDeg = Math.hypot(scherrerSig.fit[0], scherrerSig.instrument[0]);
    const observedBreadthDeg = pickBreadth(peak, breadth);
    const instrumentBreadthDeg = inst ? pickBreadth(inst.breadths, breadth) : null;

    let limit: SizeLimit = null;
    let sizeNm: number | null = null;
    let sizeSigmaNm: number | null = null;
    let statement: string;
    if (overlap) {
      limit = 'overlap';
      statement = 'not resolved from a neighbouring peak; no size';
    } else if (inst && instrumentBreadthDeg !== null && (observedBreadthDeg < (1 + excess) * instrumentBreadthDeg || !(sampleDeg > 0))) {
      limit = 'instrument';
      sizeNm = Math.floor(resolvableSizeNm(inst.breadths, tt, lambda, k, excess, correction as CorrectionKind, breadth));
      statement = `larger than ${sizeNm} nm (breadth within ${Math.round(excess * 100)} % of the instrument's)`;
    } else {
      sizeNm = scherrerSizeNm(sampleDeg, tt, lambda, k);
      sizeSigmaNm = (sizeNm * sampleSigmaDeg) / sampleDeg;
      statement = `${sizeNm.toPrecision(3)} ± ${sizeSigmaNm.toPrecision(2)} nm`;
    }
    const resolved = limit === null;
    const voigtSplit = correction === 'voigt';
    work.push({
      size: {
        twoTheta: tt,
        hkl,
        sizeNm,
        sizeSigmaNm,
        limit,
        statement,
        observedBreadthDeg,
        instrumentBreadthDeg,
        sampleBreadthDeg: sampleDeg,
        sampleBreadthSigmaDeg: sampleSigmaDeg,
        sampleBreadthSigmaFitDeg: scherrerSig.fit[0],
        lorentzianSizeNm: voigtSplit && resolved && lorentzianDeg > 0 ? scherrerSizeNm(lorentzianDeg, tt, lambda, k) : null,
        gaussianStrain: voigtSplit && resolved && Number.isFinite(gaussianDeg) ? (gaussianDeg * DEG_TO_RAD) / (4 * Math.tan((tt / 2) * DEG_TO_RAD)) : null,
      },
      fitSigmaDeg: scherrerSig.fit[0],
      instrumentSigmaDeg: scherrerSig.instrument[0],
      lorentzianDeg,
      lorentzianSigmaDeg: Math.hypot(sig.fit[1], sig.instrument[1]),
      gaussianDeg,
      gaussianSigmaDeg: Math.hypot(sig.fit[2], sig.instrument[2]),
      integralBreadthDeg,
      integralBreadthSigmaDeg: Math.hypot(sig.fit[3], sig.instrument[3]),
    });
  }
  if (extrapolated) warnings.push(`${extrapolated} peak(s) lie more than 5° 2θ outside the standard's peaks; the instrument width there is extrapolated`);

  const sizes = work.map((w) => w.size);
  let scherrer = scherrerSummary(work, instrument !== null);
  const isStandard = options.phase !== null && options.phase !== undefined && isStandardReference({ name: options.phase.name, formula: '', tags: [...(options.phase.tags ?? [])], source: '', lines: [] });
  // A standard the user named as the target is sized as asked (silicon powder made on purpose, say),
  // except on the very pattern the instrument profile came from.
  if (isStandard && (options.patternIsInstrumentStandard || (!instrument && !options.phaseIsTarget))) {
    // A line-profile standard's peaks are the instrument's own breadth: no crystallite size is given for it.
    scherrer = {
      sizeNm: null,
      sizeSigmaNm: null,
      sizeSigmaFitNm: null,
      limit: 'instrument',
      peaksUsed: 0,
      statement: `instrument standard: the widths of ${options.phase!.name} are the instrument's, so no crystallite size is given for it`,
    };
  }
  if (sizes.length > 0 && sizes.every((s) => s.limit === 'overlap')) {
    warnings.push(
      `${EVERY_PEAK_OVERLAPS} ${options.phase ? `of ${options.phase.name} ` : ''}overlaps a neighbouring line (of this phase or of another phase present), which would broaden it: no size; a purer sample or a pattern where some lines stand alone is needed`,
    );
  }
  const atLimit = sizes.filter((s) => s.limit === 'instrument').length;
  if (scherrer.peaksUsed > 0 && atLimit > 0) warnings.push(`${atLimit} peak(s) at the instrument limit were left out of the mean size`);
  const standardWithoutSize = scherrer.statement.startsWith('instrument standard');
  const plotPoints: SizeStrainPoint[] = work
    .filter((w) => w.size.limit === null && w.size.sampleBreadthDeg > 0)
    .map((w) => ({
      twoThetaDeg: w.size.twoTheta,
      lorentzianDeg: w.lorentzianDeg,
      lorentzianSigmaDeg: w.lorentzianSigmaDeg,
      gaussianDeg: w.gaussianDeg,
      gaussianSigmaDeg: w.gaussianSigmaDeg,
      integralBreadthDeg: w.integralBreadthDeg,
      integralBreadthSigmaDeg: w.integralBreadthSigmaDeg,
      hkl: w.size.hkl,
    }));
  const convention = { k, breadth, wavelengthAngstrom: lambda };
  const standardReason = `instrument standard: the widths of ${options.phase?.name ?? 'the standard'} are the instrument's, so no size–strain plot is made`;
  const whOutcome = standardWithoutSize ? { reason: standardReason } : williamsonHall(plotPoints, convention);
  const hwOutcome = standardWithoutSize ? { reason: standardReason } : halderWagner(plotPoints, convention);
  const whResult = 'reason' in whOutcome ? null : whOutcome;
  const hwResult = 'reason' in hwOutcome ? null : hwOutcome;
  if (whResult) warnings.push(...whResult.warnings);
  if (hwResult) warnings.push(...hwResult.warnings);
  if (!instrument && hwResult) warnings.push('no instrument profile: the size–strain plots include the instrument\'s broadening (sizes too small, strains too large)');
  if (whResult?.anisotropy?.detected) warnings.push(whResult.anisotropy.statement);
  const disagreement = whResult && hwResult ? strainDisagreement(hwResult, whResult) : null;
  if (disagreement) warnings.push(disagreement);

  const settings: SizeSettings = {
    k,
    kSource,
    breadth,
    correction,
    wavelength: options.wavelength,
    instrument: instrument ? { name: instrument.name, date: instrument.date, standard: instrument.standard.name } : null,
    phase: options.phase ? { name: options.phase.name, version: options.phase.version ?? null } : null,
    toleranceDeg,
    resolvableExcess: excess,
  };
  return {
    k,
    breadth,
    correction,
    peaks: sizes,
    scherrer,
    williamsonHall: whResult,
    ...('reason' in whOutcome ? { williamsonHallReason: whOutcome.reason } : {}),
    sizeStrain: hwResult,
    ...('reason' in hwOutcome ? { sizeStrainReason: hwOutcome.reason } : {}),
    singleLine: correction === 'voigt' ? singleLineSummary(work) : null,
    zeroShiftDeg,
    settings,
    warnings,
    cautions: [...SIZE_CAUTIONS],
  };
}

/**
 * The largest size the instrument can tell from its own width at this 2θ: the sample breadth left
 * when the observed profile is (1 + excess) times the instrument's.
 */
function resolvableSizeNm(
  instrument: ProfileBreadths,
  twoThetaDeg: number,
  wavelengthAngstrom: number,
  k: number,
  excess: number,
  correction: CorrectionKind,
  breadth: BreadthKind,
): number {
  const threshold = { fwhm: instrument.fwhm * (1 + excess), integralBreadth: instrument.integralBreadth * (1 + excess) };
  const sample = pickBreadth(sampleBreadths(threshold, instrument, correction), breadth);
  return scherrerSizeNm(sample, twoThetaDeg, wavelengthAngstrom, k);
}

function scherrerSummary(work: readonly PeakWork[], corrected: boolean): ScherrerSummary {
  const resolved = work.filter((w) => w.size.limit === null && w.size.sizeNm !== null && (w.size.sizeSigmaNm ?? 0) > 0);
  // The mean is taken over u = 1/D (proportional to the breadth, whose errors are about symmetric): averaging
  // D itself with 1/σ_D² weights (σ_D ∝ D²·σ_β) favours the peaks that came out small and biases the mean low.
  const u = resolved.map((w) => 1 / (w.size.sizeNm as number));
  const relative = (w: PeakWork, sigmaDeg: number): number => sigmaDeg / w.size.sampleBreadthDeg;
  const sigmaU = resolved.map((w, i) => (u[i] * (w.size.sizeSigmaNm as number)) / (w.size.sizeNm as number));
  const plain = resolved.length ? weightedMean(u, sigmaU) : null;
  if (plain) {
    // Peaks that disagree beyond their own errors (a fit's σ is often optimistic) share an extra variance τ²,
    // so one peak with a small σ does not decide the mean (DerSimonian & Laird, Control. Clin. Trials 7, 177 (1986)).
    let sw = 0;
    let sw2 = 0;
    for (const s of sigmaU) {
      sw += 1 / s ** 2;
      sw2 += 1 / s ** 4;
    }
    const tau2 = plain.dof > 0 ? Math.max(0, (plain.chi2 - plain.dof) / (sw - sw2 / sw)) : 0;
    let total = 0;
    let weighted = 0;
    let fitVariance = 0;
    let instrumentShare = 0;
    resolved.forEach((w, i) => {
      const weight = 1 / (sigmaU[i] ** 2 + tau2);
      total += weight;
      weighted += weight * u[i];
      fitVariance += weight ** 2 * ((u[i] * relative(w, w.fitSigmaDeg)) ** 2 + tau2);
      // The instrument profile's uncertainty is shared by all peaks: it enters once, not averaged down.
      instrumentShare += weight * u[i] * relative(w, w.instrumentSigmaDeg);
    });
    const meanU = weighted / total;
    const size = 1 / meanU;
    // σ_D = D·σ_u/u for D = 1/u.
    const sigmaFit = (size * Math.sqrt(fitVariance)) / total / meanU;
    const sigma = Math.hypot(sigmaFit, (size * instrumentShare) / total / meanU);
    return {
      sizeNm: size,
      sizeSigmaNm: sigma,
      sizeSigmaFitNm: sigmaFit,
      limit: null,
      peaksUsed: resolved.length,
      statement: `${size.toPrecision(3)} ± ${sigma.toPrecision(2)} nm from ${resolved.length} peak(s)${corrected ? '' : ' (uncorrected: a lower bound)'}`,
    };
  }
  const bounds = work.filter((w) => w.size.limit === 'instrument' && w.size.sizeNm !== null).map((w) => w.size.sizeNm as number);
  if (bounds.length > 0) {
    const bound = Math.min(...bounds);
    return {
      sizeNm: bound,
      sizeSigmaNm: null,
      sizeSigmaFitNm: null,
      limit: 'instrument',
      peaksUsed: 0,
      statement: `larger than ${bound} nm: beyond the range this instrument resolves`,
    };
  }
  return { sizeNm: null, sizeSigmaNm: null, sizeSigmaFitNm: null, limit: null, peaksUsed: 0, statement: 'no resolved peak: no size' };
}

function singleLineSummary(work: readonly PeakWork[]): SizeResult['singleLine'] {
  const sizeValues: number[] = [];
  const sizeSigmas: number[] = [];
  const strainValues: number[] = [];
  const strainSigmas: number[] = [];
  for (const w of work) {
    const s = w.size;
    if (s.limit !== null) continue;
    if (s.lorentzianSizeNm !== null && w.lorentzianDeg > 0 && w.lorentzianSigmaDeg > 0) {
      sizeValues.push(s.lorentzianSizeNm);
      sizeSigmas.push((s.lorentzianSizeNm * w.lorentzianSigmaDeg) / w.lorentzianDeg);
    }
    if (s.gaussianStrain !== null && w.gaussianSigmaDeg > 0) {
      strainValues.push(s.gaussianStrain);
      strainSigmas.push((w.gaussianSigmaDeg * DEG_TO_RAD) / (4 * Math.tan((s.twoTheta / 2) * DEG_TO_RAD)));
    }
  }
  const size = sizeValues.length ? weightedMean(sizeValues, sizeSigmas) : null;
  const strain = strainValues.length ? weightedMean(strainValues, strainSigmas) : null;
  return { sizeNm: size?.mean ?? null, sizeSigmaNm: size?.sigma ?? null, strain: strain?.mean ?? null, strainSigma: strain?.sigma ?? null };
}
