/**
 * A series of samples (workup variants, exposure times or temperatures) analysed with one instrument
 * profile and one set of settings: a row per sample, size comparisons (pairs, or the trend of an
 * ordered series), and the growth of other phases' shares over exposure time.
 */
import { InputError } from '../errors.js';
import type { SizeResult, SizeSettings } from '../size/sizes.js';
import { quotedSize, SIZE_CAUTIONS } from '../size/sizes.js';
import { compareSizes, DEFAULT_ALPHA, type ReflectionSize, type SizeComparisonResult } from './compare.js';
import { fitGrowth, type GrowthAnalysis } from './kinetics.js';

export interface SeriesPhaseShare {
  name: string;
  /** Share of the sample, 0–1. */
  share: number;
  /**
   * What the share measures: "weight fraction" (Chung's matrix flushing, needs every reference's RIR)
   * or "peak area share": the share of the measured peak area on peaks only this phase explains
   * (peaks it shares with the target or another phase are not counted, so it is a lower bound).
   */
  basis: 'weight fraction' | 'peak area share';
  /** σ of the share, when known (e.g. the match's weightFractionSigma); the growth fit weights by it. */
  shareSigma?: number | null;
}

export interface SeriesSample {
  label: string;
  file: string;
  sha256?: string;
  /** Exposure time in hours, for exposure series. */
  exposureHours?: number | null;
  /** Temperature in °C (annealing, drying or measuring temperature), for temperature series. */
  temperatureC?: number | null;
  /** Samples with the same group are replicate preparations of one variant (their spread measures reproducibility). */
  replicateGroup?: string | null;
  /** The target phase's verdict, or null without a target. */
  verdict: string | null;
  /** Unexplained peaks below the target's first line. */
  lowAnglePeaks: Array<{ twoTheta: number; d: number; height: number }>;
  /** Shares of the phases other than the target that were found present (impurities, products). */
  otherPhases: SeriesPhaseShare[];
  /** Share of the measured peak area that no present phase explains, 0–1. */
  unexplainedShare?: number | null;
  size: SizeResult;
  /** Reference names and versions the sample's analysis used. */
  references?: Array<{ name: string; version: number }>;
}

export interface SeriesOptions {
  /** Significance level of the size comparisons (default 0.05). */
  alpha?: number;
  /** Relative size spread between preparations, when no replicates measure it (default 2 %, see compare.ts). */
  preparationSpreadRelative?: number;
  /** Pairwise tests: 'all' (default for variants) or 'none' (default for a time series, which gets a trend test). */
  pairs?: 'all' | 'none';
}

/**
 * Each resolved reflection's size with the σ of its own fit (size ∝ 1/breadth), keyed by hkl; a size from
 * the constrained group fit stands as one entry of its own, so it is compared only with another such size.
 */
function reflectionSizes(size: SizeResult): ReflectionSize[] {
  if (size.scherrer.sizeNm === null && size.groupFit) return [{ hkl: 'constrained group fit', sizeNm: size.groupFit.sizeNm, sizeSigmaNm: size.groupFit.sizeSigmaNm }];
  return size.peaks
    .filter((p) => p.limit === null && p.sizeNm !== null && p.sampleBreadthDeg > 0)
    .map((p) => ({
      hkl: p.hkl ? p.hkl.join(' ') : null,
      sizeNm: p.sizeNm as number,
      sizeSigmaNm: ((p.sizeNm as number) * p.sampleBreadthSigmaFitDeg) / p.sampleBreadthDeg,
    }));
}

export interface SeriesRow {
  label: string;
  file: string;
  /** The phase whose lines gave the sizes (null: every fitted peak). */
  sizePhase: string | null;
  exposureHours: number | null;
  temperatureC: number | null;
  verdict: string | null;
  lowAnglePeaks: SeriesSample['lowAnglePeaks'];
  otherPhases: SeriesPhaseShare[];
  scherrer: { sizeNm: number | null; sizeSigmaNm: number | null; limit: 'instrument' | null; statement: string };
  /** Where every line of the phase was overlapped: the constrained group fit's size. */
  groupFit: { sizeNm: number; sizeSigmaNm: number; statement: string } | null;
  williamsonHall: { sizeNm: number | null; sizeSigmaNm: number | null; strain: number | null; strainSigma: number | null; strainDetected: boolean; r2: number | null; limit: 'instrument' | null } | null;
  warnings: string[];
}

