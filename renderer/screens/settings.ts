import type { AppPreferences, ProjectSettings } from '../../src/api/contract.js';
import { call } from '../base/api.js';
import { field, h } from '../base/dom.js';
import { app, changed } from '../base/state.js';
import { notify, showError, withProgress } from '../base/ui.js';

/** The project's analysis settings; saving re-analyses every sample with them. */
export async function renderSettings(root: HTMLElement): Promise<void> {
  const s = app.project!.settings;
  const references = await call('library.list', {});
  const wavelength = h('input', { type: 'text', value: s.wavelength, 'aria-label': 'Wavelength', list: 'anodes' });
  const anodes = h('datalist', { id: 'anodes' }, ...['Cu', 'Co', 'Fe', 'Cr', 'Mo', 'Ag'].map((a) => h('option', { value: a })));
  const tolerance = h('input', { type: 'number', min: 0.005, max: 1, step: 0.005, value: s.toleranceDeg, 'aria-label': 'Tolerance' });
  const k = h('input', { type: 'number', min: 0.5, max: 1.5, step: 0.01, value: s.scherrerK, 'aria-label': 'Scherrer K' });
  const background = h('input', { type: 'number', min: 0.1, max: 20, step: 0.1, value: s.backgroundHalfWidthDeg ?? '', placeholder: 'automatic', 'aria-label': 'Background width' });
  const breadth = h('select', { 'aria-label': 'Breadth' }, h('option', { value: 'fwhm' }, 'FWHM'), h('option', { value: 'integral' }, 'integral breadth'));
  breadth.value = s.breadth;
  const correction = h('select', { 'aria-label': 'Instrument correction' }, ...['voigt', 'lorentzian', 'gaussian'].map((c) => h('option', { value: c }, c)));
  correction.value = s.correction;
  const target = h('select', { 'aria-label': 'Target phase', 'data-testid': 'target-select' }, h('option', { value: '' }, '(none)'), ...references.map((r) => h('option', { value: r.name }, `${r.name} — ${r.formula}`)));
  target.value = s.target ?? '';
  const standard = h('select', { 'aria-label': 'Internal standard', 'data-testid': 'internal-standard' }, h('option', { value: '' }, '(none)'), ...references.map((r) => h('option', { value: r.name }, `${r.name} — ${r.formula}`)));
  standard.value = s.internalStandard ?? '';
  const standardPercent = h('input', { type: 'number', min: 0.1, max: 90, step: 'any', value: s.internalStandardPercent ?? '', placeholder: 'wt %', 'aria-label': 'Internal standard weight %', 'data-testid': 'internal-standard-percent' });
  const form = h(
    'form',
    { class: 'panel stack' },
    h('h2', {}, 'Analysis settings of this project'),
    h(
      'div',
      { class: 'form' },
      field('Wavelength', wavelength, 'Anode (Cu, Co, Fe, Cr, Mo, Ag: Kα1/Kα2) or a number in Å.'),
      field('Matching tolerance (° 2θ)', tolerance, '0.05–0.2° is usual; a zero shift is refined separately.'),
      field('Target phase', target, 'The phase you expect; verdicts are about it.'),
      field('Internal standard', standard, 'A phase weighed into every sample (silicon, corundum…): gives absolute weight % and the amorphous content.'),
      field('Standard spiked at (wt %)', standardPercent, 'Weight % of the standard in the spiked sample; leave both empty for none.'),
      field('Scherrer K', k, '0.9 is common; 0.89 spheres (FWHM), 0.94 cubes, 1.0 with integral breadth.'),
      field('Breadth', breadth),
      field('Instrument correction', correction, 'Voigt splits Lorentzian and Gaussian parts.'),
      field('Background width (° 2θ)', background, 'SNIP half-width: wider follows less of the peaks. Empty: automatic (1°, widened to broad peaks).'),
    ),
    h('div', { class: 'row' }, h('button', { type: 'submit' }, 'Save and re-analyse'), h('span', { class: 'small' }, 'Settings are kept in the project file.')),
    anodes,
  );
  form.addEventListener('submit', async (event) => {
    event.preventDefault();
    const settings: Partial<ProjectSettings> = {
      wavelength: wavelength.value,
      toleranceDeg: Number(tolerance.value),
      scherrerK: Number(k.value),
      backgroundHalfWidthDeg: background.value.trim() === '' ? null : Number(background.value),
      breadth: breadth.value as ProjectSettings['breadth'],
      correction: correction.value as ProjectSettings['correction'],
      target: target.value || null,
      internalStandard: standard.value || null,
      internalStandardPercent: standardPercent.value.trim() === '' ? null : Number(standardPercent.value),
    };
    try {
      const state = await call('project.settings', { settings });
      app.project = state;
      const { done, cancelled } = await withProgress('Re-analysing with the new settings', state.samples, async (sample) => {
        await call('sample.reanalyze', { id: sample.id });
      });
      app.project = await call('project.state', {});
      app.details.clear();
      changed();
      notify(`Settings saved; ${done} sample${done === 1 ? '' : 's'} re-analysed${cancelled ? ' (cancelled before the rest)' : ''}.`, 'done');
    } catch (err) {
      showError(err);
    }
  });
  root.append(h('div', { class: 'screen' }, projectPanel(), form, appPanel()));
}

