import type { ReferenceSummary } from '../../src/api/contract.js';
import type { Reference, StoredReference } from '../../src/core/model/reference.js';
import { call, pickFiles } from '../base/api.js';
import { loadSample } from '../base/sample-data.js';
import { COLORS, PatternChart } from '../chart/pattern-chart.js';
import { clear, field, h, hklText } from '../base/dom.js';
import { app } from '../base/state.js';
import { errorText, notify, showError, withProgress } from '../base/ui.js';
import { parseHandLines, type HandColumn } from '../../src/core/model/hand-entry.js';
import { parseWavelength } from '../../src/core/model/wavelengths.js';

const TAGS = ['target', 'impurity', 'precursor', 'decomposition product', 'standard'];
let selectedName: string | null = null;
let search = '';
let tag = '';
let miniChart: PatternChart | null = null;

/** The reference library: browse, search, tag, edit, import, compute from a cell, history with restore. */
export async function renderLibrary(root: HTMLElement): Promise<void> {
  miniChart?.destroy();
  miniChart = null;
  const layout = h('div', { class: 'library-layout' });
  const left = h('section', { class: 'panel stack', 'aria-label': 'References' });
  const right = h('section', { class: 'stack', 'aria-label': 'Reference' });
  layout.append(left, right);
  root.append(layout);

  const searchBox = h('input', { type: 'search', placeholder: 'Search name or formula', value: search, 'aria-label': 'Search references', 'data-testid': 'library-search' });
  const tagSelect = h('select', { 'aria-label': 'Tag' }, h('option', { value: '' }, 'all tags'), ...TAGS.map((t) => h('option', { value: t }, t)));
  tagSelect.value = tag;
  const listBox = h('div', { class: 'table-scroll', style: undefined });
  const refresh = async (): Promise<void> => {
    const refs = await call('library.list', { search: search || undefined, tag: tag || undefined });
    clear(listBox);
    listBox.append(referenceTable(refs, () => void renderDetail(right)));
  };
  searchBox.addEventListener('input', () => {
    search = searchBox.value;
    void refresh();
  });
  tagSelect.addEventListener('change', () => {
    tag = tagSelect.value;
    void refresh();
  });
  left.append(
    h('h2', {}, 'Reference library'),
    h('div', { class: 'row' }, searchBox, tagSelect),
    h(
      'div',
      { class: 'row' },
      h('button', { onclick: () => void importFiles(refresh, right), 'data-testid': 'library-import' }, 'Import…'),
      h('button', { class: 'secondary', onclick: () => cellForm(right, refresh) }, 'Compute from a cell…'),
      h('button', { class: 'secondary', onclick: () => editor(right, null, refresh) }, 'New reference…'),
    ),
    h('p', { class: 'small' }, 'Import reads the reference JSON format, CSV peak lists (d or 2θ, intensity, h k l) and structure CIFs (lines and intensities computed for Cu Kα1).'),
    listBox,
  );
  await refresh();
  await renderDetail(right, refresh);
}

function referenceTable(refs: ReferenceSummary[], onPick: () => void): HTMLElement {
  if (!refs.length) return h('p', { class: 'empty' }, 'No reference matches.');
  const body = h('tbody');
  for (const r of refs) {
    body.append(
      h(
        'tr',
        { 'aria-selected': String(r.name === selectedName), tabindex: 0, 'data-reference': r.name, onclick: () => ((selectedName = r.name), onPick()), onkeydown: (e: Event) => (e as KeyboardEvent).key === 'Enter' && ((selectedName = r.name), onPick()) },
        h('td', { class: 'left wrap' }, r.name),
        h('td', { class: 'left' }, r.formula),
        h('td', { class: 'left wrap' }, r.tags.join(', ')),
        h('td', {}, r.lines),
        h('td', {}, `v${r.version}`),
      ),
    );
  }
  return h('table', { class: 'grid', 'data-testid': 'library-table' }, h('thead', {}, h('tr', {}, ...['name', 'formula', 'tags', 'lines', 'version'].map((t, i) => h('th', { class: i < 3 ? 'left' : '' }, t)))), body);
}