export interface SeriesGrowth {
  phase: string;
  basis: SeriesPhaseShare['basis'] | 'unexplained peak area share';
  points: Array<{ label: string; timeHours: number; share: number; shareSigma?: number | null }>;
  analysis: GrowthAnalysis;
}

export interface SeriesResult {
  /** exposure: every sample has a time; temperature: every sample has a temperature (and not all a time). */
  kind: 'workup' | 'exposure' | 'temperature';
  rows: SeriesRow[];
  comparison: SizeComparisonResult;
  growth: SeriesGrowth[];
  /** The settings every sample was analysed with (checked to be one and the same). */
  settings: SizeSettings;
  references: Array<{ name: string; version: number }>;
  warnings: string[];
  cautions: string[];
}

function settingsKey(s: SizeSettings): string {
  return JSON.stringify({
    k: s.k,
    breadth: s.breadth,
    correction: s.correction,
    lambda: s.wavelength.lambda1,
    instrument: s.instrument,
    toleranceDeg: s.toleranceDeg,
    resolvableExcess: s.resolvableExcess,
  });
}

/**
 * Compare the samples of a series. Throws InputError when they were not analysed alike (one
 * instrument profile, one K, breadth, correction, wavelength and tolerance for all).
 */
export function analyzeSeries(samples: readonly SeriesSample[], options: SeriesOptions = {}): SeriesResult {
  if (samples.length === 0) throw new InputError('a series needs at least one sample');
  const labels = new Set<string>();
  for (const s of samples) {
    if (labels.has(s.label)) throw new InputError(`the label "${s.label}" is used twice in the series; give every sample its own label`);
    labels.add(s.label);
  }
  const reference = samples[0].size.settings;
  const key = settingsKey(reference);
  for (const s of samples) {
    if (settingsKey(s.size.settings) !== key) {
      throw new InputError(
        `sample "${s.label}" (${s.file}) was analysed with other settings or another instrument profile than "${samples[0].label}"; a series needs one set for all`,
      );
    }
  }

  const rows: SeriesRow[] = samples.map((s) => {
    const wh = s.size.williamsonHall;
    return {
      label: s.label,
      file: s.file,
      sizePhase: s.size.settings.phase?.name ?? null,
      exposureHours: s.exposureHours ?? null,
      temperatureC: s.temperatureC ?? null,
      verdict: s.verdict,
      lowAnglePeaks: s.lowAnglePeaks,
      otherPhases: s.otherPhases,
      scherrer: {
        sizeNm: s.size.scherrer.sizeNm,
        sizeSigmaNm: s.size.scherrer.sizeSigmaNm,
        limit: s.size.scherrer.limit,
        statement: s.size.scherrer.statement,
      },
      groupFit: s.size.groupFit ? { sizeNm: s.size.groupFit.sizeNm, sizeSigmaNm: s.size.groupFit.sizeSigmaNm, statement: s.size.groupFit.statement } : null,
      williamsonHall: wh
        ? { sizeNm: wh.sizeNm, sizeSigmaNm: wh.sizeSigmaNm, strain: wh.strain, strainSigma: wh.strainSigma, strainDetected: wh.strainDetected, r2: wh.r2, limit: wh.limit }
        : null,
      warnings: s.size.warnings,
    };
  });

  const timed = samples.filter((s) => isNumber(s.exposureHours));
  const heated = samples.filter((s) => isNumber(s.temperatureC));
  const kind: SeriesResult['kind'] =
    samples.length > 1 && timed.length === samples.length ? 'exposure' : samples.length > 1 && heated.length === samples.length ? 'temperature' : 'workup';
  const orderOf = (s: SeriesSample): number | null => (kind === 'exposure' ? (s.exposureHours as number) : kind === 'temperature' ? (s.temperatureC as number) : null);

  const comparison = compareSizes(
    samples.map((s) => {
      const quoted = quotedSize(s.size);
      return {
        label: s.label,
        sizeNm: quoted?.sizeNm ?? null,
        sizeSigmaNm: quoted ? (quoted.sizeSigmaFitNm ?? quoted.sizeSigmaNm) : null,
        lowerBound: quoted?.limit === 'instrument',
        phase: s.size.settings.phase?.name ?? null,
        reflections: reflectionSizes(s.size),
        replicateGroup: s.replicateGroup ?? null,
        order: orderOf(s),
      };
    }),
    {
      alpha: options.alpha ?? DEFAULT_ALPHA,
      orderUnit: kind === 'temperature' ? '°C' : 'h',
      ...(options.preparationSpreadRelative !== undefined ? { preparationSpreadRelative: options.preparationSpreadRelative } : {}),
      ...(options.pairs ? { pairs: options.pairs } : {}),
    },
  );

  const growth = kind === 'exposure' ? growthOfOtherPhases(timed) : [];

  const warnings: string[] = [];
  if (kind === 'workup' && timed.length > 0 && timed.length < samples.length) warnings.push('only some samples have an exposure time: the series is treated as workup variants');
  if (kind === 'workup' && heated.length > 0 && heated.length < samples.length) warnings.push('only some samples have a temperature: the series is treated as workup variants');
  const byArea = [...new Set(samples.flatMap((s) => s.otherPhases.filter((p) => p.basis === 'peak area share').map((p) => p.name)))];
  if (byArea.length > 0) {
    // One warning for all such phases (a long series may name many).
    const shown = byArea.length > MAX_NAMES_IN_WARNING ? `${byArea.slice(0, MAX_NAMES_IN_WARNING).join(', ')} and ${byArea.length - MAX_NAMES_IN_WARNING} more phases are` : byArea.length === 1 ? `${byArea[0]} is` : `${byArea.join(', ')} are`;
    warnings.push(
      `${shown} given as a share of the measured peak area on the peaks only that phase explains (lines shared with other phases not counted): a lower bound, not a weight fraction; references with a reference intensity ratio (RIR) give weight fractions`,
    );
  }
  const references = mergeReferences(samples);
  return { kind, rows, comparison, growth, settings: reference, references, warnings, cautions: [...SIZE_CAUTIONS] };
}

