import type { ReferenceIndex } from '../../core/match/reference-index.js';
import { existsSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import { InputError } from '../../core/errors.js';
import type { StoredReference } from '../../core/model/reference.js';
import { ReferenceLibrary } from '../../node/library/store.js';

/** How a command uses the library: reading never writes a byte; only creating may make the file. */
export type LibraryUse = 'read' | 'write' | 'create';

/**
 * Open the library file named by --library for one piece of work, and always close it. Only an
 * import may create the file; commands that only read open it read-only.
 */
export function withLibrary<T>(path: string, work: (library: ReferenceLibrary) => T, use: LibraryUse = 'read'): T {
  if (use !== 'create' && !existsSync(path)) throw new InputError(`library file ${path} does not exist; create it with: crystallog library import FILE --library ${path}`);
  const busyTimeoutMs = lockWaitFromEnvironment();
  const library = ReferenceLibrary.open(path, {
    readOnly: use === 'read',
    ...(busyTimeoutMs !== undefined ? { busyTimeoutMs } : {}),
    onLockWait: (message) => process.stderr.write(`crystallog: ${message}\n`),
  });
  printWarnings(library.openNotes);
  try {
    return work(library);
  } finally {
    library.close();
  }
}

/** CRYSTALLOG_LOCK_WAIT_MS: how long a write waits for another writer's lock (default 10 s). */
function lockWaitFromEnvironment(): number | undefined {
  const text = process.env.CRYSTALLOG_LOCK_WAIT_MS;
  if (text === undefined || text.trim() === '') return undefined;
  const ms = Number(text);
  if (!Number.isInteger(ms) || ms < 0) throw new InputError(`CRYSTALLOG_LOCK_WAIT_MS=${text}: give the wait for a locked library in whole milliseconds (10000 is 10 s)`);
  return ms;
}

/** Every current reference of the library; an empty library is the user's mistake for commands that match. */
export function loadAllReferences(path: string): StoredReference[] {
  const references = withLibrary(path, (library) => library.all());
  if (references.length === 0) throw new InputError(`the library ${path} holds no references; add some with: crystallog library import FILE --library ${path}`);
  return references;
}

/**
 * Every current reference with the library's stored d-sorted line index, for a batch (analyze): the
 * index read into shared memory for the workers, the lines left in the file for each worker to read
 * as its patterns ask (the library is closed here; only the workers read lines).
 */
export function loadReferencesWithIndex(path: string): { references: readonly StoredReference[]; index: ReferenceIndex } {
  return withReferencesWithIndex(path, (loaded) => loaded, { linesOnDemand: true, sharedMemory: true });
}

/**
 * Work with every current reference and the stored line index while the library is open: with
 * linesOnDemand, each reference's lines are read from the library only if the work asks for them (a single match).
 */
export function withReferencesWithIndex<T>(
  path: string,
  work: (loaded: { references: readonly StoredReference[]; index: ReferenceIndex }) => T,
  options: { linesOnDemand?: boolean; sharedMemory?: boolean } = {},
): T {
  return withLibrary(path, (library) => {
    const loaded = library.referencesWithIndex(options);
    if (loaded.references.length === 0) throw new InputError(`the library ${path} holds no references; add some with: crystallog library import FILE --library ${path}`);
    return work(loaded);
  });
}

/** Write a whole file or nothing: a temporary file beside it, flushed, then renamed over it. */
export function writeFileAtomically(path: string, text: string): void {
  const temporary = `${path}.${process.pid}.tmp`;
  try {
    writeFileSync(temporary, text, { flush: true });
    renameSync(temporary, path);
  } catch (err) {
    rmSync(temporary, { force: true });
    throw new InputError(`cannot write this file (${(err as { code?: string }).code ?? String(err)})`, { file: path });
  }
}

/** Warnings go to stderr, each once, so that stdout holds only the result. */
export function printWarnings(warnings: readonly string[]): void {
  for (const w of new Set(warnings)) process.stderr.write(`crystallog: warning: ${w}\n`);
}
