import type { SeriesView } from '../../src/api/contract.js';
import { call } from '../base/api.js';
import { cachedSample } from '../base/sample-data.js';
import { drawHeatMap } from '../chart/heat-map.js';
import { Chart, COLORS, errorBarPlugin, PatternChart } from '../chart/pattern-chart.js';
import { fmt, h, sizeText } from '../base/dom.js';
import { app, changed, verdictClass } from '../base/state.js';

type SeriesAxis = SeriesView['by'];

let by: SeriesAxis = 'variant';
/** How each ordering is named: its switch, the chart's x axis, the table's column and the patterns' order. */
const AXIS_WORDS: Record<SeriesAxis, { pick: string; axis: string; column: string; order: string }> = {
  variant: { pick: 'by workup variant', axis: 'workup variant', column: 'variant', order: 'in the order the variants were first added, the first at the bottom' },
  time: { pick: 'by exposure time', axis: 'exposure', column: 'exposure', order: 'by exposure time, earliest at the bottom' },
  temperature: { pick: 'by temperature', axis: 'temperature', column: 'temperature', order: 'by temperature, lowest at the bottom' },
};
let waterfallOffset = 0.5;
const charts: Chart[] = [];
let waterfall: PatternChart | null = null;
let heatMapObserver: ResizeObserver | null = null;

/** Samples by workup variant, exposure time or temperature: verdicts, sizes ± σ, differences, impurity growth. */
export async function renderSeries(root: HTMLElement): Promise<void> {
  while (charts.length) charts.pop()!.destroy();
  waterfall?.destroy();
  waterfall = null;
  heatMapObserver?.disconnect();
  heatMapObserver = null;
  const view = await call('series.get', { by });
  const pick = (value: SeriesAxis): HTMLElement => h('button', { 'aria-pressed': String(by === value), onclick: () => ((by = value), changed()) }, AXIS_WORDS[value].pick);
  const sizeCanvas = h('canvas', { role: 'img', 'aria-label': 'Crystallite size by sample' });
  const screen = h(
    'div',
    { class: 'screen stack', 'data-testid': 'series' },
    h('div', { class: 'row' }, h('h2', {}, 'Series'), h('span', { class: 'segmented' }, pick('variant'), pick('time'), pick('temperature'))),
    ...view.notes.map((n) => h('p', { class: 'caution' }, n)),
    h('div', { class: 'two-col' }, h('div', { class: 'panel' }, h('h3', {}, 'Crystallite size ± σ'), h('div', { class: 'series-chart' }, sizeCanvas)), growthPanel(view)),
    patternsPanel(view),
    h('div', { class: 'panel' }, rowsTable(view)),
    comparisonsPanel(view),
  );
  root.append(screen);
  // Every sample keeps its place on the axis; one without a size shows as a gap (the table says why).
  const sized = view.rows.filter((r) => r.sizeNm !== null);
  const low = Math.min(...sized.map((r) => r.sizeNm! - (r.sizeSigmaNm ?? 0)));
  const high = Math.max(...sized.map((r) => r.sizeNm! + (r.sizeSigmaNm ?? 0)));
  const pad = 0.1 * Math.max(high - low, 1);
  const unsized = view.rows.filter((r) => r.sizeNm === null).map((r) => r.label);
  if (unsized.length > 0) sizeCanvas.parentElement!.after(h('p', { class: 'small' }, `No size for ${unsized.join(', ')}: see the table.`));
  charts.push(
    new Chart(sizeCanvas, {
      type: 'line',
      data: {
        labels: view.rows.map((r) => r.label),
        datasets: [{ label: 'size (nm)', data: view.rows.map((r) => r.sizeNm), showLine: false, backgroundColor: COLORS.phases[0], borderColor: COLORS.phases[0], pointRadius: 5, errors: view.rows.map((r) => r.sizeSigmaNm) } as never],
      },
      plugins: [errorBarPlugin as never],
      options: {
        animation: false,
        responsive: true,
        maintainAspectRatio: false,
        plugins: { legend: { display: false } },
        scales: { x: { type: 'category', offset: true, title: { display: true, text: AXIS_WORDS[by].axis } }, y: { title: { display: true, text: 'crystallite size (nm)' }, ...(sized.length ? { suggestedMin: Math.max(0, low - pad), suggestedMax: high + pad } : {}) } },
      },
    }),
  );
  await drawPatterns(screen, view);
  const growthCanvas = screen.querySelector<HTMLCanvasElement>('canvas[data-growth]');
  if (growthCanvas && view.growth.length) {
    const datasets = view.growth.flatMap((g, i) => {
      const color = i === 0 ? COLORS.lowAngle : COLORS.phases[i % COLORS.phases.length]!;
      return [
        { type: 'scatter' as const, label: `${g.phase} (${g.basis})`, data: g.points.map((p) => ({ x: p.hours, y: 100 * p.share })), backgroundColor: color, borderColor: color, pointRadius: 5 },
        ...(g.curve.length ? [{ type: 'line' as const, label: `${g.phase}: fitted curve`, data: g.curve.map((p) => ({ x: p.hours, y: 100 * p.share })), borderColor: color, pointRadius: 0, borderWidth: 1.5 }] : []),
      ];
    });
    charts.push(
      new Chart(growthCanvas, {
        type: 'scatter',
        data: { datasets },
        options: { animation: false, responsive: true, maintainAspectRatio: false, plugins: { legend: { position: 'bottom', labels: { boxWidth: 12, font: { size: 11 } } } }, scales: { x: { type: 'linear', title: { display: true, text: 'exposure (h)' } }, y: { title: { display: true, text: 'share (%)' }, beginAtZero: true } } },
      }),
    );
  }
}

