/**
 * The user's working state: the open project and the life of its samples (add, analyse, open,
 * relabel, remove) and its instrument profile. Every change is written to the project's SQLite file
 * at once (a crash loses nothing). The library, the projects folder and the views have modules of their own.
 */
import { InputError } from '../core/errors.js';
import { analyzePatternWithCurves, createAnalysisContext, type AnalysisContext, type AnalysisResult } from '../core/analysis/analyse.js';
import { fitInstrumentFromStandard } from '../core/analysis/instrument.js';
import { DEFAULT_ANALYSIS_SETTINGS, type AnalysisSettings } from '../core/analysis/settings.js';
import { lowAnglePeaks } from '../core/analysis/verdict.js';
import type { Pattern } from '../core/model/pattern.js';
import { parseWavelength, type Wavelength } from '../core/model/wavelengths.js';
import { readPatternBytes } from '../core/pattern/read.js';
import type { InstrumentProfile } from '../core/size/instrument.js';
import {
  DEFAULT_SETTINGS,
  type AddedSample,
  type PatternPreview,
  settingsSchema,
  type InstrumentView,
  type ProjectSettings,
  type ProjectState,
  type ProjectSummary,
  type SampleDetail,
  type SampleSummary,
} from '../api/contract.js';
import type { AppDataPaths } from '../node/app-data.js';
import type { ReferenceLibrary } from '../node/library/store.js';
import { ProjectStore, type SampleRecord } from '../node/project-store.js';
import { guessHours, guessTemperature, guessVariant } from './file-names.js';
import { LibraryAccess } from './library-access.js';
import { PatternJobs } from './pattern-jobs.js';
import {
  lastProjectId,
  listProjectFiles,
  newProjectDocument,
  newProjectFile,
  newProjectId,
  projectFile,
  readDocumentFrom,
  rememberLastProject,
  writeDocument,
  moveToDeleted,
  type ProjectDocument,
} from './project-files.js';
import {
  baseSummary,
  floats,
  instrumentIdentity,
  instrumentView,
  peakViews,
  sizeView,
  staleReason,
  summaryFromResult,
  type AnalysisBasis,
  type SavedAnalysis,
} from './sample-views.js';

/** The analysis settings of a project's settings (the settings table's defaults for the rest). */
function analysisSettingsOf(s: ProjectSettings): Partial<AnalysisSettings> {
  return {
    wavelength: parseWavelength(s.wavelength),
    toleranceDeg: s.toleranceDeg,
    k: s.scherrerK,
    breadth: s.breadth,
    correction: s.correction,
    target: s.target,
    backgroundHalfWidthDeg: s.backgroundHalfWidthDeg,
    internalStandard: s.internalStandard ?? null,
    internalStandardPercent: s.internalStandardPercent ?? null,
  };
}

/** Labels given with a new sample; undefined ones are guessed from the file name. */
export interface SampleLabels {
  label?: string | null;
  variant?: string | null;
  hours?: number | null;
  /** °C */
  temperature?: number | null;
}

export class Workspace {
  readonly references: LibraryAccess;
  private store: ProjectStore | null = null;
  private projectId: string | null = null;
  private doc: ProjectDocument | null = null;
  private context: AnalysisContext | null = null;
  /** The pattern of the sample added last from a file in progress, as its thread read it: its first view needs no second read. */
  private lastRead: { id: number; pattern: Pattern } | null = null;
  private readonly jobs = new PatternJobs(() => {
    const { doc } = this.project();
    return {
      key: JSON.stringify(this.currentBasis()),
      setup: () => ({ references: this.references.all(), instrument: doc.instrument, settings: analysisSettingsOf(doc.analysis) }),
    };
  });

  constructor(readonly paths: AppDataPaths) {
    this.references = new LibraryAccess(paths.libraryFile, () => (this.context = null));
  }

  library(): ReferenceLibrary {
    return this.references.store();
  }

  /** Call after any change to the library: the next analysis rebuilds its reference index. */
  libraryChanged(): void {
    this.references.changed();
  }

  // ---------- projects ----------

  listProjects(): ProjectSummary[] {
    return listProjectFiles(this.paths, this.projectId && this.doc ? { id: this.projectId, doc: this.doc } : null);
  }

  hasProject(): boolean {
    return this.store !== null;
  }

  createProject(name: string, extra: Partial<ProjectDocument> = {}): ProjectState {
    const id = newProjectId(name);
    const store = ProjectStore.open(newProjectFile(this.paths, id));
    writeDocument(store, newProjectDocument(name, extra));
    store.close();
    return this.openProject(id);
  }

  openProject(id: string): ProjectState {
    const store = ProjectStore.open(projectFile(this.paths, id));
    this.closeProject();
    this.store = store;
    this.projectId = id;
    this.doc = readDocumentFrom(store);
    rememberLastProject(this.paths, id);
    return this.state();
  }

