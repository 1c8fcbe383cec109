import { compositionOf } from '../api/composition.js';
import type { PatternFigure } from '../core/report/figures.js';
import { REPORT_CAUTIONS, renderCsvReport, renderHtmlReport, reportFileBase, type PaperSize, type ReportInput, type ReportSample } from '../core/report/report.js';
import type { ExportedFile } from '../api/contract.js';
import { lowAnglePeaks } from '../core/analysis/verdict.js';
import { buildSeriesView } from './series-view.js';
import type { Workspace } from './workspace.js';

/** Everything a report needs, gathered from the open project. */
export function reportInput(workspace: Workspace, appVersion: string, paper: PaperSize = 'A4'): ReportInput {
  const info = workspace.documentInfo();
  const s = info.settings;
  const references = new Map<string, number>();
  const samples: ReportSample[] = workspace.analyses().map(({ record, summary, result, referencesUsed }) => {
    for (const r of referencesUsed) references.set(r.name, r.version);
    const wh = result?.size.williamsonHall as { sizeNm?: number | null; strain?: number; strainDetected?: boolean } | null | undefined;
    const phase = summary.phase ? result?.match.phases.find((p) => p.name === summary.phase!.name) : undefined;
    return {
      name: summary.name,
      fileName: record.fileName,
      sha256: record.sha256,
      variant: record.variant,
      hours: record.exposureHours,
      temperature: record.temperatureC,
      simulated: summary.simulated,
      verdict: summary.problem ? `not analysed: ${summary.problem}` : summary.verdict,
      phase: summary.phase?.name ?? null,
      phaseVerdict: summary.phase?.verdict ?? null,
      score: summary.phase?.score ?? null,
      lowAngle: result ? lowAnglePeaks(result.match, s.target) : [],
      unexplainedCount: summary.unexplainedCount,
      sizeNm: summary.sizeNm,
      sizeSigmaNm: summary.sizeSigmaNm,
      // A size from the constrained group fit (every line overlapped) is labelled as such beside the number.
      sizeLimit: summary.sizeMethod === 'constrained-group-fit' ? 'constrained group fit: every line overlaps another phase' : (result?.size.scherrer.limit ?? null),
      whSizeNm: wh?.sizeNm ?? null,
      whStrain: typeof wh?.strain === 'number' ? wh.strain : null,
      whStrainDetected: wh?.strainDetected ?? true,
      wavelength: result?.settings.wavelength ?? s.wavelength,
      reasons: [...(result?.match.reasons ?? []), ...(phase?.reasons ?? [])],
      warnings: result?.warnings ?? [],
      figure: result ? patternFigure(workspace, record.id) : null,
      composition: result ? compositionOf(result.match, result.crystallinity ?? null) : { parts: [], notes: [] },
      sizeStrain: result?.size.sizeStrain
        ? {
            points: result.size.sizeStrain.plot.map((q) => ({ twoTheta: q.twoThetaDeg, x: q.x, y: q.y, sigmaY: q.sigmaY })),
            slope: result.size.sizeStrain.slope,
            intercept: result.size.sizeStrain.intercept,
            statement: result.size.sizeStrain.statement,
            convention: result.size.sizeStrain.convention,
          }
        : null,
    };
  });
  const variants = buildSeriesView(workspace, 'variant');
  const exposure = buildSeriesView(workspace, 'time');
  const temperatures = buildSeriesView(workspace, 'temperature');
  const seriesRows = (view: typeof exposure) => view.rows.map((r) => ({ label: r.label, hours: r.hours, temperature: r.temperature, sizeNm: r.sizeNm, sizeSigmaNm: r.sizeSigmaNm }));
  const instrument = info.instrument;
  return {
    appVersion,
    createdAt: new Date().toISOString(),
    projectName: info.name,
    demo: info.demo,
    truth: info.truth,
    settings: [
      ['wavelength', s.wavelength],
      ['matching tolerance (° 2θ)', String(s.toleranceDeg)],
      ['target phase', s.target ?? 'none'],
      ['Scherrer K', String(s.scherrerK)],
      ['breadth', s.breadth === 'fwhm' ? 'FWHM' : 'integral breadth'],
      ['instrument correction', s.correction],
      ['background (SNIP half-width, ° 2θ)', s.backgroundHalfWidthDeg === null ? 'automatic (1, widened to broad peaks)' : String(s.backgroundHalfWidthDeg)],
    ],
    instrument: instrument
      ? [
          ['name', instrument.name],
          ['standard', `${instrument.standard.name}${instrument.standard.version ? ` v${instrument.standard.version}` : ''}`],
          ['Caglioti U, V, W (deg²)', `${instrument.caglioti.u.toExponential(3)}, ${instrument.caglioti.v.toExponential(3)}, ${instrument.caglioti.w.toExponential(3)}`],
          ['FWHM rms residual (° 2θ)', instrument.rms.toFixed(4)],
          ['made', instrument.date],
        ]
      : null,
    references: [...references].map(([name, version]) => ({ name, version })).sort((a, b) => a.name.localeCompare(b.name)),
    samples,
    variants: seriesRows(variants),
    exposure: seriesRows(exposure),
    temperatures: seriesRows(temperatures),
    comparisons: [...variants.comparisons, ...exposure.comparisons, ...temperatures.comparisons],
    growth: exposure.growth.map((g) => ({ phase: g.phase, statement: g.statement, points: g.points, curve: g.curve })),
    // The report's cautions already say what the size cautions say: each once. What the composition
    // lines assume is the same sentence for samples measured alike: said once, with the cautions.
    cautions: [...REPORT_CAUTIONS, ...new Set(samples.flatMap((s) => s.composition?.notes ?? []))],
    paper,
  };
}

/** The sample's pattern, fit and peak marks for the report figure, from what the app shows on screen. */
function patternFigure(workspace: Workspace, id: number): PatternFigure | null {
  const detail = workspace.sampleDetail(id);
  const floats = (b64: string | null) => (b64 === null ? null : new Float32Array(Uint8Array.from(Buffer.from(b64, 'base64')).buffer));
  const x = floats(detail.x)!;
  const y = floats(detail.y)!;
  const model = floats(detail.model);
  const background = floats(detail.background);
  return { x, y, model, background, peaks: detail.peaks.map((p) => ({ twoTheta: p.twoTheta, phase: p.phase, lowAngle: p.lowAngle })) };
}

export function buildHtmlReport(workspace: Workspace, appVersion: string, paper: PaperSize = 'A4'): ExportedFile {
  const input = reportInput(workspace, appVersion, paper);
  return { fileName: `${reportFileBase(input)}.html`, text: renderHtmlReport(input) };
}

export function buildCsvReport(workspace: Workspace, appVersion: string): ExportedFile {
  const input = reportInput(workspace, appVersion);
  return { fileName: `${reportFileBase(input)}.csv`, text: renderCsvReport(input) };
}