function growthPanel(view: SeriesView): HTMLElement {
  if (view.by !== 'time') return h('div', { class: 'panel small' }, h('h3', {}, 'Impurity growth'), 'Switch to “by exposure time” to follow an impurity growing over time.');
  if (!view.growth.length) return h('div', { class: 'panel small' }, h('h3', {}, 'Impurity growth'), 'No other phase was found in the exposure series.');
  return h(
    'div',
    { class: 'panel' },
    h('h3', {}, 'Impurity growth'),
    h('div', { class: 'series-chart' }, h('canvas', { 'data-growth': 'true', role: 'img', 'aria-label': 'Impurity growth over exposure time' })),
    ...view.growth.map((g) => h('p', { class: 'small' }, `${g.phase}: ${g.statement}`)),
  );
}

function rowsTable(view: SeriesView): HTMLElement {
  return h(
    'table',
    { class: 'grid' },
    h('thead', {}, h('tr', {}, ...['sample', AXIS_WORDS[view.by].column, 'verdict', 'other phases', 'low-angle peaks', 'not from target', 'crystallite size'].map((t, i) => h('th', { class: i < 4 ? 'left' : '' }, t)))),
    h(
      'tbody',
      {},
      ...view.rows.map((r) =>
        h(
          'tr',
          { onclick: () => ((app.selected = r.sampleId), (app.screen = 'samples'), changed()), title: 'Open in Samples' },
          h('td', { class: 'left' }, r.name),
          h('td', { class: 'left' }, r.label),
          h('td', { class: 'left verdict-cell' }, h('span', { class: `badge ${verdictClass(r.verdict)}` }, r.verdict)),
          h('td', { class: 'left small wrap' }, r.otherPhases || '—'),
          h('td', {}, r.lowAngleCount),
          h('td', {}, r.impurityShare === null ? '—' : `${fmt(100 * r.impurityShare, 1)} %`),
          h('td', { class: r.sizeNote === null ? '' : 'wrap' }, r.sizeNote === null ? `${sizeText(r.sizeNm, r.sizeSigmaNm)}${r.sizeMethod === 'constrained-group-fit' ? ' (group fit)' : ''}` : h('span', { class: 'small', title: r.sizeNote }, r.sizeNm === null ? `— ${r.sizeNote}` : r.sizeNote)),
        ),
      ),
    ),
  );
}

