import { isInputError } from '../core/errors.js';
import { seriesSamplesFromAnalyses } from '../core/analysis/series-from-analysis.js';
import { analyzeSeries, type SeriesResult } from '../core/series/series.js';
import { EVERY_PEAK_OVERLAPS } from '../core/size/sizes.js';
import type { GrowthView, SeriesRowView, SeriesView } from '../api/contract.js';
import type { AnalysisResult } from '../core/analysis/analyse.js';
import type { Workspace } from './workspace.js';
import type { SampleRecord } from '../node/project-store.js';

type SeriesAxis = SeriesView['by'];

/** What each way of ordering a series reads from a sample: its value (null: not in the series) and its label. */
const AXES: Record<SeriesAxis, { valueOf: (r: SampleRecord) => number | null; labelOf: (r: SampleRecord) => string; missing: string }> = {
  variant: { valueOf: () => null, labelOf: (r) => r.variant!, missing: 'No analysed sample has a workup variant yet: set one in Samples.' },
  time: { valueOf: (r) => r.exposureHours, labelOf: (r) => `${r.exposureHours} h`, missing: 'No analysed sample has an exposure time yet: set one in Samples.' },
  temperature: { valueOf: (r) => r.temperatureC, labelOf: (r) => `${r.temperatureC} °C`, missing: 'No analysed sample has a temperature yet: set one in Samples.' },
};

/**
 * Samples of the open project as a series: by workup variant (in the order first seen), by exposure
 * time or by temperature (ascending), with verdicts, sizes ± σ, the size comparisons (pairs for
 * variants, the trend for an ordered series) and the growth of other phases over time, from the
 * series module.
 */
export function buildSeriesView(workspace: Workspace, by: SeriesAxis): SeriesView {
  const target = workspace.documentInfo().settings.target;
  const axis = AXES[by];
  const members = workspace
    .analyses()
    .filter(({ record, result }) => result !== null && (by === 'variant' ? record.variant !== null : axis.valueOf(record) !== null))
    .sort((a, b) => (axis.valueOf(a.record) ?? 0) - (axis.valueOf(b.record) ?? 0));
  const notes: string[] = [];
  if (members.length === 0) {
    notes.push(axis.missing);
    return { by, rows: [], comparisons: [], growth: [], notes };
  }
  if (!target) notes.push('No target phase is set, so verdicts and impurity shares are not given; set the target in Settings.');
  const labels = uniqueLabels(members.map(({ record }) => axis.labelOf(record)));
  const results = members.map((m) => m.result as AnalysisResult);
  let series: SeriesResult | null = null;
  try {
    const values = members.map((m) => axis.valueOf(m.record) as number);
    const ordering = by === 'time' ? { exposureHours: values } : by === 'temperature' ? { temperaturesC: values } : {};
    const samples = seriesSamplesFromAnalyses(results, { labels, target, ...ordering });
    series = analyzeSeries(samples);
    notes.push(...series.warnings);
  } catch (err) {
    if (!isInputError(err)) throw err;
    notes.push(`${err.message}. Re-analyse the samples (Settings → Save and re-analyse) to compare them.`);
  }
  const rows: SeriesRowView[] = members.map(({ record, summary, result }, i) => {
    const targetPhase = target ? result!.match.phases.find((p) => p.name.toLowerCase() === target.toLowerCase() && p.verdict !== 'not-seen') : undefined;
    const others = series?.rows[i]?.otherPhases ?? [];
    return {
      sampleId: record.id,
      name: summary.name,
      label: labels[i]!,
      hours: record.exposureHours,
      temperature: record.temperatureC,
      verdict: summary.verdict,
      lowAngleCount: summary.lowAngleCount,
      impurityShare: targetPhase ? Math.max(0, 1 - targetPhase.explainedAreaShare) : null,
      otherPhases: others.map((o) => `${o.name} ${(100 * o.share).toFixed(0)} %${o.basis === 'peak area share' ? ' of peak area' : ''}`).join(', '),
      sizeNm: summary.sizeNm,
      sizeSigmaNm: summary.sizeSigmaNm,
      sizeMethod: summary.sizeMethod ?? null,
      sizeNote: summary.sizeNm !== null && summary.sizeSigmaNm !== null ? null : sizeNoteOf(result),
    };
  });
  const comparisons = (series?.comparison.pairs ?? []).filter((p) => p.testable).map((p) => ({ a: p.a, b: p.b, differs: p.differs, test: 'difference on shared reflections, Holm-adjusted', detail: p.statement }));
  const trend = series?.comparison.trend;
  if (trend) comparisons.push({ a: 'first sample', b: `last (trend over ${by === 'temperature' ? 'temperature' : 'time'})`, differs: trend.differs, test: 'weighted regression slope', detail: trend.statement });
  if (series && comparisons.length) notes.push(`Size comparison: ${series.comparison.test}.`);
  return { by, rows, comparisons, growth: by === 'time' && series ? series.growth.map(growthView) : [], notes };
}

/** A few words on why a sample has no size, or only a bound. */
function sizeNoteOf(result: AnalysisResult | null): string | null {
  if (!result) return 'not analysed';
  if (result.size.groupFitReason) return result.size.groupFitReason;
  if (result.size.warnings.some((w) => w.startsWith(EVERY_PEAK_OVERLAPS))) return 'every peak overlaps another line';
  return result.size.scherrer.statement;
}

function growthView(g: SeriesResult['growth'][number]): GrowthView {
  const fit = g.analysis.fit;
  const maxHours = Math.max(...g.points.map((p) => p.timeHours), 1);
  const curve: GrowthView['curve'] = [];
  if (fit && g.analysis.supported) {
    for (let i = 0; i <= 60; i++) {
      const t = (maxHours * i) / 60;
      // f(t) = f∞ (1 − exp(−(k t)^n)), the fitted growth law (first order: n = 1).
      curve.push({ hours: t, share: t <= 0 ? 0 : fit.plateau * (1 - Math.exp(-Math.pow(fit.rateConstantPerHour * t, fit.exponent))) });
    }
  }
  return { phase: g.phase, basis: g.basis, points: g.points.map((p) => ({ hours: p.timeHours, share: p.share })), curve, statement: g.analysis.statement };
}

/** Labels must be unique in a series: a repeated one gets " (2)", " (3)"... */
function uniqueLabels(labels: string[]): string[] {
  const seen = new Map<string, number>();
  return labels.map((label) => {
    const n = (seen.get(label) ?? 0) + 1;
    seen.set(label, n);
    return n === 1 ? label : `${label} (${n})`;
  });
}