function isNumber(value: number | null | undefined): value is number {
  return typeof value === 'number' && Number.isFinite(value);
}

/** Phases named one by one in a warning before the rest are counted. */
const MAX_NAMES_IN_WARNING = 5;

function growthOfOtherPhases(samples: readonly SeriesSample[]): SeriesGrowth[] {
  const names = new Map<string, SeriesPhaseShare['basis']>();
  for (const s of samples) for (const p of s.otherPhases) if (!names.has(p.name)) names.set(p.name, p.basis);
  const out: SeriesGrowth[] = [];
  for (const [phase, basis] of names) {
    // A phase not found in a sample counts as a share of 0 there.
    const points = samples.map((s) => {
      const found = s.otherPhases.find((p) => p.name === phase);
      return { label: s.label, timeHours: s.exposureHours as number, share: found?.share ?? 0, shareSigma: found?.shareSigma ?? null };
    });
    out.push({ phase, basis, points, analysis: fitGrowth(points) });
  }
  if (samples.every((s) => typeof s.unexplainedShare === 'number')) {
    const points = samples.map((s) => ({ label: s.label, timeHours: s.exposureHours as number, share: s.unexplainedShare as number }));
    if (points.some((p) => p.share > 0)) {
      out.push({ phase: 'unexplained peaks', basis: 'unexplained peak area share', points, analysis: fitGrowth(points) });
    }
  }
  return out;
}

function mergeReferences(samples: readonly SeriesSample[]): Array<{ name: string; version: number }> {
  const seen = new Map<string, { name: string; version: number }>();
  for (const s of samples) for (const r of s.references ?? []) seen.set(`${r.name}\u0000${r.version}`, r);
  return [...seen.values()].sort((a, b) => a.name.localeCompare(b.name) || a.version - b.version);
}

/**
 * Exposure time in hours from a label such as "0 h", "30 min", "2h", "1.5 d", "45 s"; null when the
 * label names no time.
 */
export function exposureHoursFromLabel(label: string): number | null {
  const m = /^\s*(\d+(?:[.,]\d+)?)\s*(s|sec|min|m|h|hr|hrs|hours?|d|days?)\s*$/i.exec(label);
  if (!m) return null;
  const value = Number(m[1].replace(',', '.'));
  const unit = m[2].toLowerCase();
  if (unit.startsWith('s')) return value / 3600;
  if (unit === 'min' || unit === 'm') return value / 60;
  if (unit.startsWith('d')) return value * 24;
  return value;
}

/**
 * Temperature in °C from a label such as "150 °C", "150C", "150 degC" or "423 K"; null when the label
 * names no temperature.
 */
export function temperatureCFromLabel(label: string): number | null {
  const m = /^\s*(-?\d+(?:[.,]\d+)?)\s*(°\s*C|deg\s*C|C|K)\s*$/i.exec(label);
  if (!m) return null;
  const value = Number(m[1].replace(',', '.'));
  const celsius = m[2].toUpperCase() === 'K' ? value - 273.15 : value;
  return celsius >= -273.15 ? celsius : null;
}
