import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import type { z } from 'zod';
import { escapeControls, InputError, isInputError } from '../core/errors.js';
import { NUMBER_SETTINGS } from '../core/analysis/settings.js';
import { MAX_PATTERN_MB_SETTING, maxPatternBytes, tooLargeMessage } from '../core/model/file-limits.js';
import { packageRoot } from '../node/library/seed.js';
import { findChromium } from '../node/browser.js';
import { buildCsvReport, buildHtmlReport } from './report-input.js';
import { htmlToPdf } from '../node/pdf.js';
import { appDataPaths, defaultAppDataRoot, readPreferences, writePreferences } from '../node/app-data.js';
import { apiSchemas, type ApiMethod, type ApiParsed, type ApiResults, type ReferenceSummary } from '../api/contract.js';
import { addDemoSample, startDemoProject } from './demo.js';
import type { ApiDispatcher, ApiReply } from '../api/reply.js';
import { buildSeriesView } from './series-view.js';
import { Workspace } from './workspace.js';

export interface AppApiOptions {
  mode: 'electron' | 'browser';
  /** App-data folder (default: the platform's usual place, or CRYSTALLOG_DATA_DIR). */
  dataDir?: string;
}

type Handlers = { [M in ApiMethod]: (input: ApiParsed<M>) => ApiResults[M] | Promise<ApiResults[M]> };

export function appVersion(): string {
  return (JSON.parse(readFileSync(join(packageRoot(), 'package.json'), 'utf8')) as { version: string }).version;
}

/**
 * The one API: every method's input is checked against its schema before anything runs; the user's
 * mistakes come back as sentences (kind "input"), faults as a short sentence (kind "internal").
 */
