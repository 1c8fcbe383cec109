import type { PatternPreview, PhaseMatch, SampleDetail, SampleSummary } from '../../src/api/contract.js';
import { call, decodeFloats, saveFile } from '../base/api.js';
import { cachedSample, type LoadedSample } from '../base/sample-data.js';
import { COARSE_ABOVE_POINTS, nextTask } from '../chart/coarse.js';
import { timings } from '../base/actions.js';
import { COLORS, PatternChart, type PatternSeries, type PeakMark, type PatternViewModel, type PhaseLegend } from '../chart/pattern-chart.js';
import { differenceOnGrid } from '../chart/grid.js';
import { normalisationFactor, normalisedTitle, scaledSeries, sharedRange, type Normalisation } from '../chart/normalise.js';
import { phaseMarking, satelliteLabel } from '../chart/phase-marks.js';
import { nearestIndex } from '../chart/readout.js';
import { chartToSvg } from '../chart/svg.js';
import { compositionOf, phaseShareText } from '../../src/api/composition.js';
import { sizeStrainChart } from '../chart/size-strain-chart.js';
import { append, field, fmt, h, hklText, sizeText } from '../base/dom.js';
import { app, changed, verdictClass } from '../base/state.js';
import { notify, showError } from '../base/ui.js';

let chart: PatternChart | null = null;
let differenceChart: PatternChart | null = null;

(window as unknown as { crystallogTimings: typeof timings }).crystallogTimings = timings;

export async function renderSamples(root: HTMLElement): Promise<void> {
  chart?.destroy();
  chart = null;
  differenceChart?.destroy();
  differenceChart = null;
  const project = app.project!;
  const layout = h('div', { class: 'samples-layout' });
  root.append(layout);
  layout.append(sampleList(project.samples));
  const main = h('section', { class: 'sample-main', 'aria-label': 'Selected sample' });
  layout.append(main);
  if (project.truth) {
    main.append(h('details', { class: 'truth', 'data-testid': 'demo-truth' }, h('summary', {}, h('strong', {}, 'Simulated demo data'), ' — every pattern here was simulated by Crystallog; open to read the truth it was simulated from.'), h('p', {}, project.truth)));
  }
  if (app.preview) {
    renderPreview(main, app.preview);
    return;
  }
  const id = app.selected;
  if (id === null || !project.samples.some((s) => s.id === id)) {
    main.append(h('div', { class: 'panel empty' }, project.samples.length ? 'Pick a sample on the left.' : 'No samples yet: drop pattern files anywhere in this window, or use “Add patterns…” (Ctrl+O).'));
    return;
  }
  const started = performance.now();
  const detail = await sampleDetail(id);
  const overlays: LoadedSample[] = [];
  for (const other of app.overlays) if (other !== id && project.samples.some((s) => s.id === other)) overlays.push(await sampleDetail(other));
  const presentPhases = (detail.match?.phases ?? []).filter((p) => p.verdict !== 'not-seen').map((p) => p.name);
  const checked = app.checked ?? new Set(presentPhases);
  const refLines = checked.size ? await call('library.lines', { names: [...checked] }) : [];

  const canvas = h('canvas', { 'aria-label': `Pattern of ${detail.name}`, role: 'img', 'data-testid': 'pattern-chart' });
  const box = chartBox(canvas);
  const marking = phaseView(detail);
  const colourOf = new Map(marking.legend.map((p) => [p.name, p.color]));
  let spare = marking.legend.length;
  const stacked = normalised([detail, ...overlays].map(series));
  main.append(toolbar(detail, stacked.note, stacked.range), box, differencePanel(detail, project.samples), details(detail, checked, marking.legend));
  // A simulated pattern is never called measured in the legend.
  const shown = detail.simulated ? { ...stacked.series[0]!, label: `${detail.name} (simulated)` } : stacked.series[0]!;
  const view: PatternViewModel = {
    main: shown,
    measured: !detail.simulated,
    overlays: stacked.series.slice(1),
    marks: marking.marks.map((m) => ({ ...m, y: m.y / stacked.factors[0]! })),
    phases: marking.legend,
    references: refLines.map((r) => ({
      name: r.name,
      // A phase marked on the pattern draws its sticks in its marks' colour; any other takes the next one free.
      color: colourOf.get(r.name) ?? COLORS.phases[spare++ % COLORS.phases.length]!,
      countsPerIntensity: (countsPerIntensity(detail, r.name) ?? 0) / stacked.factors[0]! || null,
      lines: r.lines.map((l) => ({ twoTheta: l.twoTheta, intensity: l.intensity, label: hklText(l.hkl) })),
    })),
    lambda: detail.lambda1,
    axis: app.view.axis,
    scale: app.view.scale,
    offsetFraction: app.view.offsetFraction,
    showFit: app.view.showFit,
    hklLabels: app.view.hklLabels,
    intensityTitle: stacked.title,
    ...(stacked.title ? { readoutValue: 'normalised intensity' } : {}),
  };
  // A long pattern's chart is made in a task of its own, after the page has laid out the rest.
  if (detail.points > COARSE_ABOVE_POINTS) await nextTask();
  if (!canvas.isConnected) return;
  const drawing = new PatternChart(canvas);
  chart = drawing;
  await drawing.renderInSteps(view);
  timings.lastDrawMs = performance.now() - started;
  box.addEventListener('keydown', (event) => {
    if (!chart) return;
    if (event.key === 'ArrowLeft') chart.pan(0.1);
    else if (event.key === 'ArrowRight') chart.pan(-0.1);
    else if (event.key === '+' || event.key === '=') chart.zoom(1.25);
    else if (event.key === '-') chart.zoom(0.8);
    else if (event.key.toLowerCase() === 'r') chart.resetZoom();
    else return;
    event.preventDefault();
  });
}

