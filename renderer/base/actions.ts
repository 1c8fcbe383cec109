import type { PickedFile } from '../../src/api/bridge.js';
import type { SampleSummary } from '../../src/api/contract.js';
import { call, isDesktop, pickFiles, saveFile, toBase64 } from './api.js';
import { app, changed, setProject } from './state.js';
import { errorText, notify, withProgress } from './ui.js';

/** Timings of the last drop, read by the end-to-end tests and shown nowhere else. */
export const timings = { lastAddMs: 0, lastDrawMs: 0 };

/** Add pattern files to the open project, one request per file, with progress and Cancel. */
export async function addPatternFiles(files: PickedFile[]): Promise<void> {
  if (!app.project) {
    notify('Open or create a project first, then add pattern files to it.', 'error');
    return;
  }
  if (files.length === 0) return;
  const started = performance.now();
  const added: SampleSummary[] = [];
  const refused: string[] = [];
  const duplicates: string[] = [];
  for (const file of files) if (file.refused) refused.push(`${file.name}: ${file.refused}`);
  files = files.filter((f) => !f.refused);
  const { cancelled } = await withProgress(`Analysing ${files.length} pattern file${files.length === 1 ? '' : 's'}`, files, async (file) => {
    try {
      const sample = await call('sample.add', { fileName: file.name, bytesBase64: file.bytesBase64 });
      added.push(sample);
      if (sample.duplicateOf.length) duplicates.push(`${file.name} is the same file (same checksum) as ${sample.duplicateOf.map((d) => d.name).join(', ')} already in this project; it was added again — remove one if this was not meant.`);
    } catch (err) {
      refused.push(errorText(err));
    }
  });
  timings.lastAddMs = performance.now() - started;
  app.project = await call('project.state', {});
  app.details.clear();
  if (added.length) app.selected = added[added.length - 1]!.id;
  changed();
  for (const message of duplicates.slice(0, 3)) notify(message, 'error');
  for (const message of refused.slice(0, 3)) notify(message, 'error');
  if (refused.length > 3) notify(`${refused.length - 3} more files were refused.`, 'error');
  if (added.length) notify(`${added.length} pattern${added.length === 1 ? '' : 's'} added${cancelled ? ' before you cancelled' : ''}.`, 'done');
}

export async function openPatternFiles(): Promise<void> {
  await addPatternFiles(await pickFiles('patterns'));
}

/** Files dropped on the window, read in the page (no paths needed: works sandboxed and in a browser). */
export async function filesFromDrop(list: FileList): Promise<PickedFile[]> {
  const files = Array.from(list);
  return Promise.all(files.map(async (f) => ({ name: f.name, bytesBase64: toBase64(new Uint8Array(await f.arrayBuffer())) })));
}

export async function exportReport(format: 'html' | 'csv' | 'pdf'): Promise<void> {
  if (!app.project) {
    notify('Open a project first: a report covers the samples of one project.', 'error');
    return;
  }
  try {
    if (format === 'pdf') {
      if (isDesktop()) {
        const html = await call('report.build', { format: 'html' });
        const saved = await window.crystallog!.printPdf(html.text!, html.fileName.replace(/\.html$/, '.pdf'));
        if (saved) notify(`Report saved as ${saved}.`, 'done');
        return;
      }
      const pdf = await withBusy('Printing the report to PDF…', () => call('report.pdf', {}));
      await saveFile({ suggestedName: pdf.fileName, bytesBase64: pdf.bytesBase64! }, 'application/pdf');
      notify(`Report saved as ${pdf.fileName}.`, 'done');
      return;
    }
    const file = await call('report.build', { format });
    const saved = await saveFile({ suggestedName: file.fileName, text: file.text! }, format === 'html' ? 'text/html' : 'text/csv');
    if (saved) notify(`Report saved as ${saved}.`, 'done');
  } catch (err) {
    notify(errorText(err), 'error');
  }
}

/** A single long request with an indeterminate progress box after half a second. */
async function withBusy<T>(title: string, work: () => Promise<T>): Promise<T> {
  let result: T | undefined;
  await withProgress(
    title,
    [0],
    async () => {
      result = await work();
    },
    { cancellable: false },
  );
  return result as T;
}

/** The demo: references and the LaB6 standard first, then each simulated sample with progress (cancellable). */
export async function openDemo(): Promise<void> {
  document.querySelectorAll('#messages .message.info').forEach((m) => m.remove());
  try {
    const { state, pending, reopened } = await withBusy('Preparing the demo project: references and the LaB6 standard…', () => call('project.demo', {}));
    setProject(state);
    app.screen = 'samples';
    changed();
    // The demo opens on the sample made as usual, the one the others are compared with.
    const selectAsMade = (): void => {
      app.selected = app.project?.samples.find((s) => s.variant === 'as made')?.id ?? app.project?.samples[0]?.id ?? null;
    };
    if (reopened && pending.length === 0) {
      selectAsMade();
      changed();
      notify('Opened the demo project made before (its simulated samples are all there).', 'done');
      return;
    }
    const { done, cancelled } = await withProgress('Simulating and analysing the demo samples', pending, async (index) => {
      await call('project.demoSample', { index });
    });
    app.project = await call('project.state', {});
    app.info = await call('app.info', {});
    selectAsMade();
    changed();
    notify(`Demo project ready: the LaB6 standard and ${done} simulated samples${cancelled ? ' (cancelled before the rest)' : ''}.`, 'done');
  } catch (err) {
    notify(errorText(err), 'error');
  }
}
