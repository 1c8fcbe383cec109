/**
 * Turn whole-pattern analyses (peaks → match → sizes) into the samples of a series.
 */
import type { AnalysisResult } from './analyse.js';
import type { PhaseMatch } from '../match/types.js';
import { InputError } from '../errors.js';
import { exposureHoursFromLabel, temperatureCFromLabel, type SeriesPhaseShare, type SeriesSample } from '../series/series.js';

export interface SeriesLabelling {
  /** One label per analysis (default: the file names). */
  labels?: readonly string[];
  /** Exposure times in hours, one per analysis (default: read from the labels when every label is a time). */
  exposureHours?: readonly number[];
  /** Temperatures in °C, one per analysis (default: read from the labels when every label is a temperature). */
  temperaturesC?: readonly number[];
  /** The expected phase: its verdict is the row's verdict; every other present phase is an impurity. */
  target: string | null;
}

export function seriesSamplesFromAnalyses(results: readonly AnalysisResult[], labelling: SeriesLabelling): SeriesSample[] {
  const n = results.length;
  if (labelling.labels && labelling.labels.length !== n) {
    throw new InputError(`${labelling.labels.length} labels for ${n} files; give one label per file, in the same order`);
  }
  if (labelling.exposureHours && labelling.exposureHours.length !== n) {
    throw new InputError(`${labelling.exposureHours.length} exposure times for ${n} files; give one per file, in the same order`);
  }
  if (labelling.temperaturesC && labelling.temperaturesC.length !== n) {
    throw new InputError(`${labelling.temperaturesC.length} temperatures for ${n} files; give one per file, in the same order`);
  }
  const labels = labelling.labels ?? results.map((r) => r.file);
  const hours = labelling.exposureHours ?? everyOrNull(labels.map(exposureHoursFromLabel));
  const temperatures = labelling.temperaturesC ?? everyOrNull(labels.map(temperatureCFromLabel));
  const target = labelling.target?.toLowerCase() ?? null;

  // A phase is measured by Chung weight fractions when it is quantified wherever it explains peaks;
  // else by the peak area only it explains. A sample where the phase is not needed for the explanation
  // gives it no share (not detected), whatever the basis.
  const weighedEverywhere = new Map<string, boolean>();
  for (const r of results) {
    for (const p of r.match.phases) {
      if (!explains(p) || p.name.toLowerCase() === target) continue;
      weighedEverywhere.set(p.name, (weighedEverywhere.get(p.name) ?? true) && p.weightFraction !== null);
    }
  }

  return results.map((r, i) => {
    const targetMatch = target === null ? null : r.match.phases.find((p) => p.name.toLowerCase() === target);
    const otherPhases: SeriesPhaseShare[] = r.match.phases
      .filter((p) => explains(p) && p.name.toLowerCase() !== target)
      .map((p) =>
        weighedEverywhere.get(p.name) && p.weightFraction !== null
          ? { name: p.name, share: p.weightFraction, basis: 'weight fraction' as const, shareSigma: p.weightFractionSigma ?? null }
          : // A peak-area share has no σ of its own: the growth fit then uses its stated default.
            { name: p.name, share: p.exclusiveAreaShare ?? 0, basis: 'peak area share' as const, shareSigma: null },
      );
    return {
      label: labels[i],
      file: r.file,
      sha256: r.sha256,
      exposureHours: hours ? hours[i] : null,
      temperatureC: temperatures ? temperatures[i] : null,
      verdict: target === null ? null : (targetMatch?.verdict ?? 'not-seen'),
      lowAnglePeaks: r.match.unexplained.filter((u) => u.lowAngle).map((u) => ({ twoTheta: u.twoTheta, d: u.d, height: u.height })),
      otherPhases,
      unexplainedShare: r.match.unexplainedAreaShare,
      size: r.size,
      references: r.references.used,
    };
  });
}

/** Was the phase taken into the sample's explanation? (Results saved before the flag existed: quantified or confirmed.) */
function explains(p: PhaseMatch): boolean {
  if (p.verdict === 'not-seen') return false;
  return p.inExplanation ?? (p.weightFraction !== null || p.verdict === 'present');
}

/** The values when every label gave one, else null. */
function everyOrNull(values: ReadonlyArray<number | null>): number[] | null {
  return values.every((v) => v !== null) ? (values as number[]) : null;
}