/** The chart box of the samples screen; a height the user dragged it to stays through re-renders. */
function chartBox(canvas: HTMLCanvasElement): HTMLElement {
  const box = h('div', { class: 'chart-box', tabindex: 0, 'aria-label': 'Pattern view: arrow keys pan, + and − zoom, R resets; drag the lower right corner to make it taller' }, canvas);
  if (app.view.chartHeightPx !== null) box.style.height = `${app.view.chartHeightPx}px`;
  new ResizeObserver(() => {
    const height = box.getBoundingClientRect().height;
    if (box.style.height && box.isConnected && height > 0) app.view.chartHeightPx = height;
  }).observe(box);
  return box;
}

/** A file in progress: its pattern as soon as the engine has read it, while the analysis runs. */
function renderPreview(main: HTMLElement, preview: PatternPreview): void {
  const canvas = h('canvas', { 'aria-label': `Pattern of ${preview.name}, being analysed`, role: 'img', 'data-testid': 'pattern-chart', 'data-preview': preview.jobId });
  main.append(
    h(
      'div',
      { class: 'panel preview-note', 'data-testid': 'pattern-preview' },
      h('strong', {}, preview.name),
      ` — ${preview.points.toLocaleString('en')} points read; analysing. The verdict, peaks and fit appear here when the analysis is done.`,
    ),
    chartBox(canvas),
  );
  chart = new PatternChart(canvas);
  chart.render({
    main: { label: preview.name, x: decodeFloats(preview.x), y: decodeFloats(preview.y), background: null, model: null },
    overlays: [],
    marks: [],
    references: [],
    lambda: preview.lambda1,
    axis: app.view.axis,
    scale: app.view.scale,
    offsetFraction: app.view.offsetFraction,
    showFit: false,
  });
  timings.lastPreviewMs = performance.now() - timings.dropStarted;
}

function sampleDetail(id: number): Promise<LoadedSample> {
  return cachedSample(app.details, id);
}

function series(detail: LoadedSample): PatternSeries {
  const { x, y, background, model, coarse } = detail.curves;
  return { label: detail.name, x, y, background, model, coarse };
}

/** The pattern's marks: each present or uncertain phase's peaks in its colour, unexplained, satellite, low-angle and missing lines. */
function phaseView(detail: LoadedSample): { legend: PhaseLegend[]; marks: PeakMark[] } {
  if (!detail.match) return { legend: [], marks: [] };
  const { x, y } = detail.curves;
  const bg = detail.curves.background ?? y;
  const marking = phaseMarking({ phases: detail.match.phases, unexplained: detail.match.unexplained, lowAnglePeaks: detail.lowAnglePeaks }, COLORS.phases, detail.phase?.name ?? null);
  const marks: PeakMark[] = marking.marks.map((m) => ({
    twoTheta: m.twoTheta,
    y: y[nearestIndex(x, m.twoTheta)]!,
    kind: m.kind === 'phase' ? 'matched' : m.kind,
    label: m.text,
    stackIndex: m.stackIndex,
    ...(m.phase !== null && m.kind === 'phase' ? { phase: m.phase } : {}),
    ...(m.hkl ? { hkl: compactHkl(m.hkl) } : {}),
    ...(m.kind === 'satellite' ? { tag: satelliteLabel(m.text) } : {}),
  }));
  for (const phase of detail.match.phases.filter((p) => p.verdict !== 'not-seen')) {
    for (const line of phase.missingStrongLines) marks.push({ twoTheta: line.twoTheta, y: bg[nearestIndex(x, line.twoTheta)]!, kind: 'missing', label: `${phase.name}: strong line at ${line.twoTheta.toFixed(2)}° (I ${line.intensity.toFixed(0)}) not seen` });
  }
  return { legend: marking.phases.map((p) => ({ name: p.name, verdict: p.verdict, color: p.color })), marks };
}

/**
 * The stacked patterns scaled as the toolbar asks (normalise.ts), with the factors used and a note
 * when a pattern could not be normalised (then every pattern stays in counts).
 */
