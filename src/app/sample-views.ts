/**
 * What the screens see of a sample: its one-line summary, its peak table joined to the match by peak
 * index, its size and instrument views, and whether its saved result is still current.
 */
import type { AnalysisResult } from '../core/analysis/analyse.js';
import { lowAnglePeaks, sampleVerdict, type LowAnglePeak } from '../core/analysis/verdict.js';
import { quotedSize } from '../core/size/sizes.js';
import { instrumentWidthAt, type InstrumentProfile } from '../core/size/instrument.js';
import type { InstrumentView, PeakView, ProjectSettings, SampleSummary, SizeView } from '../api/contract.js';
import type { SampleRecord } from '../node/project-store.js';

/** What an analysis was computed from: compared with the project as it is now to tell a stale result. */
export interface AnalysisBasis {
  settings: ProjectSettings;
  /** Name and date of the instrument profile used, or null. */
  instrument: string | null;
  libraryDigest: string;
}

/** What is saved per analysis: the summary shown in lists, the analysis result and what it was computed from. */
export interface SavedAnalysis {
  summary: SampleSummary;
  result: AnalysisResult | null;
  basis?: AnalysisBasis;
}

const SETTING_NAMES: Record<keyof ProjectSettings, string> = {
  wavelength: 'wavelength',
  toleranceDeg: 'matching tolerance',
  scherrerK: 'Scherrer K',
  breadth: 'peak breadth',
  correction: 'instrument correction',
  backgroundHalfWidthDeg: 'background clipping half-width',
  target: 'target phase',
  internalStandard: 'internal standard',
  internalStandardPercent: 'internal standard weight',
};

export function instrumentIdentity(profile: InstrumentProfile | null): string | null {
  return profile ? `${profile.name} (${profile.date})` : null;
}

/** Why a saved result no longer matches the project (a sentence), or null when it is current. */
export function staleReason(saved: SavedAnalysis, now: AnalysisBasis): string | null {
  if (!saved.result) return null;
  const then = saved.basis;
  if (!then) return 'analysed by an earlier version of Crystallog, which did not record its settings; analyse again to refresh';
  // A setting added after an analysis was saved reads as null (its default) in the old basis.
  const changed = (Object.keys(SETTING_NAMES) as Array<keyof ProjectSettings>).filter((key) => (then.settings[key] ?? null) !== (now.settings[key] ?? null)).map((key) => SETTING_NAMES[key]);
  if (then.instrument !== now.instrument) changed.push('instrument profile');
  if (then.libraryDigest !== now.libraryDigest) changed.push('reference library');
  return changed.length ? `the ${joinWords(changed)} changed since this analysis; analyse again to refresh` : null;
}

function joinWords(words: string[]): string {
  return words.length <= 1 ? (words[0] ?? '') : `${words.slice(0, -1).join(', ')} and ${words.at(-1)}`;
}

export function baseSummary(record: SampleRecord): SampleSummary {
  return {
    id: record.id,
    name: record.label ?? record.fileName,
    fileName: record.fileName,
    variant: record.variant,
    hours: record.exposureHours,
    temperature: record.temperatureC,
    simulated: /simulated/i.test(record.fileName),
    verdict: 'not analysed',
    phase: null,
    lowAngleCount: 0,
    unexplainedCount: 0,
    sizeNm: null,
    sizeSigmaNm: null,
    problem: null,
    analysisMs: null,
    stale: false,
    staleReason: null,
  };
}

/** The size a sample is listed with (the Scherrer mean, else the constrained group fit's), and how it was had. */
function quotedSizeOf(result: AnalysisResult): Pick<SampleSummary, 'sizeNm' | 'sizeSigmaNm' | 'sizeMethod'> {
  const quoted = quotedSize(result.size);
  return { sizeNm: quoted?.sizeNm ?? null, sizeSigmaNm: quoted?.sizeSigmaNm ?? null, sizeMethod: quoted?.method ?? null };
}

export function summaryFromResult(record: SampleRecord, result: AnalysisResult, target: string | null, analysisMs: number): SampleSummary {
  const { verdict, phase } = sampleVerdict(result.match, target);
  return {
    ...baseSummary(record),
    verdict,
    phase: phase ? { name: phase.name, verdict: phase.verdict, score: phase.score } : null,
    lowAngleCount: lowAnglePeaks(result.match, target).length,
    unexplainedCount: result.match.unexplained.length,
    ...quotedSizeOf(result),
    analysisMs,
  };
}

/**
 * The peak table: each peak with the phase whose line it carries (the first phase judged present that
 * claims it), joined by peak index, never by position.
 */
