import type { PatternPreview, SampleSummary } from '../../src/api/contract.js';
import { call, isDesktop, pickPatternFiles, saveFile, stagePattern, type PatternFile } from './api.js';
import { app, changed, setProject } from './state.js';
import { errorText, notify, withProgress, type ProgressReport } from './ui.js';

/** Timings of the last drop, read by the end-to-end tests and the bench, shown nowhere else. */
export const timings = { lastAddMs: 0, lastDrawMs: 0, lastPreviewMs: 0, dropStarted: 0 };

const megabytes = (bytes: number): string => `${(bytes / 1048576).toFixed(bytes < 10 * 1048576 ? 1 : 0)} MB`;

/**
 * Add pattern files to the open project, one file at a time: the engine reads it (its pattern is
 * drawn at once), then analyses it; the progress box names the stage, and Cancel stops the file in
 * progress (the engine drops it: nothing of it is kept) and the files after it.
 */
export async function addPatternFiles(files: PatternFile[]): Promise<void> {
  if (!app.project) {
    notify('Open or create a project first, then add pattern files to it.', 'error');
    return;
  }
  if (files.length === 0) return;
  const started = performance.now();
  timings.dropStarted = started;
  const added: SampleSummary[] = [];
  const refused: string[] = [];
  const duplicates: string[] = [];
  for (const file of files) if (file.refused) refused.push(`${file.name}: ${file.refused}`);
  files = files.filter((f) => !f.refused);
  let inProgress: string | null = null;
  let stopped = false;
  const title = `Adding ${files.length} pattern file${files.length === 1 ? '' : 's'}`;
  const stopFile = (): void => {
    stopped = true;
    if (inProgress) void call('sample.cancel', { jobId: inProgress }).catch(() => {});
  };
  const { cancelled } = await withProgress(
    title,
    files,
    async (file, _index, progress) => {
      const jobId = newJobId();
      inProgress = jobId;
      try {
        const size = file.blob?.size ?? Math.floor(((file.bytesBase64?.length ?? 0) * 3) / 4);
        progress.stage(`${file.name}: sending ${megabytes(size)}…`);
        const preview = await whileWaiting(stagePattern(jobId, file), progress, async () => {
          const { stage } = await call('sample.progress', { jobId });
          if (stage === 'waiting') return `${file.name}: waiting for the file before it…`;
          return stage === 'reading' ? `${file.name}: reading ${megabytes(size)} of text…` : null;
        });
        if (stopped) return;
        showPreview(preview);
        progress.dock();
        progress.stage(`${file.name}: analysing ${preview.points.toLocaleString('en')} points…`);
        const sample = await call('sample.commit', { jobId });
        added.push(sample);
        if (sample.duplicateOf.length) duplicates.push(`${file.name} is the same file (same checksum) as ${sample.duplicateOf.map((d) => d.name).join(', ')} already in this project; it was added again — remove one if this was not meant.`);
      } catch (err) {
        // A file stopped by Cancel is not a refusal: the message at the end says what was added.
        if (!stopped) refused.push(errorText(err));
      } finally {
        inProgress = null;
      }
    },
    { onCancel: stopFile },
  );
  timings.lastAddMs = performance.now() - started;
  app.preview = null;
  app.project = await call('project.state', {});
  app.details.clear();
  if (added.length) app.selected = added[added.length - 1]!.id;
  changed();
  for (const message of duplicates.slice(0, 3)) notify(message, 'error');
  for (const message of refused.slice(0, 3)) notify(message, 'error');
  if (refused.length > 3) notify(`${refused.length - 3} more files were refused.`, 'error');
  if (cancelled) notify(`Cancelled: ${added.length ? `${added.length} pattern${added.length === 1 ? '' : 's'} added before you cancelled; ` : ''}the file in progress and those after it were not added.`, 'done');
  else if (added.length) notify(`${added.length} pattern${added.length === 1 ? '' : 's'} added.`, 'done');
}

/** Draw a file in progress as soon as the engine has read it (its reduced pattern; the verdict follows). */
function showPreview(preview: PatternPreview): void {
  app.preview = preview;
  app.screen = 'samples';
  changed();
}

/** Ask every 400 ms how a long request is getting on, and show the stage it names, until the request settles. */
async function whileWaiting<T>(work: Promise<T>, progress: ProgressReport, poll: () => Promise<string | null>): Promise<T> {
  let settled = false;
  let asking = false;
  const timer = setInterval(() => {
    if (settled || asking) return;
    asking = true;
    poll()
      .then((text) => {
        if (!settled && text) progress.stage(text);
      })
      .catch(() => {})
      .finally(() => (asking = false));
  }, 400);
  try {
    return await work;
  } finally {
    settled = true;
    clearInterval(timer);
  }
}

/** A fresh id for a file in progress (named by the page, so Cancel can name it before the engine answers). */
function newJobId(): string {
  return crypto.randomUUID();
}

export async function openPatternFiles(): Promise<void> {
  await addPatternFiles(await pickPatternFiles());
}

/** Files dropped on the window, kept as Files: the browser sends each as it is (works sandboxed and in a browser). */
export function filesFromDrop(list: FileList): PatternFile[] {
  return Array.from(list).map((f) => ({ name: f.name, blob: f }));
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