function normalised(all: PatternSeries[]): { series: PatternSeries[]; factors: number[]; title: string | null; note: string | null; range: string | null } {
  const mode = app.view.normalisation;
  const counts = { series: all, factors: all.map(() => 1), title: null, note: null, range: null };
  if (mode === 'none') return counts;
  const options = { peakTwoTheta: app.view.peakTwoTheta, range: sharedRange(all) };
  if (mode === 'area' && !options.range) return { ...counts, note: 'The patterns share no 2θ range to compare areas over; shown in counts.' };
  const factors: number[] = [];
  for (const s of all) {
    const f = normalisationFactor(s.x, s.y, mode, options);
    if ('problem' in f) return { ...counts, note: `${s.label} cannot be normalised: ${f.problem}; shown in counts.` };
    factors.push(f.factor);
  }
  const scale = app.view.scale === 'linear' ? '' : app.view.scale === 'sqrt' ? ', √ scale' : ', log scale';
  const range = mode === 'area' && options.range ? `areas over ${options.range.from.toFixed(1)}–${options.range.to.toFixed(1)}° 2θ, the range all share` : null;
  return { series: all.map((s, i) => scaledSeries(s, factors[i]!)), factors, title: `${normalisedTitle(mode, options)}${scale}`, note: null, range };
}

/**
 * How many counts above the background one unit of the phase's reference intensity makes in this
 * pattern: the median over its matched peaks not shared with another phase (null when it has none).
 */
function countsPerIntensity(detail: SampleDetail, phaseName: string): number | null {
  const phase = detail.match?.phases.find((p) => p.name === phaseName);
  const heights = new Map(detail.peaks.map((p) => [p.index, p.height]));
  const ratios = (phase?.lines ?? [])
    .filter((l) => !l.shared && l.intensity !== null && l.intensity > 0 && heights.has(l.peakIndex))
    .map((l) => heights.get(l.peakIndex)! / l.intensity!)
    .sort((a, b) => a - b);
  if (!ratios.length) return null;
  const mid = ratios.length >> 1;
  return ratios.length % 2 ? ratios[mid]! : (ratios[mid - 1]! + ratios[mid]!) / 2;
}

/** hkl as crystallographers write it on a plot: 111, or 1 0 12 with spaces once an index has two digits. */
function compactHkl(hkl: readonly number[]): string {
  return hkl.join(hkl.every((v) => v >= 0 && v < 10) ? '' : ' ');
}

function sampleList(samples: SampleSummary[]): HTMLElement {
  const list = h('ul', { role: 'listbox', 'aria-label': 'Samples', tabindex: 0, 'data-testid': 'sample-list' });
  for (const s of samples) {
    const overlay = h('input', { type: 'checkbox', 'aria-label': `Overlay ${s.name}`, title: 'Stack this pattern with the selected one' });
    overlay.checked = app.overlays.has(s.id);
    overlay.addEventListener('click', (event) => event.stopPropagation());
    overlay.addEventListener('change', () => {
      if (overlay.checked) app.overlays.add(s.id);
      else app.overlays.delete(s.id);
      changed();
    });
    const sub = [s.variant, s.hours !== null ? `${s.hours} h` : null, s.sizeNm !== null ? sizeText(s.sizeNm, s.sizeSigmaNm) : null].filter(Boolean).join(' · ');
    list.append(
      h(
        'li',
        { role: 'option', 'aria-selected': String(app.selected === s.id), 'data-sample-id': s.id, onclick: () => select(s.id) },
        overlay,
        h('span', { class: 'name', title: s.fileName }, s.name),
        h(
          'span',
          { class: 'sub' },
          h('span', { class: `badge ${verdictClass(s.verdict)}`, 'data-testid': 'verdict-badge' }, s.problem ? 'not read' : s.verdict),
          s.simulated ? h('span', { class: 'badge sim' }, 'simulated') : null,
          s.lowAngleCount ? h('span', { class: 'badge extra', title: 'Peaks below the target’s first line' }, `${s.lowAngleCount} low-angle`) : null,
          s.stale ? h('span', { class: 'badge not', title: s.staleReason ?? '', 'data-testid': 'stale-badge' }, 'out of date') : null,
          h('span', {}, sub || (s.problem ?? '')),
        ),
      ),
    );
  }
  list.addEventListener('keydown', (event) => {
    const index = samples.findIndex((s) => s.id === app.selected);
    if (event.key === 'ArrowDown' && index < samples.length - 1) select(samples[index + 1]!.id);
    else if (event.key === 'ArrowUp' && index > 0) select(samples[index - 1]!.id);
    else return;
    event.preventDefault();
  });
  return h(
    'aside',
    { class: 'panel sample-list' },
    h('h2', {}, `Samples (${samples.length})`),
    list,
    h('div', { class: 'drop-hint' }, 'Drop pattern files here or anywhere in the window (.xy, .txt, .csv, .cif).'),
  );
}

function select(id: number): void {
  app.selected = id;
  app.checked = null;
  changed();
  requestAnimationFrame(() => (document.querySelector(`[data-sample-id="${id}"]`) as HTMLElement | null)?.closest('ul')?.focus());
}

function segmented<T extends string>(label: string, options: Array<[T, string]>, current: T, onPick: (value: T) => void): HTMLElement {
  const group = h('span', { class: 'segmented', role: 'group', 'aria-label': label });
  for (const [value, text] of options) group.append(h('button', { 'aria-pressed': String(value === current), onclick: () => onPick(value) }, text));
  return group;
}