  /** Rename the open project. */
  renameProject(name: string): ProjectState {
    const { store, doc } = this.project();
    doc.projectName = name;
    writeDocument(store, doc);
    return this.state();
  }

  /**
   * Delete a project from the list: its file is moved to the projects folder's `deleted/` folder
   * (raw files and results kept there, recoverable by moving it back), never erased.
   */
  deleteProject(id: string): { deleted: string; keptAt: string; projects: ProjectSummary[] } {
    const file = projectFile(this.paths, id);
    if (this.projectId === id) this.closeProject();
    const keptAt = moveToDeleted(this.paths, id, file);
    return { deleted: id, keptAt, projects: this.listProjects() };
  }

  /** Reopen the project used last, if it still exists. */
  openLastProject(): ProjectState | null {
    const id = lastProjectId(this.paths);
    if (!id) return null;
    try {
      return this.openProject(id);
    } catch {
      return null;
    }
  }

  closeProject(): void {
    this.jobs.close();
    this.lastRead = null;
    this.store?.close();
    this.store = null;
    this.projectId = null;
    this.doc = null;
    this.context = null;
  }

  close(): void {
    this.closeProject();
    this.references.close();
  }

  private project(): { store: ProjectStore; doc: ProjectDocument; id: string } {
    if (!this.store || !this.doc || !this.projectId) throw new InputError('no project is open; open one or create a new one first');
    return { store: this.store, doc: this.doc, id: this.projectId };
  }

  state(): ProjectState {
    const { store, doc, id } = this.project();
    return {
      project: { id, name: doc.projectName, modified: new Date().toISOString(), demo: doc.demo },
      settings: doc.analysis,
      samples: store.listSamples().map((s) => this.summaryOf(s)),
      instrument: doc.instrument ? instrumentView(doc.instrument, doc.instrumentSampleName ?? doc.instrument.standard.file ?? '') : null,
      truth: doc.truth,
    };
  }

  /** New settings apply to the next analysis; results saved under the old ones are marked stale, not re-run. */
  updateSettings(changes: Partial<ProjectSettings>): ProjectState {
    const { store, doc } = this.project();
    const next = settingsSchema.parse({ ...doc.analysis, ...changes });
    parseWavelength(next.wavelength);
    if (next.target !== null && !this.library().get(next.target)) {
      throw new InputError(`the target "${next.target}" is not in the library; add it there first or pick another`);
    }
    if ((next.internalStandard === null) !== (next.internalStandardPercent === null)) {
      throw new InputError('an internal standard needs both its phase and the weight % it was spiked at (or neither)');
    }
    if (next.internalStandard !== null && !this.library().get(next.internalStandard)) {
      throw new InputError(`the internal standard "${next.internalStandard}" is not in the library; add it there first or pick another`);
    }
    doc.analysis = next;
    writeDocument(store, doc);
    this.context = null;
    return this.state();
  }

  wavelength(): Wavelength {
    return parseWavelength(this.doc?.analysis.wavelength ?? DEFAULT_SETTINGS.wavelength);
  }

  // ---------- samples ----------

  /** Read, keep and analyse a dropped file. A file that cannot be read is refused before anything is kept. */
  addSample(fileName: string, bytes: Uint8Array, labels: SampleLabels = {}): AddedSample {
    this.project();
    const pattern = readPatternBytes(bytes, fileName);
    const duplicateOf = this.duplicatesOf(pattern.source.sha256);
    const record = this.keepSample(fileName, bytes, labels);
    return { ...this.analyze(record, pattern), duplicateOf };
  }

  /**
   * Start a file in progress (read and analysed off the engine's thread, see pattern-jobs.ts): answers
   * with its reduced pattern as soon as it is read. Nothing is kept until `commitSample`.
   */
  async stageSample(jobId: string, fileName: string, bytes: Uint8Array): Promise<PatternPreview> {
    this.project();
    const parsed = await this.jobs.start({ jobId, fileName, bytes });
    const wavelength = parsed.wavelength ?? this.wavelength();
    return { jobId, name: fileName, points: parsed.points, lambda1: wavelength.lambda1, wavelengthLabel: wavelength.label, x: floats(parsed.preview.x), y: floats(parsed.preview.y) };
  }