/** The app's own settings, the same for every project: kept in the app-data folder. */
function appPanel(): HTMLElement {
  const paper = h('select', { 'aria-label': 'Report paper size', 'data-testid': 'paper-select' }, h('option', { value: 'A4' }, 'A4 (210 × 297 mm)'), h('option', { value: 'Letter' }, 'Letter (8.5 × 11 in)'));
  paper.value = app.info?.preferences.paper ?? 'A4';
  paper.addEventListener('change', async () => {
    try {
      const preferences = await call('app.preferences', { paper: paper.value as AppPreferences['paper'] });
      if (app.info) app.info.preferences = preferences;
      notify(`Reports now print on ${preferences.paper} paper.`, 'done');
    } catch (err) {
      showError(err);
    }
  });
  return h(
    'div',
    { class: 'panel stack' },
    h('h2', {}, 'App settings'),
    h('div', { class: 'form' }, field('Report paper size', paper, 'Used by the HTML report when printed and by the PDF report.')),
    h('span', { class: 'small' }, 'Kept with the app, the same for every project.'),
  );
}

/** Rename the open project, or delete it (its file is kept in the projects folder's deleted/ folder). */
function projectPanel(): HTMLElement {
  const project = app.project!.project;
  const name = h('input', { type: 'text', value: project.name, 'aria-label': 'Project name' });
  const form = h(
    'form',
    { class: 'panel row' },
    field('Project name', name),
    h('button', { type: 'submit', class: 'secondary' }, 'Rename'),
    h('button', { type: 'button', class: 'danger', onclick: () => void deleteProject() }, 'Delete project…'),
  );
  form.addEventListener('submit', async (event) => {
    event.preventDefault();
    try {
      app.project = await call('project.rename', { name: name.value });
      app.info = await call('app.info', {});
      changed();
      notify('Project renamed.', 'done');
    } catch (err) {
      showError(err);
    }
  });
  return form;
}

async function deleteProject(): Promise<void> {
  const project = app.project!.project;
  if (!window.confirm(`Delete the project "${project.name}" from the list? Its file, with the raw patterns and results, is kept in the projects folder's "deleted" folder.`)) return;
  try {
    const { keptAt } = await call('project.delete', { id: project.id });
    app.project = null;
    app.info = await call('app.info', {});
    app.selected = null;
    app.details.clear();
    changed();
    notify(`Project deleted from the list; its file is kept at ${keptAt}.`, 'done');
  } catch (err) {
    showError(err);
  }
}