function toolbar(detail: SampleDetail, normalisationNote: string | null, areaRange: string | null): HTMLElement {
  const showFit = h('input', { type: 'checkbox' });
  showFit.checked = app.view.showFit;
  showFit.addEventListener('change', () => {
    app.view.showFit = showFit.checked;
    changed();
  });
  const hklLabels = h('input', { type: 'checkbox', 'data-testid': 'hkl-labels' });
  hklLabels.checked = app.view.hklLabels;
  hklLabels.addEventListener('change', () => {
    app.view.hklLabels = hklLabels.checked;
    changed();
  });
  const offset = h('input', { type: 'range', min: 0, max: 1, step: 0.05, value: app.view.offsetFraction, 'aria-label': 'Offset between stacked patterns' });
  offset.addEventListener('change', () => {
    app.view.offsetFraction = Number(offset.value);
    changed();
  });
  const peakAt = h('input', { type: 'number', step: 0.01, min: 0, max: 180, value: app.view.peakTwoTheta ?? '', placeholder: '2θ', 'aria-label': 'Peak to normalise by, 2θ (degrees)', 'data-testid': 'normalise-peak', class: 'narrow' });
  peakAt.addEventListener('change', () => {
    app.view.peakTwoTheta = peakAt.value === '' ? null : Number(peakAt.value);
    changed();
  });
  const pickNormalisation = (mode: Normalisation): void => {
    app.view.normalisation = mode;
    // By a chosen peak: start from the selected sample's strongest peak until the user types another.
    if (mode === 'peak' && app.view.peakTwoTheta === null && detail.peaks.length) app.view.peakTwoTheta = Number(detail.peaks.reduce((a, b) => (b.height > a.height ? b : a)).twoTheta.toFixed(2));
    changed();
  };
  const normalisation = app.overlays.size
    ? h(
        'span',
        { class: 'row small' },
        segmented('Normalise', [['none', 'counts'], ['max', 'by max'], ['peak', 'by peak'], ['area', 'by area']], app.view.normalisation, pickNormalisation),
        app.view.normalisation === 'peak' ? h('label', { class: 'row small', title: 'The highest point within ±0.3° of this 2θ is brought to 100 in every pattern' }, 'at', peakAt, '°') : null,
        normalisationNote ? h('span', { class: 'caution-inline', 'data-testid': 'normalise-note' }, normalisationNote) : null,
        areaRange ? h('span', { class: 'small', 'data-testid': 'normalise-range' }, areaRange) : null,
      )
    : null;
  const base = detail.fileName.replace(/\.[^.]+$/, '');
  return h(
    'div',
    { class: 'toolbar' },
    h('strong', {}, detail.name),
    detail.simulated ? h('span', { class: 'badge sim' }, 'simulated') : null,
    h('span', { class: 'small' }, `${detail.points} points · ${detail.wavelengthLabel}`),
    h('span', { class: 'spacer' }),
    segmented('Axis', [['2theta', '2θ'], ['d', 'd'], ['q', 'Q']], app.view.axis, (v) => ((app.view.axis = v), changed())),
    segmented('Intensity', [['linear', 'linear'], ['sqrt', '√'], ['log', 'log']], app.view.scale, (v) => ((app.view.scale = v), changed())),
    h('label', { class: 'row small' }, showFit, 'fit'),
    h('label', { class: 'row small', title: 'Miller indices over the matched peaks; labels that find no room are left out (hover a mark for its line)' }, hklLabels, 'hkl'),
    normalisation,
    app.overlays.size ? h('label', { class: 'row small' }, 'offset', offset) : null,
    h('button', { class: 'secondary', onclick: () => chart?.resetZoom(), title: 'R' }, 'Reset zoom'),
    h('button', { class: 'secondary', onclick: () => chart && void saveFile({ suggestedName: `${base}.png`, bytesBase64: chart.toPng().split(',')[1]! }, 'image/png') }, 'PNG'),
    h('button', { class: 'secondary', onclick: () => chart && chart.currentView() && void saveFile({ suggestedName: `${base}.svg`, text: chartToSvg(chart.chart, chart.currentView()!) }, 'image/svg+xml') }, 'SVG'),
  );
}

