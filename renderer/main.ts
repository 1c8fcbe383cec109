import { call, isDesktop } from './base/api.js';
import { addPatternFiles, exportReport, filesFromDrop, openDemo, openPatternFiles } from './base/actions.js';
import { h, clear } from './base/dom.js';
import { renderInstrument } from './screens/instrument.js';
import { renderLibrary } from './screens/library.js';
import { renderReport } from './screens/report.js';
import { renderSamples } from './screens/samples.js';
import { renderSeries } from './screens/series.js';
import { renderSettings } from './screens/settings.js';
import { app, changed, onChange, SCREENS, setProject, type ScreenName } from './base/state.js';
import { errorText, notify, showError } from './base/ui.js';

const RENDERERS: Record<ScreenName, (root: HTMLElement) => void | Promise<void>> = {
  samples: renderSamples,
  library: renderLibrary,
  instrument: renderInstrument,
  series: renderSeries,
  report: renderReport,
  settings: renderSettings,
};

function topBar(): HTMLElement {
  const info = app.info!;
  const select = h('select', { 'aria-label': 'Project', 'data-testid': 'project-select' });
  if (!app.project) select.append(h('option', { value: '' }, 'No project open'));
  for (const p of info.projects) {
    const option = h('option', { value: p.id }, p.name);
    if (p.id === app.project?.project.id) option.selected = true;
    select.append(option);
  }
  select.addEventListener('change', async () => {
    if (!select.value) return;
    try {
      setProject(await call('project.open', { id: select.value }));
      changed();
    } catch (err) {
      showError(err);
    }
  });
  return h(
    'header',
    { class: 'topbar' },
    h('div', { class: 'brand' }, 'Crystal', h('span', {}, 'log')),
    select,
    h('button', { class: 'secondary', onclick: newProject }, 'New project'),
    h('button', { class: 'secondary', onclick: () => void openDemo(), title: 'A project of simulated patterns with their known truth' }, 'Demo project'),
    h('div', { class: 'spacer' }),
    h('button', { onclick: () => void openPatternFiles(), title: 'Ctrl+O', 'data-testid': 'open-patterns' }, 'Add patterns…'),
    h('button', { class: 'secondary', onclick: () => void exportReport('html'), title: 'Ctrl+E' }, 'Export report'),
    h('span', { class: 'small', title: info.dataDir }, `v${info.version} · ${isDesktop() ? 'desktop' : 'browser mode'}`),
  );
}

async function newProject(): Promise<void> {
  const input = h('input', { type: 'text', placeholder: 'e.g. Batch 14 workup', 'aria-label': 'Project name', 'data-testid': 'new-project-name' });
  const references = await call('library.list', {}).catch(() => []);
  const target = h(
    'select',
    { 'aria-label': 'Target phase of the new project', 'data-testid': 'new-project-target', title: 'The phase you expect; every verdict is about it (you can change it later in Settings)' },
    h('option', { value: '' }, 'target phase: choose later'),
    ...references.map((r) => h('option', { value: r.name }, `${r.name} — ${r.formula}`)),
  );
  const form = h('form', { class: 'row' }, input, target, h('button', { type: 'submit' }, 'Create'), h('button', { type: 'button', class: 'secondary', onclick: () => form.remove() }, 'Cancel'));
  form.addEventListener('submit', async (event) => {
    event.preventDefault();
    try {
      setProject(await call('project.create', { name: input.value, target: target.value || null }));
      app.info = await call('app.info', {});
      app.screen = 'samples';
      changed();
    } catch (err) {
      showError(err);
    }
  });
  const bar = document.querySelector('.topbar')!;
  bar.after(h('div', { class: 'topbar' }, h('span', { class: 'small' }, 'New project:'), form));
  input.focus();
}

function tabs(): HTMLElement {
  const nav = h('nav', { class: 'tabs', role: 'tablist' });
  SCREENS.forEach((screen, i) => {
    nav.append(
      h(
        'button',
        { role: 'tab', 'aria-selected': String(app.screen === screen.name), 'data-screen': screen.name, onclick: () => show(screen.name), title: `Alt+${i + 1}` },
        screen.title,
        h('kbd', {}, `Alt+${i + 1}`),
      ),
    );
  });
  return nav;
}

