import { exportReport } from '../base/actions.js';
import { h, sizeText } from '../base/dom.js';
import { app, verdictClass } from '../base/state.js';

/** What the report will hold, and the buttons that save it. */
export function renderReport(root: HTMLElement): void {
  const project = app.project!;
  root.append(
    h(
      'div',
      { class: 'screen stack' },
      h(
        'div',
        { class: 'panel stack' },
        h('h2', {}, `Report of ${project.project.name}`),
        h('p', {}, 'The report lists every sample with its verdict, the reasons for it, low-angle extra peaks and crystallite sizes, and carries every setting, the instrument profile, the versions of the references used and the app version, with the cautions that go with such results.'),
        h('p', { class: 'small' }, 'Figures: each sample’s pattern with its fit, the difference and the peaks marked by phase; its size–strain plot; the sizes across the series and the growth of other phases with exposure time.'),
        h('p', { class: 'small', 'data-testid': 'report-paper' }, `Printed and saved as PDF on ${app.info?.preferences.paper ?? 'A4'} paper; change it in Settings.`),
        h(
          'div',
          { class: 'row' },
          h('button', { onclick: () => void exportReport('html'), 'data-testid': 'export-html' }, 'Save HTML report'),
          h('button', { class: 'secondary', onclick: () => void exportReport('csv'), 'data-testid': 'export-csv' }, 'Save CSV table'),
          h('button', { class: 'secondary', onclick: () => void exportReport('pdf'), disabled: !app.info?.pdfAvailable, title: app.info?.pdfAvailable ? '' : 'Needs Chromium, Chrome or Edge on this computer' }, 'Save PDF'),
        ),
        project.truth ? h('p', { class: 'truth' }, 'Demo project: the report states that its patterns are simulated, and the truth they were simulated from.') : null,
        h('p', { class: 'caution' }, 'Phase identification cannot prove the absence of amorphous matter or of a phase below the detection limit; Scherrer sizes are apparent, volume-weighted sizes and lower bounds where strain broadens the peaks. Handle samples under your lab’s chemical-hygiene and radiation-safety rules.'),
      ),
      h(
        'div',
        { class: 'panel' },
        h(
          'table',
          { class: 'grid' },
          h('thead', {}, h('tr', {}, ...['sample', 'variant', 'hours', 'verdict', 'low-angle', 'size'].map((t, i) => h('th', { class: i < 4 ? 'left' : '' }, t)))),
          h('tbody', {}, ...project.samples.map((s) => h('tr', {}, h('td', { class: 'left' }, s.name), h('td', { class: 'left' }, s.variant ?? ''), h('td', { class: 'left' }, s.hours ?? ''), h('td', { class: 'left' }, h('span', { class: `badge ${verdictClass(s.verdict)}` }, s.verdict)), h('td', {}, s.lowAngleCount), h('td', {}, sizeText(s.sizeNm, s.sizeSigmaNm))))),
        ),
      ),
    ),
  );
}