function verdictCard(detail: SampleDetail): HTMLElement {
  const card = h('div', { class: 'panel stack', 'data-testid': 'verdict-card' });
  if (detail.problem) {
    card.append(h('div', { class: 'verdict-title not' }, 'Not analysed'), h('p', {}, detail.problem));
    return card;
  }
  const match = detail.match;
  const phase: PhaseMatch | undefined = detail.phase ? match?.phases.find((p) => p.name === detail.phase!.name) : undefined;
  card.append(h('p', { class: `headline ${verdictClass(detail.verdict)}`, 'data-testid': 'headline' }, headline(detail)));
  card.append(h('div', { class: `verdict-title ${verdictClass(detail.verdict)}`, 'data-testid': 'verdict' }, sentenceCase(detail.verdict)));
  if (detail.stale) {
    card.append(h('div', { class: 'caution', 'data-testid': 'stale' }, h('strong', {}, 'Out of date: '), `${detail.staleReason ?? 'the settings changed'}. `, h('button', { type: 'button', class: 'secondary', onclick: () => void reanalyze(detail.id) }, 'Analyse again')));
  }
  if (detail.phase) card.append(h('div', {}, `${detail.phase.name}: ${detail.phase.verdict} (scores under “Candidates and scores”)`));
  const lowAngle = detail.lowAnglePeaks;
  if (lowAngle.length) {
    const sources = new Map((match?.unexplained ?? []).map((u) => [u.twoTheta, u.possibleSources]));
    const describe = (u: (typeof lowAngle)[number]): string => {
      const could = sources.get(u.twoTheta) ?? [];
      return `${u.twoTheta.toFixed(2)}° 2θ (d ${u.d.toFixed(2)} Å) ${u.phase ? `from ${u.phase}` : could.length ? `unexplained, could be ${could.join(' or ')}` : 'unexplained'}`;
    };
    card.append(
      h('div', { class: 'caution', 'data-testid': 'low-angle' }, h('strong', {}, `Low-angle extra peak${lowAngle.length > 1 ? 's' : ''} below the target’s first line: `), lowAngle.map(describe).join('; ')),
    );
  }
  const reasons = [...(match?.reasons ?? []), ...(phase?.reasons ?? [])];
  if (reasons.length) card.append(h('ul', { class: 'reasons' }, ...reasons.map((r) => h('li', {}, r))));
  const composition = compositionBlock(detail);
  if (composition) card.append(composition);
  card.append(labelsForm(detail));
  for (const note of detail.readerNotes) card.append(h('div', { class: 'small' }, `Reader: ${note}`));
  return card;
}

/**
 * The crystallite sizes across the full width below the verdict and the peaks: the summary lines,
 * the size–strain plot and the per-peak table side by side, so no column of the table is hidden.
 */
function sizePanel(detail: SampleDetail): HTMLElement | null {
  if (detail.problem) return null;
  const size = detail.size;
  const panel = h('div', { class: 'panel stack size-panel' }, h('h3', {}, 'Crystallite size'));
  if (!size?.scherrer && size?.groupFit) {
    // Every line overlapped another phase's: the size comes from the constrained group fit of the pattern.
    panel.append(
      h('div', { class: 'size-line', 'data-testid': 'size' }, `Constrained group fit: ${sizeText(size.groupFit.sizeNm, size.groupFit.sizeSigmaNm)}`),
      h('div', { class: 'small' }, size.groupFit.convention),
    );
    for (const note of size.notes) panel.append(h('div', { class: 'small' }, note));
    return panel;
  }
  if (!size?.scherrer) {
    panel.append(h('div', { class: 'small', 'data-testid': 'size' }, size?.groupFitReason ? `No size: ${size.groupFitReason}.` : 'No size: no resolved peak gave one.'));
    for (const note of size?.notes ?? []) panel.append(h('div', { class: 'small' }, note));
    return panel;
  }
  append(panel, [
    h('div', { class: 'size-line', 'data-testid': 'size' }, `Scherrer: ${sizeText(size.scherrer.sizeNm, Number.isFinite(size.scherrer.sizeSigmaNm) ? size.scherrer.sizeSigmaNm : null)}`),
    size.sizeStrain
      ? h('div', { 'data-testid': 'size-strain' }, `Size–strain: ${size.sizeStrain.statement}, R² ${fmt(size.sizeStrain.r2, 3)}`)
      : h('div', { class: 'small', 'data-testid': 'size-strain' }, `No size–strain plot: ${size.sizeStrainReason ?? 'not available'}.`),
    size.williamsonHall ? h('div', { 'data-testid': 'williamson-hall' }, `Cross-check, Williamson–Hall (Voigt parts): ${size.williamsonHall.sizeNm === null ? '—' : `${size.williamsonHall.sizeNm.toFixed(1)} nm`}, ${size.williamsonHall.strainStatement}, R² ${fmt(size.williamsonHall.r2, 2)}`) : null,
  ]);
  const side = h('div', { class: 'size-side' });
  append(side, [
    size.sizeStrain ? h('figure', { class: 'size-strain' }, sizeStrainChart(size.sizeStrain), h('figcaption', { class: 'small' }, size.sizeStrain.convention)) : null,
    h(
      'div',
      { class: 'stack' },
      sizePeakTable(size.peaks, size.breadth),
      h('div', { class: 'small' }, `K = ${size.k}, ${size.breadth === 'fwhm' ? 'FWHM' : 'integral breadth'}, ${size.instrumentCorrected ? `instrument-corrected (${size.correction})` : 'not corrected for the instrument (lower bound)'}${size.phase ? `, lines of ${size.phase}` : ''}.`),
      ...size.notes.map((note) => h('div', { class: 'small' }, note)),
    ),
  ]);
  panel.append(side);
  return panel;
}

/**
 * Per-peak sizes as the command line gives them: hkl, 2θ, observed, instrument and sample breadth,
 * size ± σ (a lower bound at the instrument limit) and the limit in words, every row shown.
 */