export function createAppApi(options: AppApiOptions): ApiDispatcher & { workspace: Workspace } {
  const paths = appDataPaths(options.dataDir ?? defaultAppDataRoot());
  const workspace = new Workspace(paths);
  const version = appVersion();
  let firstRun = workspace.listProjects().length === 0;
  if (!firstRun) workspace.openLastProject();
  // The thread that reads and analyses dropped files is started ahead of the first drop.
  workspace.warmAnalysis();

  const libraryChange = <T>(work: () => T): T => {
    const result = work();
    workspace.libraryChanged();
    return result;
  };

  const handlers: Handlers = {
    'app.info': () => ({
      version,
      mode: options.mode,
      dataDir: paths.root,
      firstRun,
      libraryCount: workspace.library().count(),
      projects: workspace.listProjects(),
      current: workspace.hasProject() ? workspace.state() : null,
      pdfAvailable: options.mode === 'electron' || findChromium() !== null,
      preferences: readPreferences(paths),
    }),
    'app.preferences': (changes) => {
      const current = readPreferences(paths);
      return changes.paper === undefined ? current : writePreferences(paths, { ...current, paper: changes.paper });
    },
    'project.list': () => workspace.listProjects(),
    'project.create': ({ name, target }) => {
      firstRun = false;
      if (target && !workspace.library().get(target)) throw new InputError(`the target "${target}" is not in the library; add it there first or pick another`);
      let state = workspace.createProject(name);
      if (target) state = workspace.updateSettings({ target });
      workspace.warmAnalysis();
      return state;
    },
    'project.rename': ({ name }) => workspace.renameProject(name),
    'project.delete': ({ id }) => workspace.deleteProject(id),
    'project.open': ({ id }) => {
      const state = workspace.openProject(id);
      workspace.warmAnalysis();
      return state;
    },
    'project.demo': () => {
      firstRun = false;
      return startDemoProject(workspace);
    },
    'project.demoSample': ({ index }) => addDemoSample(workspace, index),
    'project.state': () => workspace.state(),
    'project.settings': ({ settings }) => workspace.updateSettings(settings),
    'sample.add': ({ fileName, bytesBase64, variant, hours, temperature }) => workspace.addSample(fileName, Buffer.from(bytesBase64, 'base64'), { variant, hours, temperature }),
    'sample.stage': ({ jobId, fileName, bytes, bytesBase64 }) => {
      const content = bytes ?? Buffer.from(bytesBase64 ?? '', 'base64');
      const maxBytes = maxPatternBytes(process.env[MAX_PATTERN_MB_SETTING]);
      if (content.byteLength > maxBytes) throw new InputError(`${fileName}: ${tooLargeMessage(content.byteLength, maxBytes)}`);
      return workspace.stageSample(jobId, fileName, content);
    },
    'sample.commit': ({ jobId, variant, hours, temperature }) => workspace.commitSample(jobId, { variant, hours, temperature }),
    'sample.cancel': ({ jobId }) => ({ cancelled: workspace.cancelSample(jobId) }),
    'sample.progress': ({ jobId }) => ({ stage: workspace.sampleStage(jobId) }),
    'sample.get': ({ id }) => workspace.sampleDetail(id),
    'sample.label': ({ id, variant, hours, temperature, name }) => workspace.labelSample(id, { variant, hours, temperature, name }),
    'sample.remove': ({ id }) => workspace.removeSample(id),
    'sample.reanalyze': ({ id }) => workspace.reanalyze(id),
    'library.list': ({ search, tag }) => workspace.library().list({ search, tag }).map(referenceSummary),
    'library.get': ({ name, version: v }) => {
      const ref = workspace.library().get(name, v);
      if (!ref) throw new InputError(`there is no reference "${name}"${v ? ` version ${v}` : ''} in the library`);
      return ref;
    },
    'library.history': ({ name }) =>
      workspace
        .library()
        .history(name)
        .map((h) => ({ version: h.version, createdAt: h.createdAt, lines: h.lineCount, source: h.change })),
    'library.save': ({ reference }) => workspace.references.save(reference),
    'library.import': ({ fileName, text }) => workspace.references.importFile(fileName, text),
    'library.fromCell': (input) => workspace.references.fromCell(input),
    'library.remove': ({ name }) =>
      libraryChange(() => {
        workspace.library().remove(name);
        return { removed: name };
      }),
    'library.restore': ({ name, version: v }) => libraryChange(() => workspace.library().restore(name, v)),
    'library.lines': ({ names }) => workspace.references.lines(names, workspace.wavelength().lambda1),
    'instrument.fit': ({ sampleId, standard }) => workspace.fitInstrument(sampleId, standard).view,
    'instrument.save': ({ sampleId, standard }) => workspace.saveInstrument(sampleId, standard),
    'instrument.clear': () => workspace.clearInstrument(),
    'series.get': ({ by }) => buildSeriesView(workspace, by),
    'report.build': ({ format }) => (format === 'html' ? buildHtmlReport(workspace, version, readPreferences(paths).paper) : buildCsvReport(workspace, version)),
    'report.pdf': async () => {
      const html = buildHtmlReport(workspace, version, readPreferences(paths).paper);
      const pdf = await htmlToPdf(html.text!, paths.root);
      return { fileName: html.fileName.replace(/\.html$/, '.pdf'), bytesBase64: pdf.toString('base64') };
    },
  };

  return {
    workspace,
    async call(method: string, params: unknown): Promise<ApiReply> {
      if (!Object.prototype.hasOwnProperty.call(apiSchemas, method)) {
        return { ok: false, error: { kind: 'input', message: `Crystallog has no request called "${escapeControls(String(method).slice(0, 60))}".` } };
      }
      const key = method as ApiMethod;
      const parsed = (apiSchemas[key] as z.ZodType).safeParse(params ?? {});
      if (!parsed.success) return { ok: false, error: { kind: 'input', message: describeIssues(parsed.error) } };
      try {
        const run = handlers[key] as (input: unknown) => unknown;
        return { ok: true, result: await run(parsed.data) };
      } catch (err) {
        if (isInputError(err)) return { ok: false, error: { kind: 'input', message: sentence(err.message) } };
        if (process.env.CRYSTALLOG_DEBUG && err instanceof Error) process.stderr.write(`${err.stack}\n`);
        const detail = err instanceof Error ? err.message.split('\n')[0] : String(err);
        return { ok: false, error: { kind: 'internal', message: `Crystallog could not finish this (${detail}). Your data is saved; please report this if it happens again.` } };
      }
    },
    close: () => workspace.close(),
  };
}

function referenceSummary(ref: import('../core/model/reference.js').StoredReference): ReferenceSummary {
  return { name: ref.name, formula: ref.formula, tags: ref.tags, version: ref.version, lines: ref.lines.length, source: ref.source, createdAt: ref.createdAt };
}

/** A message as a sentence: capital first letter, full stop at the end. */
export function sentence(text: string): string {
  const trimmed = text.trim().replace(/\s*\n\s*/g, ' ');
  // A leading file name or symbol keeps its case ("broken.xy, line 3: ...", "d-spacing ...").
  const firstWord = trimmed.split(/[\s,:]/, 1)[0] ?? '';
  const capital = /[./\\_-]/.test(firstWord) ? trimmed : trimmed.charAt(0).toUpperCase() + trimmed.slice(1);
  return /[.!?]$/.test(capital) ? capital : `${capital}.`;
}

function describeIssues(error: z.ZodError): string {
  const issue = error.issues[0];
  if (!issue) return 'The request was not understood.';
  // The settings table's own sentences name the setting in the chemist's words; field paths would not help.
  const ownSentence = Object.keys(NUMBER_SETTINGS).some((name) => issue.path[issue.path.length - 1] === name || (name === 'scherrerK' && issue.path.at(-1) === 'k'));
  const where = issue.path.length && !ownSentence ? `${issue.path.join(' → ')}: ` : '';
  return sentence(`${where}${issue.message}`);
}
