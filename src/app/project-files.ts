/**
 * The projects folder: one SQLite file per project, its settings document, and which project was
 * open last. A file that is not a project is skipped, never touched.
 */
import { randomBytes } from 'node:crypto';
import { existsSync, mkdirSync, readdirSync, readFileSync, renameSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { InputError } from '../core/errors.js';
import type { InstrumentProfile } from '../core/size/instrument.js';
import { DEFAULT_SETTINGS, settingsSchema, type ProjectSettings, type ProjectSummary } from '../api/contract.js';
import type { AppDataPaths } from '../node/app-data.js';
import { ProjectStore } from '../node/project-store.js';

/** What a project keeps in its settings document besides the samples. */
export interface ProjectDocument {
  projectName: string;
  demo: boolean;
  truth: string | null;
  analysis: ProjectSettings;
  instrument: InstrumentProfile | null;
  instrumentSampleName: string | null;
}

export function newProjectDocument(name: string, extra: Partial<ProjectDocument> = {}): ProjectDocument {
  return { projectName: name, demo: false, truth: null, analysis: { ...DEFAULT_SETTINGS }, instrument: null, instrumentSampleName: null, ...extra };
}

/** A new project id from its name: a readable slug and six random hex digits. */
export function newProjectId(name: string): string {
  return `${slug(name)}-${randomBytes(3).toString('hex')}`;
}

export function newProjectFile(paths: AppDataPaths, id: string): string {
  return join(paths.projectsDir, `${id}.sqlite`);
}

/** The file of a project id; ids are slugs, so no id reaches outside the projects folder. */
export function projectFile(paths: AppDataPaths, id: string): string {
  const path = join(paths.projectsDir, `${id}.sqlite`);
  if (!/^[a-z0-9-]+$/.test(id) || !existsSync(path)) throw new InputError(`there is no project "${id}"; it may have been moved or deleted`);
  return path;
}

/** Every project in the folder, newest first; `open` supplies the document of the project already open. */
export function listProjectFiles(paths: AppDataPaths, open: { id: string; doc: ProjectDocument } | null): ProjectSummary[] {
  const out: ProjectSummary[] = [];
  for (const file of readdirSync(paths.projectsDir).filter((f) => f.endsWith('.sqlite'))) {
    const id = file.slice(0, -'.sqlite'.length);
    const path = join(paths.projectsDir, file);
    try {
      const doc = open?.id === id ? open.doc : readDocument(path);
      out.push({ id, name: doc.projectName, modified: statSync(path).mtime.toISOString(), demo: doc.demo });
    } catch {
      // A file that is not a project is skipped from the list, never touched.
    }
  }
  return out.sort((a, b) => b.modified.localeCompare(a.modified));
}

function readDocument(path: string): ProjectDocument {
  const store = ProjectStore.open(path);
  try {
    return readDocumentFrom(store);
  } finally {
    store.close();
  }
}

/** The settings document of an open project; values that no longer pass the settings table fall back to defaults. */
export function readDocumentFrom(store: ProjectStore): ProjectDocument {
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

export function writeDocument(store: ProjectStore, doc: ProjectDocument): void {
  store.setSettings(doc as unknown as Record<string, unknown>);
}

/** Move a project's file into `projects/deleted/`, stamped with the time; returns where it is kept. */
export function moveToDeleted(paths: AppDataPaths, id: string, file: string): string {
  const folder = join(paths.projectsDir, 'deleted');
  mkdirSync(folder, { recursive: true });
  const keptAt = join(folder, `${id}-${new Date().toISOString().replace(/[:.]/g, '-')}.sqlite`);
  renameSync(file, keptAt);
  for (const suffix of ['-wal', '-shm']) if (existsSync(file + suffix)) renameSync(file + suffix, keptAt + suffix);
  if (lastProjectId(paths) === id) rmSync(join(paths.root, 'state.json'), { force: true });
  return keptAt;
}

/** The project open last, if the app recorded one. */
export function lastProjectId(paths: AppDataPaths): string | null {
  const file = join(paths.root, 'state.json');
  if (!existsSync(file)) return null;
  try {
    const { lastProject } = JSON.parse(readFileSync(file, 'utf8')) as { lastProject?: unknown };
    return typeof lastProject === 'string' ? lastProject : null;
  } catch {
    return null;
  }
}

/** Record the open project (written to a temporary file and renamed, so a crash leaves the old record). */
export function rememberLastProject(paths: AppDataPaths, id: string): void {
  const file = join(paths.root, 'state.json');
  writeFileSync(`${file}.tmp`, JSON.stringify({ lastProject: id }));
  renameSync(`${file}.tmp`, file);
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