function sizePeakTable(peaks: NonNullable<SampleDetail['size']>['peaks'], breadth: string): HTMLElement {
  const overlapped = peaks.filter((p) => p.limit === 'overlap').length;
  const kind = breadth === 'fwhm' ? 'FWHM' : 'β';
  const degrees = (v: number | null): string => (v === null ? '—' : v.toFixed(4));
  const sizeCell = (p: (typeof peaks)[number]): string => (p.limit === 'instrument' && p.sizeNm !== null ? `> ${p.sizeNm} nm` : sizeText(p.sizeNm, p.sizeSigmaNm));
  // The limit in a few words; the command line's whole sentence shows on hover over the row.
  const limitCell = (p: (typeof peaks)[number]): string => (p.limit === 'instrument' ? 'instrument limit (lower bound)' : p.limit === 'overlap' ? 'overlapped' : '');
  const table = h(
    'table',
    { class: 'size-peaks', 'data-testid': 'size-peaks' },
    h('thead', {}, h('tr', {}, ...['hkl', '2θ (°)', `observed ${kind} (°)`, `instrument ${kind} (°)`, `sample ${kind} (°)`, 'size (nm)', 'limit'].map((c) => h('th', {}, c)))),
    h(
      'tbody',
      {},
      ...peaks.map((p) =>
        h(
          'tr',
          { title: p.statement },
          h('td', {}, p.hkl ? hklText(p.hkl) : '—'),
          h('td', {}, p.twoTheta.toFixed(3)),
          h('td', {}, degrees(p.observedBreadthDeg)),
          h('td', {}, degrees(p.instrumentBreadthDeg)),
          h('td', {}, degrees(p.sampleBreadthDeg)),
          h('td', {}, sizeCell(p)),
          h('td', {}, limitCell(p)),
        ),
      ),
    ),
  );
  const note = overlapped ? h('div', { class: 'small' }, `${overlapped} peak${overlapped === 1 ? ' is' : 's are'} not resolved from a neighbouring peak, so give no size.`) : null;
  return h('div', { class: 'size-table' }, table, note);
}

/** The answer in one sentence, before any evidence: target present or not, what else and its share, the low-angle alarm, the size. */
function headline(detail: SampleDetail): string {
  const parts: string[] = [];
  const target = detail.phase;
  parts.push(target ? `${target.name} ${target.verdict}` : 'No target phase set');
  const others = (detail.match?.phases ?? []).filter((p) => p.verdict !== 'not-seen' && p.name !== target?.name);
  if (others.length) parts.push(`with ${others.map((p) => phaseShareText(p, true)).join(', ')}`);
  const sentence = [parts.join(' ')];
  const low = detail.lowAnglePeaks.length;
  if (low) sentence.push(`${low} low-angle extra peak${low > 1 ? 's' : ''} (possible hydrolysis)`);
  const scherrer = detail.size?.scherrer;
  const groupFit = detail.size?.groupFit;
  if (scherrer) sentence.push(`size ${sizeText(scherrer.sizeNm, Number.isFinite(scherrer.sizeSigmaNm) ? scherrer.sizeSigmaNm : null)}`);
  else if (groupFit) sentence.push(`size ${sizeText(groupFit.sizeNm, groupFit.sizeSigmaNm)} (group fit: every line overlaps another phase's)`);
  return `${sentence.join(' · ')}.`;
}

/**
 * What the sample is made of (composition.ts): each phase seen with its weight % ± σ, absolute with
 * the amorphous content where an internal standard was declared, else the crystallinity estimate.
 */
function compositionBlock(detail: SampleDetail): HTMLElement | null {
  if (!detail.match) return null;
  const { parts, notes } = compositionOf(detail.match, detail.crystallinity);
  if (!parts.length && !notes.length) return null;
  return h(
    'div',
    { 'data-testid': 'composition' },
    h('h3', {}, 'Composition'),
    parts.length ? h('ul', { class: 'composition' }, ...parts.map((t) => h('li', {}, t))) : null,
    ...notes.map((t) => h('p', { class: 'small' }, t)),
  );
}

function labelsForm(detail: SampleDetail): HTMLElement {
  const name = h('input', { type: 'text', value: detail.name, placeholder: detail.fileName, 'aria-label': 'Sample name' });
  const variant = h('input', { type: 'text', value: detail.variant ?? '', placeholder: 'as made, washed…', 'aria-label': 'Workup variant' });
  const hours = h('input', { type: 'number', min: 0, step: 'any', value: detail.hours ?? '', 'aria-label': 'Exposure hours' });
  const temperature = h('input', { type: 'number', min: -273.15, step: 'any', value: detail.temperature ?? '', 'aria-label': 'Temperature in °C', title: 'Annealing, drying or measuring temperature' });
  const form = h(
    'form',
    { class: 'row' },
    field('Name', name),
    field('Variant', variant),
    field('Exposure (h)', hours),
    field('Temperature (°C)', temperature),
    h('button', { type: 'submit', class: 'secondary' }, 'Save labels'),
    h('button', { type: 'button', class: 'secondary', onclick: () => void reanalyze(detail.id) }, 'Re-analyse'),
    h('button', { type: 'button', class: 'danger', onclick: () => void remove(detail) }, 'Remove'),
  );
  form.addEventListener('submit', async (event) => {
    event.preventDefault();
    try {
      const newName = name.value.trim();
      await call('sample.label', { id: detail.id, variant: variant.value.trim() || null, hours: hours.value === '' ? null : Number(hours.value), temperature: temperature.value === '' ? null : Number(temperature.value), name: newName && newName !== detail.fileName ? newName : null });
      app.project = await call('project.state', {});
      app.details.delete(detail.id);
      changed();
      notify('Labels saved.', 'done');
    } catch (err) {
      showError(err);
    }
  });
  return form;
}