export function peakViews(result: AnalysisResult, lowAngle: readonly LowAnglePeak[]): PeakView[] {
  const phaseOfPeak = new Map<number, string>();
  for (const phase of result.match.phases) {
    if (phase.verdict === 'not-seen') continue;
    for (const line of phase.lines) if (!phaseOfPeak.has(line.peakIndex)) phaseOfPeak.set(line.peakIndex, phase.name);
  }
  const lowAngleIndex = new Set(lowAngle.map((p) => p.peakIndex));
  const unexplainedIndex = new Set(result.match.unexplained.map((u) => u.peakIndex));
  return result.peaks.map((p, index) => ({
    index,
    twoTheta: p.twoTheta,
    twoThetaSigma: p.twoThetaSigma,
    d: p.d,
    height: p.height,
    area: p.area,
    fwhm: p.fwhm,
    integralBreadth: p.integralBreadth,
    eta: p.eta,
    phase: phaseOfPeak.get(index) ?? null,
    lowAngle: lowAngleIndex.has(index),
    unexplained: unexplainedIndex.has(index),
  }));
}

export function sizeView(result: AnalysisResult): SizeView {
  const size = result.size;
  const wh = size.williamsonHall as { sizeNm?: number | null; strain?: number; strainDetected?: boolean; strainStatement?: string; r2?: number } | null;
  return {
    k: size.k,
    breadth: size.breadth,
    correction: size.correction,
    phase: result.settings.sizePhase,
    instrumentCorrected: size.settings.instrument !== null,
    peaks: size.peaks.map((p) => ({ twoTheta: p.twoTheta, hkl: p.hkl, sizeNm: p.sizeNm, sizeSigmaNm: p.sizeSigmaNm, limit: p.limit, observedBreadthDeg: p.observedBreadthDeg, instrumentBreadthDeg: p.instrumentBreadthDeg, sampleBreadthDeg: p.sampleBreadthDeg, statement: p.statement })),
    scherrer: size.scherrer.sizeNm !== null ? { sizeNm: size.scherrer.sizeNm, sizeSigmaNm: size.scherrer.sizeSigmaNm ?? Number.NaN } : null,
    groupFit: size.groupFit ? { sizeNm: size.groupFit.sizeNm, sizeSigmaNm: size.groupFit.sizeSigmaNm, statement: size.groupFit.statement, convention: size.groupFit.convention } : null,
    groupFitReason: size.groupFitReason ?? null,
    williamsonHall:
      wh && typeof wh.strain === 'number'
        ? { sizeNm: wh.sizeNm ?? null, strain: wh.strain, strainDetected: wh.strainDetected ?? true, strainStatement: wh.strainStatement ?? `microstrain ${wh.strain.toExponential(2)}`, r2: wh.r2 ?? Number.NaN }
        : null,
    sizeStrain: size.sizeStrain
      ? {
          method: size.sizeStrain.method,
          convention: size.sizeStrain.convention,
          sizeNm: size.sizeStrain.sizeNm,
          sizeSigmaNm: size.sizeStrain.sizeSigmaNm,
          strain: size.sizeStrain.strain,
          strainSigma: size.sizeStrain.strainSigma,
          strainDetected: size.sizeStrain.strainDetected,
          statement: size.sizeStrain.statement,
          r2: size.sizeStrain.r2,
          reflections: size.sizeStrain.reflections,
          points: size.sizeStrain.plot.map((q) => ({ twoTheta: q.twoThetaDeg, x: q.x, y: q.y, sigmaY: q.sigmaY })),
          slope: size.sizeStrain.slope,
          intercept: size.sizeStrain.intercept,
        }
      : null,
    sizeStrainReason: size.sizeStrain ? null : (size.sizeStrainReason ?? null),
    notes: [size.scherrer.statement, ...size.warnings].filter((s) => !!s),
  };
}

/** The instrument profile as the screen draws it: the fitted widths and the Caglioti curve through them. */
export function instrumentView(profile: InstrumentProfile, sampleName: string): InstrumentView {
  const [lo, hi] = profile.twoThetaRangeDeg;
  const from = Math.max(2, lo - 10);
  const to = Math.min(150, hi + 10);
  const curve: InstrumentView['curve'] = [];
  for (let i = 0; i <= 120; i++) {
    const tt = from + ((to - from) * i) / 120;
    curve.push({ twoTheta: tt, fwhm: instrumentWidthAt(profile, tt).fwhm });
  }
  return {
    standard: profile.standard.name,
    sampleName,
    u: profile.caglioti.u,
    v: profile.caglioti.v,
    w: profile.caglioti.w,
    points: profile.residuals.map((r) => ({ twoTheta: r.twoTheta, fwhm: r.fwhm, fwhmSigma: Math.abs(r.fwhmResidual), used: true })),
    curve,
    notes: profile.warnings,
  };
}

/** Float32 little-endian base64: display precision is plenty, and it keeps a 50 000-point pattern small. */
export function floats(values: Float64Array | Float32Array): string {
  const f32 = values instanceof Float32Array ? values : Float32Array.from(values);
  return Buffer.from(f32.buffer, f32.byteOffset, f32.byteLength).toString('base64');
}
