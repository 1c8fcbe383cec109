import type { InstrumentView } from '../../src/api/contract.js';
import { call } from '../base/api.js';
import { loadSample } from '../base/sample-data.js';
import { Chart, COLORS } from '../chart/pattern-chart.js';
import { clear, field, h } from '../base/dom.js';
import { app, changed } from '../base/state.js';
import { notify, showError, withProgress } from '../base/ui.js';

let chart: Chart | null = null;
let fitted: InstrumentView | null = null;

/** The instrument profile: fit a measured standard, see the Caglioti curve with its points, save it to the project. */
export async function renderInstrument(root: HTMLElement): Promise<void> {
  chart?.destroy();
  chart = null;
  const project = app.project!;
  const standards = await call('library.list', { tag: 'standard' });
  const sampleSelect = h('select', { 'aria-label': 'Standard pattern', 'data-testid': 'instrument-sample' }, ...project.samples.map((s) => h('option', { value: s.id }, s.name)));
  const guess = project.samples.find((s) => /lab6|standard|silicon|\bsi\b/i.test(s.fileName));
  if (guess) sampleSelect.value = String(guess.id);
  const standardSelect = h('select', { 'aria-label': 'Standard reference' }, ...standards.map((r) => h('option', { value: r.name }, `${r.name} (${r.formula})`)));
  if (project.instrument && standards.some((r) => r.name === project.instrument!.standard)) standardSelect.value = project.instrument.standard;
  // The standard is the reference the chosen pattern's own analysis found present in it, not the first in the list.
  const chooseStandardFromPattern = async (): Promise<void> => {
    const id = Number(sampleSelect.value);
    if (!id) return;
    try {
      const detail = app.details.get(id) ?? (await loadSample(id));
      const found = detail.match?.phases.find((p) => p.verdict === 'present' && standards.some((r) => r.name === p.name));
      if (found) standardSelect.value = found.name;
    } catch {
      // The user can still choose the standard by hand.
    }
  };
  sampleSelect.addEventListener('change', () => void chooseStandardFromPattern());
  if (!project.instrument) void chooseStandardFromPattern();
  const result = h('div', { class: 'stack' });
  const fit = async (save: boolean): Promise<void> => {
    try {
      const params = { sampleId: Number(sampleSelect.value), standard: standardSelect.value };
      if (save) {
        app.project = await call('instrument.save', params);
        await reanalyseStale('Instrument profile saved to the project');
      } else {
        fitted = await call('instrument.fit', params);
        show(result, fitted, false);
      }
    } catch (err) {
      showError(err);
    }
  };
  const current = project.instrument;
  root.append(
    h(
      'div',
      { class: 'screen stack' },
      h(
        'div',
        { class: 'panel stack' },
        h('h2', {}, 'Instrument profile'),
        h('p', { class: 'small' }, 'Measure a line-profile standard (LaB6 or silicon: large, strain-free crystallites, so its peak widths are the instrument’s), add its pattern to the project, and fit it here. Sizes are then corrected for the instrument’s own breadth.'),
        standards.length ? null : h('p', { class: 'caution' }, 'The library has no reference tagged “standard”: add LaB6 or silicon first.'),
        h('div', { class: 'row' }, field('Pattern of the standard', sampleSelect), field('Standard reference', standardSelect), h('button', { onclick: () => void fit(false), disabled: !project.samples.length || !standards.length }, 'Fit'), h('button', { class: 'secondary', onclick: () => void fit(true), disabled: !project.samples.length || !standards.length }, 'Fit and save to project'), current ? h('button', { class: 'secondary', onclick: () => void clearProfile() }, 'Remove the saved profile') : null),
      ),
      result,
    ),
  );
  if (fitted) show(result, fitted, false);
  else if (current) show(result, current, true);
}

/**
 * After the profile changed, analyse again the samples it made out of date (as saving the settings
 * does), so sizes and series all use one profile; Cancel leaves the rest marked out of date.
 */
async function reanalyseStale(what: string): Promise<void> {
  const stale = app.project!.samples.filter((s) => s.stale);
  const { done, cancelled } = await withProgress('Analysing the samples again with the new instrument profile', stale, async (sample) => {
    await call('sample.reanalyze', { id: sample.id });
  });
  app.project = await call('project.state', {});
  app.details.clear();
  changed();
  notify(`${what}; ${done} sample${done === 1 ? '' : 's'} analysed again with it${cancelled ? ' (cancelled: the rest stay marked out of date)' : ''}.`, 'done');
}

async function clearProfile(): Promise<void> {
  try {
    app.project = await call('instrument.clear', {});
    fitted = null;
    await reanalyseStale('Instrument profile removed: sizes are no longer corrected for the instrument (lower bounds)');
  } catch (err) {
    showError(err);
  }
}

function show(box: HTMLElement, view: InstrumentView, saved: boolean): void {
  chart?.destroy();
  clear(box);
  const canvas = h('canvas', { role: 'img', 'aria-label': 'Caglioti curve' });
  box.append(
    h(
      'div',
      { class: 'panel stack', 'data-testid': 'instrument-result' },
      h('h3', {}, saved ? `Saved profile: ${view.standard} on ${view.sampleName}` : `Fitted: ${view.standard} on ${view.sampleName}`),
      h('dl', { class: 'kv' }, h('dt', {}, 'U (deg²)'), h('dd', {}, view.u.toExponential(3)), h('dt', {}, 'V (deg²)'), h('dd', {}, view.v.toExponential(3)), h('dt', {}, 'W (deg²)'), h('dd', {}, view.w.toExponential(3)), h('dt', {}, 'Peaks used'), h('dd', {}, String(view.points.length))),
      h('p', { class: 'small' }, 'FWHM² = U tan²θ + V tanθ + W (Caglioti, Paoletti & Ricci, 1958). Points: the standard’s fitted peak widths; line: the fitted curve.'),
      ...view.notes.map((n) => h('p', { class: 'caution' }, n)),
      h('div', { class: 'series-chart' }, canvas),
    ),
  );
  chart = new Chart(canvas, {
    type: 'scatter',
    data: {
      datasets: [
        { type: 'scatter', label: 'standard peaks (FWHM)', data: view.points.map((p) => ({ x: p.twoTheta, y: p.fwhm })), backgroundColor: COLORS.measured, pointRadius: 4 },
        { type: 'line', label: 'Caglioti curve', data: view.curve.map((p) => ({ x: p.twoTheta, y: p.fwhm })), borderColor: COLORS.fit, pointRadius: 0, borderWidth: 1.5 },
      ],
    },
    options: {
      animation: false,
      responsive: true,
      maintainAspectRatio: false,
      scales: { x: { type: 'linear', title: { display: true, text: '2θ (degrees)' } }, y: { type: 'linear', title: { display: true, text: 'FWHM (degrees 2θ)' }, beginAtZero: true } },
    },
  });
}