async function reanalyze(id: number): Promise<void> {
  try {
    await call('sample.reanalyze', { id });
    app.project = await call('project.state', {});
    app.details.delete(id);
    changed();
  } catch (err) {
    showError(err);
  }
}

async function remove(detail: SampleDetail): Promise<void> {
  if (!window.confirm(`Remove ${detail.name} from the project? Its file and results are deleted from the project.`)) return;
  try {
    app.project = await call('sample.remove', { id: detail.id });
    app.selected = null;
    app.details.delete(detail.id);
    changed();
  } catch (err) {
    showError(err);
  }
}

function details(detail: SampleDetail, checked: Set<string>, legend: PhaseLegend[]): HTMLElement {
  return h(
    'div',
    { class: 'details' },
    verdictCard(detail),
    h('div', { class: 'panel stack' }, candidates(detail, checked, legend), h('h3', {}, `Peaks (${detail.peaks.length})`), peakTable(detail, legend)),
    sizePanel(detail),
  );
}

/** A small square in a phase's mark colour, beside its name in tables. */
function swatch(color: string | undefined): HTMLElement | null {
  if (!color) return null;
  const el = h('span', { class: 'swatch', 'aria-hidden': 'true' });
  // Through the style object: the content-security policy refuses style attributes.
  el.style.backgroundColor = color;
  return el;
}

/**
 * The candidates the match weighed, with their scores, in a details view collapsed by default: the
 * pattern's marks say which phase explains which peak; the scores are the evidence behind it. Each
 * row's box draws that reference's lines as sticks on the pattern.
 */
function candidates(detail: SampleDetail, checked: Set<string>, legend: PhaseLegend[]): HTMLElement {
  const colourOf = new Map(legend.map((p) => [p.name, p.color]));
  const body = h('tbody');
  for (const p of detail.match?.phases ?? []) {
    const box = h('input', { type: 'checkbox', 'aria-label': `Draw the lines of ${p.name}` });
    box.checked = checked.has(p.name);
    box.addEventListener('change', () => {
      const next = new Set(checked);
      if (box.checked) next.add(p.name);
      else next.delete(p.name);
      app.checked = next;
      changed();
    });
    body.append(
      h(
        'tr',
        {},
        h('td', { class: 'left' }, box),
        h('td', { class: 'left wrap', title: p.name }, swatch(colourOf.get(p.name)), p.name),
        h('td', { class: 'left' }, p.verdict),
        h('td', {}, p.score.toFixed(2)),
        h('td', {}, p.matchedLines),
        h('td', {}, `${(100 * p.explainedAreaShare).toFixed(0)} %`),
      ),
    );
  }
  const view = h(
    'details',
    { class: 'candidates', 'data-testid': 'candidates' },
    h('summary', {}, h('strong', {}, 'Candidates and scores'), h('span', { class: 'small' }, ` (${detail.match?.phases.length ?? 0}; tick a box to draw its lines on the pattern)`)),
    h(
      'div',
      { class: 'table-scroll' },
      h('table', { class: 'grid' }, h('thead', {}, h('tr', {}, ...['lines', 'phase', 'verdict', 'score', 'matched', 'of peak area'].map((t, i) => h('th', { class: i < 3 ? 'left' : '' }, t)))), body),
    ),
  );
  view.open = app.view.candidatesOpen;
  view.addEventListener('toggle', () => (app.view.candidatesOpen = view.open));
  return view;
}

/**
 * A − B of two samples of the project: B's counts interpolated linearly onto A's 2θ points over the
 * range both cover (grid.ts), each divided first by its normalisation when one is chosen.
 */