function welcome(root: HTMLElement): void {
  root.append(
    h(
      'div',
      { class: 'screen' },
      h(
        'div',
        { class: 'welcome stack' },
        h(
          'div',
          { class: 'panel stack' },
          h('h1', {}, 'Welcome to Crystallog'),
          h('p', {}, 'Drop the night’s diffraction patterns in, and see which batches are the target phase, which grew an extra low-angle peak, and how the crystallite size moved across the workup variants.'),
          h('p', {}, 'New here? The demo project holds simulated patterns of a lead halide perovskite through five workup variants and two days of humid air, with the truth they were simulated from, so you can see the tool recover it.'),
          h('div', { class: 'row' }, h('button', { onclick: () => void openDemo(), 'data-testid': 'open-demo' }, 'Open the demo project'), h('button', { class: 'secondary', onclick: newProject }, 'Start an empty project')),
          h('p', { class: 'small' }, `Your data is kept in ${app.info!.dataDir}.`),
        ),
      ),
    ),
  );
}

let rendering = 0;

async function render(): Promise<void> {
  const token = ++rendering;
  const root = document.getElementById('app')!;
  const main = h('main', { id: 'screen', 'data-screen': app.screen });
  clear(root);
  root.append(topBar(), tabs(), main);
  if (!app.project && (app.screen === 'samples' || app.screen === 'series' || app.screen === 'report' || app.screen === 'settings' || app.screen === 'instrument')) {
    welcome(main);
    return;
  }
  try {
    await RENDERERS[app.screen](main);
  } catch (err) {
    if (token === rendering) main.append(h('p', { class: 'empty' }, errorText(err)));
  }
}

export function show(screen: ScreenName): void {
  app.screen = screen;
  changed();
}

function keyboard(): void {
  document.addEventListener('keydown', (event) => {
    const mod = event.ctrlKey || event.metaKey;
    if (mod && event.key.toLowerCase() === 'o') {
      event.preventDefault();
      void openPatternFiles();
    } else if (mod && event.key.toLowerCase() === 'e') {
      event.preventDefault();
      void exportReport('html');
    } else if (event.altKey && /^[1-6]$/.test(event.key)) {
      event.preventDefault();
      show(SCREENS[Number(event.key) - 1]!.name);
    }
  });
}

function dropTarget(): void {
  document.body.append(h('div', { class: 'drop-overlay' }, 'Drop pattern files to add them to the project'));
  let depth = 0;
  const hasFiles = (event: DragEvent): boolean => Array.from(event.dataTransfer?.types ?? []).includes('Files');
  window.addEventListener('dragenter', (event) => {
    if (!hasFiles(event)) return;
    depth++;
    document.body.classList.add('dragging');
  });
  window.addEventListener('dragleave', () => {
    depth = Math.max(0, depth - 1);
    if (depth === 0) document.body.classList.remove('dragging');
  });
  window.addEventListener('dragover', (event) => event.preventDefault());
  window.addEventListener('drop', (event) => {
    event.preventDefault();
    depth = 0;
    document.body.classList.remove('dragging');
    const files = event.dataTransfer?.files;
    if (files?.length) void addPatternFiles(filesFromDrop(files));
  });
}

async function start(): Promise<void> {
  try {
    app.info = await call('app.info', {});
    app.project = app.info.current;
    app.selected = app.project?.samples[0]?.id ?? null;
  } catch (err) {
    document.getElementById('app')!.textContent = errorText(err);
    return;
  }
  onChange(() => void render());
  keyboard();
  dropTarget();
  window.crystallog?.onMenu((action) => {
    if (action === 'open-patterns') void openPatternFiles();
    else if (action === 'export-report') void exportReport('html');
    else show(action.replace('show-', '') as ScreenName);
  });
  await render();
  if (app.info.firstRun) notify('First time here: the demo project shows the app on simulated patterns with a known truth.');
}

void start();