async function importFiles(refresh: () => Promise<void>, right: HTMLElement): Promise<void> {
  const files = await pickFiles('references');
  const names: string[] = [];
  await withProgress('Importing references', files, async (file) => {
    if (file.refused) {
      notify(`${file.name}: ${file.refused}`, 'error');
      return;
    }
    try {
      const text = new TextDecoder().decode(Uint8Array.from(atob(file.bytesBase64), (c) => c.charCodeAt(0)));
      const result = await call('library.import', { fileName: file.name, text });
      names.push(...result.imported, ...result.updated);
    } catch (err) {
      notify(errorText(err), 'error');
    }
  });
  if (names.length) {
    selectedName = names[0]!;
    notify(`Imported ${names.join(', ')}.`, 'done');
  }
  await refresh();
  await renderDetail(right, refresh);
}

async function renderDetail(right: HTMLElement, refresh?: () => Promise<void>): Promise<void> {
  miniChart?.destroy();
  miniChart = null;
  clear(right);
  if (!selectedName) {
    right.append(h('div', { class: 'panel empty' }, 'Pick a reference to see its lines, edit it, or restore an older version.'));
    return;
  }
  let ref: StoredReference;
  try {
    ref = await call('library.get', { name: selectedName });
  } catch (err) {
    right.append(h('div', { class: 'panel empty' }, errorText(err)));
    return;
  }
  const history = await call('library.history', { name: ref.name });
  const againstPattern = h('div', { class: 'panel stack' }, h('h3', {}, 'Lines against the selected pattern'));
  right.append(
    h(
      'div',
      { class: 'panel stack', 'data-testid': 'reference-detail' },
      h('h2', {}, `${ref.name} `, h('span', { class: 'small' }, `version ${ref.version}`)),
      h('dl', { class: 'kv' }, h('dt', {}, 'Formula'), h('dd', {}, ref.formula), h('dt', {}, 'Tags'), h('dd', {}, ref.tags.join(', ') || '—'), h('dt', {}, 'Source'), h('dd', {}, ref.source), h('dt', {}, 'Intensities'), h('dd', {}, ref.intensityBasis ?? (ref.lines.some((l) => l.intensity !== null) ? 'given' : 'positions only')), h('dt', {}, 'Lines'), h('dd', {}, String(ref.lines.length))),
      h(
        'div',
        { class: 'row' },
        h('button', { class: 'secondary', onclick: () => editor(right, ref, refresh ?? (async () => undefined)) }, 'Edit'),
        h('button', {
          class: 'danger',
          onclick: async () => {
            if (!window.confirm(`Delete ${ref.name}? Its versions stay in the history and can be restored by importing it again.`)) return;
            try {
              await call('library.remove', { name: ref.name });
              selectedName = null;
              await refresh?.();
              await renderDetail(right, refresh);
            } catch (err) {
              showError(err);
            }
          },
        }, 'Delete'),
      ),
      h('h3', {}, 'History'),
      h(
        'table',
        { class: 'grid' },
        h('tbody', {}, ...history.map((v) => h('tr', {}, h('td', {}, `v${v.version}`), h('td', { class: 'left' }, v.createdAt.replace('T', ' ').slice(0, 19)), h('td', { class: 'left' }, v.source), h('td', {}, `${v.lines} lines`), h('td', {}, v.version === ref.version ? 'current' : h('button', { class: 'secondary', onclick: () => void restore(ref.name, v.version, right, refresh) }, 'Restore'))))),
      ),
    ),
    againstPattern,
  );
  await drawAgainstPattern(againstPattern, ref);
}

async function restore(name: string, version: number, right: HTMLElement, refresh?: () => Promise<void>): Promise<void> {
  try {
    await call('library.restore', { name, version });
    notify(`${name}: version ${version} restored as a new version.`, 'done');
    await refresh?.();
    await renderDetail(right, refresh);
  } catch (err) {
    showError(err);
  }
}