function differencePanel(selected: SampleDetail, samples: SampleSummary[]): HTMLElement {
  const state = app.view.difference;
  const others = samples.filter((s) => s.id !== selected.id);
  const a = state.a !== null && samples.some((s) => s.id === state.a) ? state.a : selected.id;
  const b = state.b !== null && samples.some((s) => s.id === state.b) ? state.b : ([...app.overlays].find((id) => id !== a) ?? others[0]?.id ?? selected.id);
  const pick = (label: string, value: number, key: 'a' | 'b'): HTMLElement => {
    const select = h('select', { 'aria-label': label, 'data-testid': `difference-${key}` });
    for (const s of samples) select.append(h('option', { value: s.id, selected: s.id === value }, s.name));
    select.addEventListener('change', () => {
      state[key] = Number(select.value);
      changed();
    });
    return h('label', { class: 'row small' }, `${key.toUpperCase()}`, select);
  };
  const panel = h('details', { class: 'panel difference', 'data-testid': 'difference-panel' }, h('summary', {}, h('strong', {}, 'Difference of two samples (A − B)')));
  panel.open = state.open;
  panel.addEventListener('toggle', () => {
    if (state.open === panel.open) return;
    state.open = panel.open;
    changed();
  });
  if (!panel.open) return panel;
  const note = h('p', { class: 'small', 'data-testid': 'difference-note' }, '…');
  const canvas = h('canvas', { role: 'img', 'aria-label': 'Difference of two samples', 'data-testid': 'difference-chart' });
  panel.append(h('div', { class: 'row' }, pick('Sample A', a, 'a'), h('span', {}, '−'), pick('Sample B', b, 'b')), note, h('div', { class: 'chart-box difference-box' }, canvas));
  if (a === b) {
    note.textContent = samples.length > 1 ? 'Pick two different samples for A and B.' : 'The project has one sample: add another to compare.';
    return panel;
  }
  void (async () => {
    try {
      const [da, db] = [await sampleDetail(a), await sampleDetail(b)];
      const [sa, sb] = [series(da), series(db)];
      const mode = app.view.normalisation;
      const options = { peakTwoTheta: app.view.peakTwoTheta, range: sharedRange([sa, sb]) };
      const fa = normalisationFactor(sa.x, sa.y, mode, options);
      const fb = normalisationFactor(sb.x, sb.y, mode, options);
      const scaled = !('problem' in fa) && !('problem' in fb);
      const diff = differenceOnGrid(sa, sb, scaled ? fa.factor : 1, scaled ? fb.factor : 1);
      if (!diff) {
        note.textContent = `${da.name} and ${db.name} share no 2θ range: no difference to draw.`;
        return;
      }
      const grid = diff.interpolated
        ? `${db.name} interpolated linearly onto the 2θ points of ${da.name}`
        : 'both measured on the same 2θ points (no interpolation)';
      const scaling = mode === 'none' || !scaled ? 'in counts' : `each normalised ${mode === 'area' ? 'by area' : mode === 'max' ? 'by its highest point' : `by its height near ${app.view.peakTwoTheta}°`} first`;
      note.textContent = `${da.name} − ${db.name}, ${scaling}; ${grid}, over ${diff.from.toFixed(2)}–${diff.to.toFixed(2)}° 2θ (the range both cover).`;
      differenceChart?.destroy();
      differenceChart = new PatternChart(canvas);
      differenceChart.render({
        main: { label: `${da.name} − ${db.name}`, x: Float32Array.from(diff.x), y: Float32Array.from(diff.y) },
        overlays: [],
        marks: [],
        references: [],
        lambda: da.lambda1,
        axis: app.view.axis,
        scale: 'linear',
        offsetFraction: 0,
        showFit: false,
        intensityTitle: mode === 'none' || !scaled ? 'A − B (counts)' : 'A − B (normalised)',
        measured: false,
        readoutValue: mode === 'none' || !scaled ? 'A − B counts' : 'A − B normalised',
      });
    } catch (err) {
      showError(err);
    }
  })();
  return panel;
}

function peakTable(detail: SampleDetail, legend: PhaseLegend[]): HTMLElement {
  const colourOf = new Map(legend.map((p) => [p.name, p.color]));
  const satelliteOf = new Map((detail.match?.unexplained ?? []).filter((u) => u.satelliteOf).map((u) => [u.peakIndex, satelliteLabel(u.satelliteOf!)]));
  const body = h('tbody');
  for (const p of detail.peaks) {
    const satellite = satelliteOf.get(p.index);
    // A possible satellite is not an unexplained peak of the sample: no warning colour on its row.
    const kind = p.lowAngle ? 'low-angle' : p.unexplained && !satelliteOf.has(p.index) ? 'unexplained' : '';
    const row = h(
      'tr',
      { class: kind, title: 'Click to zoom to this peak' },
      h('td', {}, p.twoTheta.toFixed(3)),
      h('td', {}, fmt(p.twoThetaSigma, 4)),
      h('td', {}, p.d.toFixed(4)),
      h('td', {}, p.height.toFixed(0)),
      h('td', {}, fmt(p.fwhm, 3)),
      h('td', {}, fmt(p.integralBreadth, 3)),
      h('td', {}, fmt(p.eta, 2)),
      h('td', { class: 'left wrap' }, swatch(p.phase ? colourOf.get(p.phase) : undefined), `${p.phase ?? (satellite ? `${satellite} satellite?` : 'unexplained')}${p.lowAngle ? ' (low angle)' : ''}`),
    );
    row.addEventListener('click', () => {
      if (app.view.axis === '2theta') chart?.chart.zoomScale('x', { min: p.twoTheta - 1.5, max: p.twoTheta + 1.5 }, 'none');
    });
    body.append(row);
  }
  return h(
    'div',
    { class: 'table-scroll' },
    h(
      'table',
      { class: 'grid', 'data-testid': 'peak-table' },
      h('thead', {}, h('tr', {}, ...['2θ (°)', 'σ', 'd (Å)', 'height', 'FWHM', 'β', 'η', 'phase'].map((t, i) => h('th', { class: i === 7 ? 'left' : '' }, t)))),
      body,
    ),
  );
}

function sentenceCase(text: string): string {
  return text.charAt(0).toUpperCase() + text.slice(1);
}
