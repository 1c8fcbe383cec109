/**
 * Reports for the lab notebook: a self-contained HTML page (no scripts, no outside files; prints to
 * PDF) and a CSV table. Both carry every setting, the reference versions, the app version and the
 * cautions, so a result can be judged and reproduced later.
 */
import { niceTicks } from '../model/ticks.js';
import { PHASE_COLOURS, patternFigureSvg, sizeStrainFigureSvg, type PatternFigure, type SizeStrainFigure } from './figures.js';

export interface ReportSample {
  name: string;
  fileName: string;
  sha256: string;
  variant: string | null;
  hours: number | null;
  /** °C (annealing, drying...). */
  temperature?: number | null;
  simulated: boolean;
  verdict: string;
  phase: string | null;
  phaseVerdict: string | null;
  score: number | null;
  /** Peaks below the target's first line, with the phase that explains each (null: unexplained). */
  lowAngle: Array<{ twoTheta: number; d: number; phase: string | null }>;
  unexplainedCount: number;
  sizeNm: number | null;
  sizeSigmaNm: number | null;
  sizeLimit: string | null;
  whSizeNm: number | null;
  whStrain: number | null;
  /** False when the strain does not stand above its uncertainty (then the table says so instead of a number). */
  whStrainDetected?: boolean;
  wavelength: string;
  reasons: string[];
  warnings: string[];
  /** The pattern with its fit and peak marks, for the figure (null when the sample was not analysed). */
  figure?: PatternFigure | null;
  /** The size–strain plot with its fitted line (null when the sample gave no size–strain result). */
  sizeStrain?: SizeStrainFigure | null;
  /** What the sample is made of, as the screen says it: one line per phase seen (weight % ± σ), and how they were formed. */
  composition?: { parts: string[]; notes: string[] };
}

/** The paper sizes a report prints on; A4 unless the user chose Letter. */
export const PAPER_SIZES = ['A4', 'Letter'] as const;
export type PaperSize = (typeof PAPER_SIZES)[number];

export interface ReportSeriesRow {
  label: string;
  hours: number | null;
  /** °C, for a temperature series. */
  temperature?: number | null;
  sizeNm: number | null;
  sizeSigmaNm: number | null;
}

export interface ReportGrowth {
  phase: string;
  statement: string;
  points: Array<{ hours: number; share: number }>;
  curve: Array<{ hours: number; share: number }>;
}

export interface ReportInput {
  appVersion: string;
  createdAt: string;
  projectName: string;
  demo: boolean;
  truth: string | null;
  settings: Array<[string, string]>;
  instrument: Array<[string, string]> | null;
  references: Array<{ name: string; version: number }>;
  samples: ReportSample[];
  variants: ReportSeriesRow[];
  exposure: ReportSeriesRow[];
  /** The samples ordered by temperature (annealing, drying...), when they have one. */
  temperatures?: ReportSeriesRow[];
  comparisons: Array<{ a: string; b: string; differs: boolean; test: string; detail: string }>;
  /** Each phase growing with exposure time: its sentence, its shares and the fitted curve (empty when none was fitted). */
  growth: ReportGrowth[];
  cautions: string[];
  /** Paper size of the printed page (default A4). */
  paper?: PaperSize;
}

/** The cautions every report carries (DESIGN.md, "Cautions shown to users"). */
export const REPORT_CAUTIONS: readonly string[] = [
  'Phase identification from peak positions cannot prove the absence of amorphous matter, nor of a crystalline phase below the detection limit (often 1–5 % by weight in lab PXRD).',
  'Scherrer sizes are volume-weighted apparent sizes of the coherently diffracting domains and lower bounds where strain also broadens the peaks; they are not the particle or aggregate sizes seen in microscopy.',
  'Samples and instruments are handled under the lab’s own radiation-safety and chemical-hygiene rules, including for moisture-sensitive, toxic or lead-containing materials.',
];

/**
 * Fixed column widths (percent of the page): the table never grows past the page however long a name
 * is, and a long word wraps only when it alone is wider than its column.
 */