async function drawAgainstPattern(box: HTMLElement, ref: StoredReference): Promise<void> {
  const id = app.selected;
  if (!app.project || id === null) {
    box.append(h('p', { class: 'small' }, 'Select a sample in Samples to compare this reference with its pattern.'));
    return;
  }
  const detail = app.details.get(id) ?? (await loadSample(id));
  app.details.set(id, detail);
  const [lines] = await call('library.lines', { names: [ref.name] });
  const canvas = h('canvas', { role: 'img', 'aria-label': `${ref.name} against ${detail.name}` });
  box.append(h('p', { class: 'small' }, `${detail.name}, ${detail.wavelengthLabel}`), h('div', { class: 'mini-chart' }, canvas));
  miniChart = new PatternChart(canvas);
  miniChart.render({
    main: { label: detail.name, x: detail.curves.x, y: detail.curves.y },
    overlays: [],
    marks: [],
    references: lines ? [{ name: ref.name, color: COLORS.phases[0]!, lines: lines.lines.map((l) => ({ twoTheta: l.twoTheta, intensity: l.intensity, label: hklText(l.hkl) })) }] : [],
    lambda: detail.lambda1,
    axis: '2theta',
    scale: 'sqrt',
    offsetFraction: 0,
    showFit: false,
  });
}

function linesToText(ref: Reference | null): string {
  return (ref?.lines ?? []).map((l) => [l.d.toFixed(5), l.intensity === null ? '-' : l.intensity.toFixed(1), ...(l.hkl ?? [])].join(' ')).join('\n');
}

function editor(right: HTMLElement, ref: StoredReference | null, refresh: () => Promise<void>): void {
  miniChart?.destroy();
  miniChart = null;
  clear(right);
  const name = h('input', { type: 'text', value: ref?.name ?? '', 'aria-label': 'Name', 'data-testid': 'ref-name' });
  if (ref) name.readOnly = true;
  const formula = h('input', { type: 'text', value: ref?.formula ?? '', 'aria-label': 'Formula', 'data-testid': 'ref-formula' });
  const tags = h('input', { type: 'text', value: ref?.tags.join(', ') ?? '', placeholder: TAGS.join(', '), 'aria-label': 'Tags', 'data-testid': 'ref-tags' });
  const source = h('input', { type: 'text', value: ref?.source ?? '', placeholder: 'Where the values come from', 'aria-label': 'Source', 'data-testid': 'ref-source' });
  const notes = h('input', { type: 'text', value: ref?.notes ?? '', 'aria-label': 'Notes' });
  const lines = h('textarea', { rows: 12, 'aria-label': 'Lines', 'data-testid': 'ref-lines' });
  lines.value = linesToText(ref);
  // The first column of the lines box: d as stored, or 2θ with the wavelength it belongs to.
  const column = h(
    'select',
    { 'aria-label': 'First column', 'data-testid': 'ref-column' },
    h('option', { value: 'd' }, 'd (Å)'),
    h('option', { value: 'twoTheta' }, '2θ (°) at the wavelength'),
  );
  const wavelength = h('input', { type: 'text', value: app.project?.settings.wavelength ?? 'Cu', 'aria-label': 'Wavelength of the 2θ values', 'data-testid': 'ref-wavelength', size: 8 });
  const wavelengthField = field('Wavelength', wavelength, 'Cu, Co, Mo… or λ in Å.');
  // Shown only for 2θ (the field class sets display, which the hidden attribute alone would not override).
  const showWavelength = (): void => void (wavelengthField.style.display = column.value === 'twoTheta' ? '' : 'none');
  showWavelength();
  column.addEventListener('change', showWavelength);
  const form = h(
    'form',
    { class: 'panel stack' },
    h('h2', {}, ref ? `Edit ${ref.name}` : 'New reference'),
    h('div', { class: 'form' }, field('Name', name), field('Formula', formula), field('Tags', tags, 'Comma separated.'), field('Source', source, 'Required: paper, database entry, or measurement.'), field('Notes', notes)),
    h('div', { class: 'row' }, field('First column', column, 'Which position the lines give.'), wavelengthField),
    field('Lines', lines, 'One line each: the position (d or 2θ, as chosen above), relative intensity 0–100 (or -), optionally h k l. Stored as d.'),
    h('div', { class: 'row' }, h('button', { type: 'submit', 'data-testid': 'ref-save' }, 'Save as new version'), h('button', { type: 'button', class: 'secondary', onclick: () => void renderDetail(right, refresh) }, 'Cancel')),
  );
  form.addEventListener('submit', async (event) => {
    event.preventDefault();
    try {
      const reference = {
        name: name.value.trim(),
        formula: formula.value.trim(),
        tags: tags.value.split(',').map((t) => t.trim()).filter(Boolean),
        source: source.value.trim(),
        ...(notes.value.trim() ? { notes: notes.value.trim() } : {}),
        ...(ref?.cell ? { cell: ref.cell } : {}),
        ...(ref?.rir ? { rir: ref.rir } : {}),
        lines: parseHandLines(lines.value, column.value as HandColumn, column.value === 'twoTheta' ? parseWavelength(wavelength.value).lambda1 : 1),
      };
      const saved = await call('library.save', { reference });
      selectedName = saved.name;
      notify(`${saved.name} saved (version ${saved.version}).`, 'done');
      await refresh();
      await renderDetail(right, refresh);
    } catch (err) {
      // The lines box's own sentences (checked here before anything is sent) read as the app's.
      if (err instanceof Error && err.name === 'InputError') notify(`${err.message.charAt(0).toUpperCase()}${err.message.slice(1)}.`, 'error');
      else showError(err);
    }
  });
  right.append(form);
}

