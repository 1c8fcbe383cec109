import { randomBytes } from 'node:crypto';
import { existsSync, readdirSync, readFileSync, renameSync, statSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { InputError } from '../core/errors.js';
import { positionsFromCell } from '../core/library/from-crystal.js';
import { parseReferenceFile } from '../node/library/import-files.js';
import { ensureSeeded } from '../node/library/seed.js';
import { ReferenceLibrary } from '../node/library/store.js';
import type { Reference, StoredReference } from '../core/model/reference.js';
import { readPatternBytes } from '../core/pattern/read.js';
import type { Pattern } from '../core/model/pattern.js';
import { parseWavelength, type Wavelength } from '../core/model/wavelengths.js';
import { twoThetaFromD } from '../core/model/units.js';
import { findPeaks } from '../core/process/peaks.js';
import { fitInstrumentProfile, instrumentWidthAt, type InstrumentProfile } from '../core/size/instrument.js';
import type { AppDataPaths } from '../node/app-data.js';
import {
  DEFAULT_SETTINGS,
  settingsSchema,
  type InstrumentView,
  type PeakView,
  type ProjectSettings,
  type ProjectState,
  type ProjectSummary,
  type ReferenceLinesView,
  type SampleDetail,
  type SampleSummary,
  type SizeView,
} from '../api/contract.js';
import { analyzePattern, createAnalysisContext, type AnalysisContext, type AnalysisResult } from '../core/analysis/analyse.js';
import { ProjectStore, type SampleRecord } from '../node/project-store.js';
import { lowAnglePeaks, sampleVerdict } from '../core/analysis/verdict.js';

/** What a project keeps in its settings document besides the analysis settings. */
interface ProjectDocument {
  projectName: string;
  demo: boolean;
  truth: string | null;
  analysis: ProjectSettings;
  instrument: InstrumentProfile | null;
  instrumentSampleName: string | null;
}

/** What is saved per analysis: the pipeline's result and the summary shown in lists. */
interface SavedAnalysis {
  summary: SampleSummary;
  result: AnalysisResult;
}

interface Curves {
  x: Float64Array;
  y: Float64Array;
  background: Float64Array;
  model: Float64Array;
}

const CURVE_CACHE_SIZE = 12;

/**
 * The user's working state: the reference library, the open project, and the analysis of its
 * samples. Every change is written to the project's SQLite file at once (a crash loses nothing).
 */
export class Workspace {
  private libraryHandle: ReferenceLibrary | null = null;
  private store: ProjectStore | null = null;
  private projectId: string | null = null;
  private doc: ProjectDocument | null = null;
  private context: AnalysisContext | null = null;
  private readonly curves = new Map<number, Curves>();

  constructor(readonly paths: AppDataPaths) {}

  // ---------- library ----------

  library(): ReferenceLibrary {
    if (!this.libraryHandle) {
      this.libraryHandle = ReferenceLibrary.open(this.paths.libraryFile);
      ensureSeeded(this.libraryHandle);
    }
    return this.libraryHandle;
  }

  /** Call after any change to the library: the next analysis rebuilds its reference index. */
  libraryChanged(): void {
    this.context = null;
  }

  importReferences(fileName: string, text: string): { imported: string[]; updated: string[] } {
    const refs = parseReferenceFile(text, fileName);
    const summary = this.library().importReferences(refs);
    this.libraryChanged();
    return { imported: summary.added, updated: [...summary.updated, ...summary.unchanged] };
  }

  saveReference(ref: Reference): StoredReference {
    const library = this.library();
    library.importReferences([ref], { change: library.exists(ref.name) ? 'edit' : 'import' });
    this.libraryChanged();
    return library.get(ref.name)!;
  }

  referenceFromCell(input: { name: string; formula: string; cell: NonNullable<Reference['cell']>; tags: string[]; source: string }): StoredReference {
    const computed = positionsFromCell(input.cell, { name: input.name });
    return this.saveReference({ ...computed, name: input.name, formula: input.formula, tags: input.tags, source: input.source, cell: input.cell });
  }

  referenceLines(names: string[]): ReferenceLinesView[] {
    const lambda = this.wavelength().lambda1;
    const out: ReferenceLinesView[] = [];
    for (const name of names) {
      const ref = this.library().get(name);
      if (!ref) continue;
      out.push({
        name: ref.name,
        version: ref.version,
        lines: ref.lines
          .map((l) => ({ twoTheta: twoThetaFromD(l.d, lambda), d: l.d, intensity: l.intensity, hkl: l.hkl ?? null }))
          .filter((l) => Number.isFinite(l.twoTheta)),
      });
    }
    return out;
  }

  // ---------- projects ----------

  listProjects(): ProjectSummary[] {
    const files = readdirSync(this.paths.projectsDir).filter((f) => f.endsWith('.sqlite'));
    const out: ProjectSummary[] = [];
    for (const file of files) {
      const id = file.slice(0, -'.sqlite'.length);
      const path = join(this.paths.projectsDir, file);
      try {
        const doc = id === this.projectId && this.doc ? this.doc : readDocument(path);
        out.push({ id, name: doc.projectName, modified: statSync(path).mtime.toISOString(), demo: doc.demo });
      } catch {
        // A file that is not a project is skipped from the list, never touched.
      }
    }
    return out.sort((a, b) => b.modified.localeCompare(a.modified));
  }

  hasProject(): boolean {
    return this.store !== null;
  }

  createProject(name: string, extra: Partial<ProjectDocument> = {}): ProjectState {
    const id = `${slug(name)}-${randomBytes(3).toString('hex')}`;
    const store = ProjectStore.open(join(this.paths.projectsDir, `${id}.sqlite`));
    const doc: ProjectDocument = { projectName: name, demo: false, truth: null, analysis: { ...DEFAULT_SETTINGS }, instrument: null, instrumentSampleName: null, ...extra };
    store.setSettings(doc as unknown as Record<string, unknown>);
    store.close();
    return this.openProject(id);
  }

  openProject(id: string): ProjectState {
    const path = join(this.paths.projectsDir, `${id}.sqlite`);
    if (!/^[a-z0-9-]+$/.test(id) || !existsSync(path)) throw new InputError(`there is no project "${id}"; it may have been moved or deleted`);
    const store = ProjectStore.open(path);
    this.closeProject();
    this.store = store;
    this.projectId = id;
    this.doc = readDocumentFrom(store);
    this.rememberLastProject(id);
    return this.state();
  }

  /** Reopen the project used last, if it still exists. */
  openLastProject(): ProjectState | null {
    const file = join(this.paths.root, 'state.json');
    if (!existsSync(file)) return null;
    try {
      const { lastProject } = JSON.parse(readFileSync(file, 'utf8')) as { lastProject?: string };
      return lastProject ? this.openProject(lastProject) : null;
    } catch {
      return null;
    }
  }

  private rememberLastProject(id: string): void {
    const file = join(this.paths.root, 'state.json');
    writeFileSync(`${file}.tmp`, JSON.stringify({ lastProject: id }));
    renameSync(`${file}.tmp`, file);
  }

  closeProject(): void {
    this.store?.close();
    this.store = null;
    this.projectId = null;
    this.doc = null;
    this.context = null;
    this.curves.clear();
  }

  close(): void {
    this.closeProject();
    this.libraryHandle?.close();
    this.libraryHandle = null;
  }

  private project(): { store: ProjectStore; doc: ProjectDocument; id: string } {
    if (!this.store || !this.doc || !this.projectId) throw new InputError('no project is open; open one or create a new one first');
    return { store: this.store, doc: this.doc, id: this.projectId };
  }

  private saveDocument(): void {
    const { store, doc } = this.project();
    store.setSettings(doc as unknown as Record<string, unknown>);
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

  updateSettings(changes: Partial<ProjectSettings>): ProjectState {
    const { doc } = this.project();
    const next = settingsSchema.parse({ ...doc.analysis, ...changes });
    parseWavelength(next.wavelength);
    if (next.target !== null && !this.library().get(next.target)) {
      throw new InputError(`the target "${next.target}" is not in the library; add it there first or pick another`);
    }
    doc.analysis = next;
    this.saveDocument();
    this.context = null;
    this.curves.clear();
    return this.state();
  }

  wavelength(): Wavelength {
    return parseWavelength(this.doc?.analysis.wavelength ?? DEFAULT_SETTINGS.wavelength);
  }

  // ---------- samples ----------

  /** Read, keep and analyse a dropped file. A file that cannot be read is refused before anything is kept. */
  addSample(fileName: string, bytes: Uint8Array, labels: { label?: string | null; variant?: string | null; hours?: number | null } = {}): SampleSummary {
    const { store } = this.project();
    const pattern = readPatternBytes(bytes, fileName);
    const variant = labels.variant !== undefined ? labels.variant : guessVariant(fileName);
    const hours = labels.hours !== undefined ? labels.hours : guessHours(fileName);
    const record = store.addSample({ fileName, bytes, label: labels.label ?? null, variant, exposureHours: hours });
    return this.analyze(record, pattern);
  }

  reanalyze(id: number): SampleSummary {
    const { store } = this.project();
    const record = store.getSample(id);
    if (!record) throw new InputError(`there is no sample ${id} in this project`);
    this.curves.delete(id);
    return this.analyze(record, readPatternBytes(store.getSampleBytes(id), record.fileName));
  }

  labelSample(id: number, variant: string | null, hours: number | null): SampleSummary {
    const { store } = this.project();
    const record = store.updateSample(id, { variant, exposureHours: hours });
    return this.summaryOf(record);
  }

  removeSample(id: number): ProjectState {
    this.project().store.removeSample(id);
    this.curves.delete(id);
    return this.state();
  }

  sampleDetail(id: number): SampleDetail {
    const { store } = this.project();
    const record = store.getSample(id);
    if (!record) throw new InputError(`there is no sample ${id} in this project`);
    const summary = this.summaryOf(record);
    const saved = store.latestResult<SavedAnalysis>(id)?.result ?? null;
    const pattern = readPatternBytes(store.getSampleBytes(id), record.fileName);
    const result = saved?.result ?? null;
    const curves = result ? this.curvesOf(id, pattern, result) : null;
    const lowAngleList = result ? lowAnglePeaks(result.match, this.project().doc.analysis.target) : [];
    const linesOfPresent = (result?.match.phases ?? []).filter((p) => p.verdict !== 'not-seen').flatMap((p) => p.lines.map((l) => ({ at: l.twoThetaMeasured, phase: p.name })));
    // The match reports positions rounded to 0.0001°: a peak and a line are the same within that.
    const near = (a: number, b: number): boolean => Math.abs(a - b) < 6e-4;
    const peaks: PeakView[] = (result?.peaks ?? []).map((p) => ({
      twoTheta: p.twoTheta,
      twoThetaSigma: p.twoThetaSigma,
      d: p.d,
      height: p.height,
      area: p.area,
      fwhm: p.fwhm,
      integralBreadth: p.integralBreadth,
      eta: p.eta,
      phase: linesOfPresent.find((l) => near(l.at, p.twoTheta))?.phase ?? null,
      lowAngle: lowAngleList.some((l) => near(l.twoTheta, p.twoTheta)),
    }));
    const wavelength = result?.wavelength ?? pattern.wavelength ?? this.wavelength();
    return {
      ...summary,
      wavelengthLabel: wavelength.label,
      lambda1: wavelength.lambda1,
      points: pattern.x.length,
      x: floats(pattern.x),
      y: floats(pattern.y),
      background: curves ? floats(curves.background) : null,
      model: curves ? floats(curves.model) : null,
      peaks,
      lowAnglePeaks: lowAngleList,
      match: result?.match ?? null,
      size: result ? sizeView(result) : null,
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

  private analysisContext(): AnalysisContext {
    if (!this.context) {
      const { doc } = this.project();
      const s = doc.analysis;
      const settings = {
        wavelength: parseWavelength(s.wavelength),
        toleranceDeg: s.toleranceDeg,
        k: s.scherrerK,
        breadth: s.breadth,
        correction: s.correction,
        target: s.target,
        backgroundHalfWidthDeg: s.backgroundHalfWidthDeg,
      };
      this.context = createAnalysisContext(this.library().all(), doc.instrument, settings);
    }
    return this.context;
  }

  private analyze(record: SampleRecord, pattern: Pattern): SampleSummary {
    const { store, doc } = this.project();
    const started = performance.now();
    let summary: SampleSummary;
    try {
      const context = this.analysisContext();
      const result = analyzePattern(pattern, context);
      const analysisMs = performance.now() - started;
      summary = summaryFromResult(record, result, doc.analysis.target, analysisMs);
      const byName = new Map(context.references.map((r) => [r.name, r]));
      const used = result.references.used.map((u) => ({ id: byName.get(u.name)?.id ?? 0, version: u.version, name: u.name }));
      store.saveResult(record.id, { summary, result } satisfies SavedAnalysis, used);
    } catch (err) {
      if (!(err instanceof InputError)) throw err;
      summary = { ...baseSummary(record), problem: err.message };
      store.saveResult(record.id, { summary, result: null });
    }
    return summary;
  }

  private summaryOf(record: SampleRecord): SampleSummary {
    const { store, doc } = this.project();
    const saved = store.latestResult<SavedAnalysis>(record.id)?.result;
    if (!saved) return baseSummary(record);
    const summary = { ...saved.summary, name: record.label ?? saved.summary.name, variant: record.variant, hours: record.exposureHours };
    // The pattern the instrument profile was fitted to is the standard, not a product sample.
    if (doc.instrument?.standard.sha256 === record.sha256 && !summary.problem) summary.verdict = 'instrument standard';
    return summary;
  }

  /** Background and fit for drawing: from the analysis when it kept them, else from a peak search with the same settings. */
  private curvesOf(id: number, pattern: Pattern, result: AnalysisResult): Curves {
    const cached = this.curves.get(id);
    if (cached) return cached;
    const kept = (result as { curves?: { background: Float64Array | number[]; model: Float64Array | number[] } }).curves;
    const search = kept ? null : findPeaks(pattern, { wavelength: result.wavelength, backgroundHalfWidthDeg: this.project().doc.analysis.backgroundHalfWidthDeg ?? undefined });
    const curves = {
      x: pattern.x,
      y: pattern.y,
      background: kept ? Float64Array.from(kept.background) : search!.background,
      model: kept ? Float64Array.from(kept.model) : search!.model,
    };
    this.curves.set(id, curves);
    if (this.curves.size > CURVE_CACHE_SIZE) this.curves.delete(this.curves.keys().next().value!);
    return curves;
  }

  // ---------- instrument ----------

  fitInstrument(sampleId: number, standardName: string): { profile: InstrumentProfile; view: InstrumentView } {
    const { store } = this.project();
    const record = store.getSample(sampleId);
    if (!record) throw new InputError(`there is no sample ${sampleId} in this project`);
    const standard = this.library().get(standardName);
    if (!standard) throw new InputError(`the standard "${standardName}" is not in the library`);
    const pattern = readPatternBytes(store.getSampleBytes(sampleId), record.fileName);
    const wavelength = pattern.wavelength ?? this.wavelength();
    const search = findPeaks(pattern, { wavelength });
    const profile = fitInstrumentProfile(search.peaks, standard, {
      wavelength,
      name: `${standard.name} on ${record.fileName}`,
      standardFile: { file: record.fileName, sha256: record.sha256 },
      standardVersion: standard.version,
      toleranceDeg: this.project().doc.analysis.toleranceDeg,
    });
    return { profile, view: instrumentView(profile, record.label ?? record.fileName) };
  }

  saveInstrument(sampleId: number, standardName: string): ProjectState {
    const { profile, view } = this.fitInstrument(sampleId, standardName);
    const { doc } = this.project();
    doc.instrument = profile;
    doc.instrumentSampleName = view.sampleName;
    this.saveDocument();
    this.context = null;
    return this.state();
  }

  clearInstrument(): ProjectState {
    const { doc } = this.project();
    doc.instrument = null;
    doc.instrumentSampleName = null;
    this.saveDocument();
    this.context = null;
    return this.state();
  }
}

function readDocument(path: string): ProjectDocument {
  const store = ProjectStore.open(path);
  try {
    return readDocumentFrom(store);
  } finally {
    store.close();
  }
}

function readDocumentFrom(store: ProjectStore): ProjectDocument {
  const raw = store.getSettings<Partial<ProjectDocument>>();
  const analysis = settingsSchema.safeParse({ ...DEFAULT_SETTINGS, ...(raw.analysis ?? {}) });
  return {
    projectName: typeof raw.projectName === 'string' ? raw.projectName : 'Untitled project',
    demo: raw.demo === true,
    truth: typeof raw.truth === 'string' ? raw.truth : null,
    analysis: analysis.success ? analysis.data : { ...DEFAULT_SETTINGS },
    instrument: raw.instrument ?? null,
    instrumentSampleName: raw.instrumentSampleName ?? null,
  };
}

function baseSummary(record: SampleRecord): SampleSummary {
  return {
    id: record.id,
    name: record.label ?? record.fileName,
    fileName: record.fileName,
    variant: record.variant,
    hours: record.exposureHours,
    simulated: /simulated/i.test(record.fileName),
    verdict: 'not analysed',
    phase: null,
    lowAngleCount: 0,
    unexplainedCount: 0,
    sizeNm: null,
    sizeSigmaNm: null,
    problem: null,
    analysisMs: null,
  };
}

function summaryFromResult(record: SampleRecord, result: AnalysisResult, target: string | null, analysisMs: number): SampleSummary {
  const { verdict, phase } = sampleVerdict(result.match, target);
  return {
    ...baseSummary(record),
    verdict,
    phase: phase ? { name: phase.name, verdict: phase.verdict, score: phase.score } : null,
    lowAngleCount: lowAnglePeaks(result.match, target).length,
    unexplainedCount: result.match.unexplained.length,
    sizeNm: result.size.scherrer.sizeNm,
    sizeSigmaNm: result.size.scherrer.sizeSigmaNm,
    analysisMs,
  };
}

function sizeView(result: AnalysisResult): SizeView {
  const size = result.size;
  const wh = size.williamsonHall as { sizeNm?: number | null; strain?: number; r2?: number } | null;
  return {
    k: size.k,
    breadth: size.breadth,
    correction: size.correction,
    phase: result.settings.sizePhase,
    instrumentCorrected: size.settings.instrument !== null,
    peaks: size.peaks.map((p) => ({ twoTheta: p.twoTheta, hkl: p.hkl, sizeNm: p.sizeNm, sizeSigmaNm: p.sizeSigmaNm, limit: p.limit })),
    scherrer: size.scherrer.sizeNm !== null ? { sizeNm: size.scherrer.sizeNm, sizeSigmaNm: size.scherrer.sizeSigmaNm ?? Number.NaN } : null,
    williamsonHall: wh && typeof wh.strain === 'number' ? { sizeNm: wh.sizeNm ?? null, strain: wh.strain, r2: wh.r2 ?? Number.NaN } : null,
    notes: [size.scherrer.statement, ...size.warnings].filter((s) => !!s),
  };
}

export function instrumentView(profile: InstrumentProfile, sampleName: string): InstrumentView {
  const [lo, hi] = profile.twoThetaRangeDeg;
  const from = Math.max(2, lo - 10);
  const to = Math.min(150, hi + 10);
  const curve: InstrumentView['curve'] = [];
  for (let i = 0; i <= 120; i++) {
    const tt = from + ((to - from) * i) / 120;
    curve.push({ twoTheta: tt, fwhm: instrumentWidthAt(profile, tt).fwhm });
  }
  return {
    standard: profile.standard.name,
    sampleName,
    u: profile.caglioti.u,
    v: profile.caglioti.v,
    w: profile.caglioti.w,
    points: profile.residuals.map((r) => ({ twoTheta: r.twoTheta, fwhm: r.fwhm, fwhmSigma: Math.abs(r.fwhmResidual), used: true })),
    curve,
    notes: profile.warnings,
  };
}

/** Float32 little-endian base64: display precision is plenty, and it keeps a 50 000-point pattern small. */
function floats(values: Float64Array): string {
  return Buffer.from(Float32Array.from(values).buffer).toString('base64');
}

function slug(name: string): string {
  return (
    name
      .toLowerCase()
      .normalize('NFKD')
      .replace(/[^a-z0-9]+/g, '-')
      .replace(/^-+|-+$/g, '')
      .slice(0, 40) || 'project'
  );
}

const VARIANT_WORDS = ['as made', 'as-made', 'ground', 'washed', 'sonicated', 'annealed', 'stirred', 'powdered', 'dried'];

/** A workup variant named in the file name ("batch3_washed.xy" → "washed"), else null. */
export function guessVariant(fileName: string): string | null {
  const lower = fileName.toLowerCase().replace(/[_.]/g, ' ');
  const word = VARIANT_WORDS.find((w) => lower.includes(w));
  return word ? word.replace('-', ' ') : null;
}

/** An exposure time named in the file name ("air_24h.xy" → 24), else null. */
export function guessHours(fileName: string): number | null {
  const match = /(?:^|[^a-z0-9.])(\d+(?:\.\d+)?)\s*h(?:ours?)?(?![a-z])/i.exec(fileName.replace(/_/g, ' '));
  return match ? Number(match[1]) : null;
}