  /** Wait for a file in progress to be analysed, then keep it and its result in one transaction. */
  async commitSample(jobId: string, labels: SampleLabels = {}): Promise<AddedSample> {
    const { task, sha256, outcome } = await this.jobs.collect(jobId);
    const { store } = this.project();
    const added = store.together(() => {
      const duplicateOf = this.duplicatesOf(sha256);
      const record = this.keepSample(task.fileName, task.bytes, labels);
      const summary = outcome.ok
        ? this.saveAnalysis(record, outcome.analysed.result, { background: outcome.analysed.background, model: outcome.analysed.model }, outcome.analysed.analysisMs)
        : this.saveProblem(record, outcome.problem);
      return { ...summary, duplicateOf };
    });
    // Kept only once the transaction stands.
    this.lastRead = outcome.ok ? { id: added.id, pattern: outcome.analysed.pattern } : null;
    return added;
  }

  /** Where a file in progress is (see PatternJobs.stageOf). */
  sampleStage(jobId: string): ReturnType<PatternJobs['stageOf']> {
    return this.jobs.stageOf(jobId);
  }

  /** Stop a file in progress; false when there was none by that id (finished and added, or never started). */
  cancelSample(jobId: string): boolean {
    return this.jobs.cancel(jobId);
  }

  /** Start the analysis thread ahead of the first dropped file. */
  warmAnalysis(): void {
    if (this.hasProject()) this.jobs.warm();
  }

  private duplicatesOf(sha256: string): Array<{ id: number; name: string }> {
    return this.project().store.findSamplesBySha256(sha256).map((r) => ({ id: r.id, name: r.label ?? r.fileName }));
  }

  private keepSample(fileName: string, bytes: Uint8Array, labels: SampleLabels): SampleRecord {
    const variant = labels.variant !== undefined ? labels.variant : guessVariant(fileName);
    const hours = labels.hours !== undefined ? labels.hours : guessHours(fileName);
    const temperature = labels.temperature !== undefined ? labels.temperature : guessTemperature(fileName);
    return this.project().store.addSample({ fileName, bytes, label: labels.label ?? null, variant, exposureHours: hours, temperatureC: temperature });
  }

  reanalyze(id: number): SampleSummary {
    const { store } = this.project();
    const record = this.sampleRecord(id);
    return this.analyze(record, readPatternBytes(store.getSampleBytes(id), record.fileName));
  }

  /** New labels for a sample; `name` renames it (null gives back the file name); what is undefined is kept. */
  labelSample(id: number, labels: { variant: string | null; hours: number | null; temperature?: number | null | undefined; name?: string | null | undefined }): SampleSummary {
    const { variant, hours, temperature, name } = labels;
    const changes = {
      variant,
      exposureHours: hours,
      ...(temperature !== undefined ? { temperatureC: temperature } : {}),
      ...(name !== undefined ? { label: name ? name : null } : {}),
    };
    const record = this.project().store.updateSample(id, changes);
    return this.summaryOf(record);
  }

  removeSample(id: number): ProjectState {
    if (this.lastRead?.id === id) this.lastRead = null;
    this.project().store.removeSample(id);
    return this.state();
  }

  /** A sample as it was saved: its pattern, peaks, curves and verdicts. Opening it never re-runs the analysis. */
  sampleDetail(id: number): SampleDetail {
    const { store, doc } = this.project();
    const record = this.sampleRecord(id);
    const summary = this.summaryOf(record);
    const result = store.latestResult<SavedAnalysis>(id)?.result.result ?? null;
    const curves = result ? store.latestCurves(id) : null;
    const pattern = this.lastRead?.id === id ? this.lastRead.pattern : readPatternBytes(store.getSampleBytes(id), record.fileName);
    const lowAngle = result ? lowAnglePeaks(result.match, doc.analysis.target) : [];
    const wavelength = result?.wavelength ?? pattern.wavelength ?? this.wavelength();
    return {
      ...summary,
      wavelengthLabel: wavelength.label,
      lambda1: wavelength.lambda1,
      points: pattern.x.length,
      x: floats(pattern.x),
      y: floats(pattern.y),
      background: curves && curves.background.length === pattern.x.length ? floats(curves.background) : null,
      model: curves && curves.model.length === pattern.x.length ? floats(curves.model) : null,
      peaks: result ? peakViews(result, lowAngle) : [],
      lowAnglePeaks: lowAngle,
      match: result?.match ?? null,
      size: result ? sizeView(result) : null,
      crystallinity: result?.crystallinity ?? null,
      readerNotes: pattern.readerNotes,
      meta: pattern.meta,
      sha256: record.sha256,
    };
  }

  /** Saved analyses of every sample (for series and reports). */
  analyses(): Array<{ record: SampleRecord; summary: SampleSummary; result: AnalysisResult | null; referencesUsed: Array<{ name: string; version: number }> }> {
    const { store } = this.project();
    return store.listSamples().map((record) => {
      const saved = store.latestResult<SavedAnalysis>(record.id);
      return { record, summary: this.summaryOf(record), result: saved?.result.result ?? null, referencesUsed: saved?.referencesUsed ?? [] };
    });
  }