function cellForm(right: HTMLElement, refresh: () => Promise<void>): void {
  miniChart?.destroy();
  miniChart = null;
  clear(right);
  const input = (label: string, value = '', type = 'text'): HTMLInputElement => h('input', { type, value, step: 'any', 'aria-label': label });
  const name = input('Name');
  const formula = input('Formula');
  const [a, b, c] = [input('a', '', 'number'), input('b', '', 'number'), input('c', '', 'number')];
  const [alpha, beta, gamma] = [input('α', '90', 'number'), input('β', '90', 'number'), input('γ', '90', 'number')];
  const group = input('Space group');
  group.placeholder = 'e.g. F m -3 m';
  const tags = input('Tags');
  const source = input('Source');
  const form = h(
    'form',
    { class: 'panel stack' },
    h('h2', {}, 'Compute line positions from a unit cell'),
    h('p', { class: 'small' }, 'Positions follow the space group’s reflection conditions; intensities stay unknown (import a structure CIF to compute them).'),
    h('div', { class: 'form' }, field('Name', name), field('Formula', formula), field('a (Å)', a), field('b (Å)', b), field('c (Å)', c), field('α (°)', alpha), field('β (°)', beta), field('γ (°)', gamma), field('Space group', group), field('Tags', tags), field('Source', source)),
    h('div', { class: 'row' }, h('button', { type: 'submit' }, 'Compute and save'), h('button', { type: 'button', class: 'secondary', onclick: () => void renderDetail(right, refresh) }, 'Cancel')),
  );
  form.addEventListener('submit', async (event) => {
    event.preventDefault();
    try {
      const cell = { a: Number(a.value), b: Number(b.value || a.value), c: Number(c.value || a.value), alpha: Number(alpha.value), beta: Number(beta.value), gamma: Number(gamma.value), ...(group.value.trim() ? { spaceGroup: group.value.trim() } : {}) };
      const saved = await call('library.fromCell', { name: name.value.trim(), formula: formula.value.trim(), cell, tags: tags.value.split(',').map((t) => t.trim()).filter(Boolean), source: source.value.trim() || 'computed from a unit cell entered by hand' });
      selectedName = saved.name;
      notify(`${saved.name}: ${saved.lines.length} lines computed.`, 'done');
      await refresh();
      await renderDetail(right, refresh);
    } catch (err) {
      // The lines box's own sentences (checked here before anything is sent) read as the app's.
      if (err instanceof Error && err.name === 'InputError') notify(`${err.message.charAt(0).toUpperCase()}${err.message.slice(1)}.`, 'error');
      else showError(err);
    }
  });
  right.append(form);
}