const columns = (percents: number[]): string => `<colgroup>${percents.map((p) => `<col style="width:${p}%">`).join('')}</colgroup>`;
/**
 * Reasons that only restate a report caution (the analysis adds the detection-limit sentence to every
 * sample's reasons): the report says it once, in its cautions, and leaves it out of each sample.
 */
const RESTATED_CAUTIONS: readonly RegExp[] = [/below the detection limit.*amorphous/i, /volume-weighted apparent size.*lower bound/i];
const restatesCaution = (reason: string): boolean => RESTATED_CAUTIONS.some((pattern) => pattern.test(reason));

const esc = (text: string): string => text.replace(/[&<>"']/g, (c) => `&#${c.charCodeAt(0)};`);
const num = (v: number | null | undefined, digits: number): string => (v === null || v === undefined || !Number.isFinite(v) ? '' : v.toFixed(digits));
const size = (v: number | null, s: number | null): string => (v === null ? '—' : s === null || !Number.isFinite(s) ? `${v.toFixed(1)} nm` : `${v.toFixed(1)} ± ${s.toFixed(1)} nm`);

export function reportFileBase(input: ReportInput): string {
  const day = input.createdAt.slice(0, 10);
  return `crystallog-report-${input.projectName.toLowerCase().replace(/[^a-z0-9]+/g, '-').replace(/^-|-$/g, '') || 'project'}-${day}`;
}

export function renderHtmlReport(input: ReportInput): string {
  const rows = input.samples
    .map(
      (s) => `<tr class="${s.lowAngle.length ? 'extra' : ''}"><td>${esc(s.name)}${s.simulated ? ' <span class="sim">simulated</span>' : ''}</td><td>${esc(s.variant ?? '')}</td><td>${esc(conditionsText(s))}</td>
<td><strong>${esc(s.verdict)}</strong></td><td>${esc(s.phase ?? '—')}${s.phaseVerdict ? ` (${esc(s.phaseVerdict)}, ${num(s.score, 2)})` : ''}</td>
<td>${s.lowAngle.length ? s.lowAngle.map((p) => `${p.twoTheta.toFixed(2)}° (d ${p.d.toFixed(2)} Å, ${esc(p.phase ?? 'unexplained')})`).join('; ') : 'none'}</td>
<td>${size(s.sizeNm, s.sizeSigmaNm)}${s.sizeLimit ? ` (${esc(s.sizeLimit)})` : ''}</td><td>${s.whSizeNm === null ? '—' : `${s.whSizeNm.toFixed(1)} nm`}${s.whStrain === null ? '' : s.whStrainDetected === false ? ', no strain detected' : `, <span class="nw">ε ${s.whStrain.toExponential(1)}</span>`}</td></tr>`,
    )
    .join('\n');
  const details = input.samples
    .map(
      (s) => `<section class="sample"><h3>${esc(s.name)}</h3><p class="small">File ${esc(s.fileName)}, SHA-256 <code>${esc(s.sha256)}</code>, ${esc(s.wavelength)}${s.simulated ? ', <strong>simulated pattern</strong>' : ''}.</p>
${s.figure ? patternFigureSvg(s.figure, `${s.name}${s.simulated ? ' (simulated)' : ''}`) : ''}
${s.sizeStrain ? sizeStrainFigureSvg(s.sizeStrain, `Size–strain plot of ${s.name}`) : ''}
${s.composition && s.composition.parts.length ? `<p><strong>Composition:</strong> ${s.composition.parts.map(esc).join('; ')}.</p>` : ''}
<ul>${s.reasons.filter((r) => !restatesCaution(r)).map((r) => `<li>${esc(r)}</li>`).join('')}</ul>${s.warnings.length ? `<p class="small">Notes: ${s.warnings.map(esc).join('; ')}</p>` : ''}</section>`,
    )
    .join('\n');
  const pairs = (list: Array<[string, string]>): string => list.map(([k, v]) => `<tr><th>${esc(k)}</th><td>${esc(v)}</td></tr>`).join('');
  const comparisons = input.comparisons.length
    ? `<table>${columns([30, 22, 48])}<tr><th>Samples</th><th>Size difference</th><th>Test</th></tr>${input.comparisons
        .map((c) => `<tr><td>${esc(c.a)} vs ${esc(c.b)}</td><td>${c.differs ? '<strong>differs</strong>' : 'no significant difference'}</td><td>${esc(c.test)}: ${esc(c.detail)}</td></tr>`)
        .join('')}</table>`
    : '<p class="small">No pairwise comparison of sizes was made.</p>';
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><title>${esc(input.projectName)} — Crystallog report</title>
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'; img-src data:">
<style>
body{font:14px/1.45 system-ui,-apple-system,"Segoe UI",sans-serif;color:#24313a;margin:2rem auto;max-width:60rem;padding:0 1rem}
h1{font-size:1.5rem;margin-bottom:.2rem}h2{font-size:1.15rem;margin-top:2rem;border-bottom:1px solid #d9d6cf}h3{font-size:1rem;margin-bottom:.2rem}
table{border-collapse:collapse;width:100%;margin:.5rem 0}th,td{border-bottom:1px solid #e4e2dc;padding:.3rem .45rem;text-align:left;vertical-align:top}
th{background:#f3f1ec;font-weight:600}tr.extra td{background:#fbefe9}.small{font-size:12px;color:#56636b}.sim{font-size:11px;background:#eef3f6;border:1px solid #b9cbd6;border-radius:3px;padding:0 .3rem}
.truth,.caution{border-left:4px solid #2a8c82;background:#f1f7f6;padding:.5rem .8rem;margin:.8rem 0}.caution{border-color:#c08a2e;background:#fbf5ea}
code{font-size:11px;word-break:break-all}svg{max-width:100%;height:auto}
figure{margin:.6rem 0}figcaption{font-size:11px;color:#56636b}.key{white-space:nowrap;margin-right:.6rem}.swatch{display:inline-block;width:.8em;height:.5em;margin-right:.25em;vertical-align:middle}
table{table-layout:fixed}td,th{overflow-wrap:anywhere;hyphens:auto}table.samples{font-size:12.5px}.nw{white-space:nowrap}
@page{size:${input.paper ?? 'A4'};margin:14mm 12mm}
@media print{body{margin:0;max-width:none;font-size:10.5pt}table.samples{font-size:8pt}th,td{padding:.2rem .3rem}h2{break-after:avoid}section.sample,figure,table tr{break-inside:avoid}.caution,.truth{break-inside:avoid}}
</style></head><body>
<h1>${esc(input.projectName)}</h1>
<p class="small">Crystallog ${esc(input.appVersion)} · report made ${esc(input.createdAt)}</p>
${input.demo ? `<div class="truth"><strong>Demo project: every pattern in it is simulated, not measured.</strong>${input.truth ? `<br>${esc(input.truth)}` : ''}</div>` : ''}
<h2>Samples</h2>
<table class="samples">${columns([13, 10, 6, 12, 17, 17, 12.5, 12.5])}<tr><th>Sample</th><th>Variant</th><th>Time, temp.</th><th>Verdict</th><th>Phase (verdict, score)</th><th>Low-angle extra peaks</th><th>Crystallite size</th><th>Williamson–<wbr>Hall</th></tr>
${rows}</table>
<h2>Crystallite size across the series</h2>
${seriesSvg(input.variants, 'variant')}
${seriesSvg(input.exposure, 'time')}
${seriesSvg(input.temperatures ?? [], 'temperature')}
${growthSvg(input.growth)}
${comparisons}
${input.growth.length ? `<h2>Growth with exposure time</h2><ul>${input.growth.map((g) => `<li>${esc(g.phase)}: ${esc(g.statement)}</li>`).join('')}</ul>` : ''}
<h2>Why each verdict</h2>
${details}
<h2>Settings</h2><table>${columns([40, 60])}${pairs(input.settings)}</table>
<h2>Instrument profile</h2>${input.instrument ? `<table>${columns([40, 60])}${pairs(input.instrument)}</table>` : '<p>None: peak breadths were not corrected for the instrument, so sizes are lower bounds.</p>'}
<h2>References used</h2><table>${columns([80, 20])}<tr><th>Name</th><th>Version</th></tr>${input.references.map((r) => `<tr><td>${esc(r.name)}</td><td>${r.version}</td></tr>`).join('')}</table>
<h2>Cautions</h2>${input.cautions.map((c) => `<p class="caution">${esc(c)}</p>`).join('\n')}
</body></html>
`;
}

/** A sample's exposure time and temperature, with units ("24 h", "150 °C"). */
function conditionsText(s: ReportSample): string {
  return [s.hours !== null ? `${s.hours} h` : '', typeof s.temperature === 'number' ? `${s.temperature} °C` : ''].filter(Boolean).join(', ');
}

/** The frame every small series chart shares: its size, margins, the two axes and the y tick labels. */
const SMALL_CHART = { width: 640, height: 220, left: 56, bottom: 34, top: 16 };

function smallChartFrame(yMax: number, yTickScale: number, yTitle: string): { parts: string[]; yAt: (v: number) => number } {
  const { width, height, left, bottom, top } = SMALL_CHART;
  const yAt = (v: number): number => top + (1 - v / yMax) * (height - top - bottom);
  const parts: string[] = [`<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 ${width} ${height}" width="${width}" height="${height}" font-size="11" font-family="system-ui,sans-serif">`];
  parts.push(`<line x1="${left}" y1="${height - bottom}" x2="${width - 10}" y2="${height - bottom}" stroke="#24313a"/><line x1="${left}" y1="${top}" x2="${left}" y2="${height - bottom}" stroke="#24313a"/>`);
  for (const v of niceTicks(0, yMax * yTickScale, 5)) parts.push(`<text x="${left - 6}" y="${yAt(v / yTickScale) + 4}" text-anchor="end">${v}</text>`);
  parts.push(`<text transform="translate(14 ${(height - bottom) / 2}) rotate(-90)" text-anchor="middle">${esc(yTitle)}</text>`);
  return { parts, yAt };
}

const SERIES_CAPTIONS = { variant: 'By workup variant', time: 'By exposure time', temperature: 'By temperature' } as const;

/** A small inline SVG chart: sizes ± σ by variant, by exposure time or by temperature. */
function seriesSvg(rows: ReportSeriesRow[], by: keyof typeof SERIES_CAPTIONS): string {
  const points = rows.filter((r) => r.sizeNm !== null);
  if (points.length < 2) return '';
  const { width, height, left, bottom } = SMALL_CHART;
  const maxSize = Math.max(...points.map((p) => p.sizeNm! + (Number.isFinite(p.sizeSigmaNm ?? NaN) ? p.sizeSigmaNm! : 0))) * 1.15;
  const xAt = (i: number): number => left + ((i + 0.5) * (width - left - 10)) / points.length;
  const { parts, yAt } = smallChartFrame(maxSize, 1, 'size (nm)');
  points.forEach((p, i) => {
    const x = xAt(i);
    const s = Number.isFinite(p.sizeSigmaNm ?? NaN) ? p.sizeSigmaNm! : 0;
    parts.push(`<line x1="${x}" y1="${yAt(p.sizeNm! - s)}" x2="${x}" y2="${yAt(p.sizeNm! + s)}" stroke="#3f6fa0"/><circle cx="${x}" cy="${yAt(p.sizeNm!)}" r="4" fill="#3f6fa0"/>`);
    parts.push(`<text x="${x}" y="${height - bottom + 16}" text-anchor="middle">${esc(by === 'time' ? `${p.hours} h` : by === 'temperature' ? `${p.temperature} °C` : p.label)}</text>`);
  });
  parts.push('</svg>');
  return `<figure class="series"><figcaption>${SERIES_CAPTIONS[by]} (error bars: ± one standard uncertainty)</figcaption>${parts.join('')}</figure>`;
}

/**
 * Each other phase's share against exposure time (the growth of a hydrolysis or hydration product):
 * its measured points and, where the data support one, its fitted growth curve.
 */
function growthSvg(curves: ReportGrowth[]): string {
  const drawn = curves.filter((g) => g.points.length >= 2);
  if (!drawn.length) return '';
  const { width, height, left, bottom } = SMALL_CHART;
  const all = drawn.flatMap((g) => [...g.points, ...g.curve]);
  const maxHours = Math.max(...all.map((p) => p.hours)) || 1;
  const maxShare = Math.min(1, Math.max(0.05, ...all.map((p) => p.share)) * 1.15);
  const xAt = (h: number): number => left + (h / maxHours) * (width - left - 16);
  const { parts, yAt } = smallChartFrame(maxShare, 100, 'share (%)');
  for (const h of niceTicks(0, maxHours, 6)) parts.push(`<text x="${xAt(h)}" y="${height - bottom + 16}" text-anchor="middle">${h}</text>`);
  parts.push(`<text x="${(left + width) / 2}" y="${height - 4}" text-anchor="middle">exposure (h)</text>`);
  const trace = (points: Array<{ hours: number; share: number }>): string => points.map((p, i) => `${i ? 'L' : 'M'}${xAt(p.hours).toFixed(1)} ${yAt(p.share).toFixed(1)}`).join('');
  const key: string[] = [];
  drawn.forEach((g, i) => {
    const colour = PHASE_COLOURS[(i + 1) % PHASE_COLOURS.length]!;
    const sorted = [...g.points].sort((a, b) => a.hours - b.hours);
    if (g.curve.length) parts.push(`<path d="${trace(g.curve)}" fill="none" stroke="${colour}" stroke-width="1.4"/>`);
    else parts.push(`<path d="${trace(sorted)}" fill="none" stroke="${colour}" stroke-dasharray="3 3"/>`);
    for (const p of sorted) parts.push(`<circle cx="${xAt(p.hours).toFixed(1)}" cy="${yAt(p.share).toFixed(1)}" r="4" fill="${colour}"/>`);
    key.push(`<span class="key"><span class="swatch" style="background:${colour}"></span>${esc(g.phase)} (${g.curve.length ? 'points and fitted growth curve' : 'points joined; no curve fitted'})</span>`);
  });
  parts.push('</svg>');
  return `<figure class="growth"><figcaption>Share of each other phase against exposure time</figcaption>${parts.join('')}<figcaption>${key.join(' ')}</figcaption></figure>`;
}

const CSV_COLUMNS = [
  'sample', 'file', 'sha256', 'simulated', 'variant', 'exposure_hours', 'temperature_c', 'verdict', 'phase', 'phase_verdict', 'score',
  'low_angle_peaks_2theta', 'unexplained_peaks', 'scherrer_size_nm', 'scherrer_size_sigma_nm', 'size_limit', 'wh_size_nm', 'wh_strain', 'wavelength',
] as const;

function csvCell(value: string | number | boolean | null): string {
  const text = value === null ? '' : String(value);
  return /[",\n\r]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

/** CSV: "#" lines with the app version, settings, references and cautions, then one row per sample. */
export function renderCsvReport(input: ReportInput): string {
  const lines: string[] = [
    `# Crystallog ${input.appVersion} report of project "${input.projectName}", made ${input.createdAt}`,
    ...(input.demo ? ['# Demo project: every pattern is simulated, not measured.', ...(input.truth ? [`# ${input.truth}`] : [])] : []),
    ...input.settings.map(([k, v]) => `# setting ${k}: ${v}`),
    ...(input.instrument ?? []).map(([k, v]) => `# instrument ${k}: ${v}`),
    `# references: ${input.references.map((r) => `${r.name} v${r.version}`).join('; ')}`,
    ...input.cautions.map((c) => `# caution: ${c}`),
    CSV_COLUMNS.join(','),
  ];
  for (const s of input.samples) {
    lines.push(
      [
        s.name, s.fileName, s.sha256, s.simulated, s.variant, s.hours, s.temperature ?? null, s.verdict, s.phase, s.phaseVerdict, s.score === null ? null : s.score.toFixed(3),
        s.lowAngle.map((p) => p.twoTheta.toFixed(3)).join(' '), s.unexplainedCount, s.sizeNm === null ? null : s.sizeNm.toFixed(2),
        s.sizeSigmaNm === null || !Number.isFinite(s.sizeSigmaNm) ? null : s.sizeSigmaNm.toFixed(2), s.sizeLimit, s.whSizeNm === null ? null : s.whSizeNm.toFixed(2),
        s.whStrain === null ? null : s.whStrain.toExponential(3), s.wavelength,
      ]
        .map(csvCell)
        .join(','),
    );
  }
  return lines.join('\n') + '\n';
}