  documentInfo(): { name: string; demo: boolean; truth: string | null; settings: ProjectSettings; instrument: InstrumentProfile | null } {
    const { doc } = this.project();
    return { name: doc.projectName, demo: doc.demo, truth: doc.truth, settings: doc.analysis, instrument: doc.instrument };
  }

  private sampleRecord(id: number): SampleRecord {
    const record = this.project().store.getSample(id);
    if (!record) throw new InputError(`there is no sample ${id} in this project`);
    return record;
  }

  private analysisContext(): AnalysisContext {
    if (!this.context) {
      const { doc } = this.project();
      this.context = createAnalysisContext(this.references.all(), doc.instrument, analysisSettingsOf(doc.analysis));
    }
    return this.context;
  }

  /** What an analysis run now is computed from. */
  private currentBasis(): AnalysisBasis {
    const { doc } = this.project();
    return { settings: { ...doc.analysis }, instrument: instrumentIdentity(doc.instrument), libraryDigest: this.references.digest() };
  }

  private analyze(record: SampleRecord, pattern: Pattern): SampleSummary {
    const started = performance.now();
    try {
      const { result, curves } = analyzePatternWithCurves(pattern, this.analysisContext());
      return this.saveAnalysis(record, result, { background: Float32Array.from(curves.background), model: Float32Array.from(curves.model) }, performance.now() - started);
    } catch (err) {
      if (!(err instanceof InputError)) throw err;
      return this.saveProblem(record, err.message);
    }
  }

  /** Keep an analysis result with the reference versions it used and its curves. */
  private saveAnalysis(record: SampleRecord, result: AnalysisResult, curves: { background: Float32Array; model: Float32Array }, analysisMs: number): SampleSummary {
    const { store, doc } = this.project();
    const summary = summaryFromResult(record, result, doc.analysis.target, analysisMs);
    const byName = new Map(this.references.all().map((r) => [r.name, r]));
    const used = result.references.used.map((u) => ({ id: byName.get(u.name)?.id ?? 0, version: u.version, name: u.name }));
    const saved: SavedAnalysis = { summary, result, basis: this.currentBasis() };
    store.saveResult(record.id, saved, used, curves);
    return summary;
  }

  /** Keep the sentence of an analysis that could not be done (the raw file stays kept). */
  private saveProblem(record: SampleRecord, problem: string): SampleSummary {
    const summary = { ...baseSummary(record), problem };
    this.project().store.saveResult(record.id, { summary, result: null } satisfies SavedAnalysis);
    return summary;
  }

  private summaryOf(record: SampleRecord): SampleSummary {
    const { store, doc } = this.project();
    const saved = store.latestResult<SavedAnalysis>(record.id)?.result;
    if (!saved) return baseSummary(record);
    const reason = staleReason(saved, this.currentBasis());
    const summary: SampleSummary = { ...baseSummary(record), ...saved.summary, name: record.label ?? saved.summary.name, variant: record.variant, hours: record.exposureHours, temperature: record.temperatureC, stale: reason !== null, staleReason: reason };
    // The pattern the instrument profile was fitted to is the standard, not a product sample.
    if (doc.instrument?.standard.sha256 === record.sha256 && !summary.problem) summary.verdict = 'instrument standard';
    return summary;
  }

  // ---------- instrument ----------

  /** The instrument profile from a sample that is a line-profile standard (the same wiring as `crystallog instrument`). */
  fitInstrument(sampleId: number, standardName: string): { profile: InstrumentProfile; view: InstrumentView } {
    const { store, doc } = this.project();
    const record = this.sampleRecord(sampleId);
    const standard = this.library().get(standardName);
    if (!standard) throw new InputError(`the standard "${standardName}" is not in the library`);
    const pattern = readPatternBytes(store.getSampleBytes(sampleId), record.fileName);
    const settings = { ...DEFAULT_ANALYSIS_SETTINGS, ...analysisSettingsOf(doc.analysis) };
    const profile = fitInstrumentFromStandard(pattern, standard, settings, { name: `${standard.name} on ${record.fileName}`, file: record.fileName });
    return { profile, view: instrumentView(profile, record.label ?? record.fileName) };
  }

  saveInstrument(sampleId: number, standardName: string): ProjectState {
    const { profile, view } = this.fitInstrument(sampleId, standardName);
    return this.setInstrument(profile, view.sampleName);
  }

  clearInstrument(): ProjectState {
    return this.setInstrument(null, null);
  }

  private setInstrument(profile: InstrumentProfile | null, sampleName: string | null): ProjectState {
    const { store, doc } = this.project();
    doc.instrument = profile;
    doc.instrumentSampleName = sampleName;
    writeDocument(store, doc);
    this.context = null;
    return this.state();
  }
}