function comparisonsPanel(view: SeriesView): HTMLElement {
  if (!view.comparisons.length) return h('div', { class: 'panel small' }, 'No pairwise size comparison yet (needs two or more samples with sizes).');
  return h(
    'div',
    { class: 'panel' },
    h('h3', {}, 'Do the sizes differ?'),
    h(
      'table',
      { class: 'grid', 'data-testid': 'comparisons' },
      h('tbody', {}, ...view.comparisons.map((c) => h('tr', {}, h('td', { class: 'left' }, `${c.a} vs ${c.b}`), h('td', { class: 'left' }, h('strong', {}, c.differs ? 'differs' : 'no significant difference')), h('td', { class: 'left small wrap' }, `${c.test}: ${c.detail}`)))),
    ),
  );
}

/** The series' patterns in order: a waterfall (stacked with an offset) and a heat map (2θ × sample, colour = counts). */
function patternsPanel(view: SeriesView): HTMLElement {
  if (view.rows.length < 2) return h('div', { class: 'panel small' }, h('h3', {}, 'Patterns in order'), 'A waterfall and a heat map appear once two or more samples are in the series.');
  const offset = h('input', { type: 'range', min: 0, max: 1.5, step: 0.05, value: waterfallOffset, 'aria-label': 'Offset between the waterfall’s patterns', 'data-testid': 'waterfall-offset' });
  offset.addEventListener('change', () => {
    waterfallOffset = Number(offset.value);
    changed();
  });
  const order = AXIS_WORDS[view.by].order;
  return h(
    'div',
    { class: 'panel stack', 'data-testid': 'series-patterns' },
    h('div', { class: 'row' }, h('h3', {}, 'Patterns in order'), h('span', { class: 'small' }, `${view.rows.length} samples, ${order}`), h('span', { class: 'spacer' }), h('label', { class: 'row small' }, 'offset', offset)),
    h(
      'div',
      { class: 'two-col' },
      h('figure', { class: 'series-figure' }, h('div', { class: 'chart-box waterfall-box' }, h('canvas', { role: 'img', 'aria-label': 'Waterfall of the series’ patterns', 'data-testid': 'waterfall' })), h('figcaption', { class: 'small' }, 'Waterfall: each pattern raised by the offset above the one before.')),
      h('figure', { class: 'series-figure' }, h('div', { class: 'heat-box' }, h('canvas', { role: 'img', 'aria-label': 'Heat map of the series’ patterns', 'data-testid': 'heat-map' })), h('figcaption', { class: 'small' }, 'Heat map: one band per sample, intensity as colour (highest count per pixel column, one √ scale for all).')),
    ),
  );
}

async function drawPatterns(screen: HTMLElement, view: SeriesView): Promise<void> {
  const waterfallCanvas = screen.querySelector<HTMLCanvasElement>('[data-testid="waterfall"]');
  const heatCanvas = screen.querySelector<HTMLCanvasElement>('[data-testid="heat-map"]');
  if (!waterfallCanvas || !heatCanvas) return;
  const patterns: Array<{ label: string; lambda: number; x: Float32Array; y: Float32Array }> = [];
  for (const row of view.rows) {
    const detail = await cachedSample(app.details, row.sampleId);
    patterns.push({ label: row.label, lambda: detail.lambda1, x: detail.curves.x, y: detail.curves.y });
  }
  if (!waterfallCanvas.isConnected) return;
  waterfall = new PatternChart(waterfallCanvas);
  waterfall.render({
    main: patterns[0]!,
    overlays: patterns.slice(1),
    marks: [],
    references: [],
    lambda: patterns[0]!.lambda,
    axis: '2theta',
    scale: 'sqrt',
    offsetFraction: waterfallOffset,
    showFit: false,
  });
  const draw = () => heatCanvas.isConnected && drawHeatMap(heatCanvas, patterns);
  draw();
  heatMapObserver = new ResizeObserver(() => draw());
  heatMapObserver.observe(heatCanvas.parentElement!);
}
