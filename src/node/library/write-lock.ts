import { readFileSync, rmSync, writeFileSync } from 'node:fs';
import { hostname } from 'node:os';
import { basename } from 'node:path';

/**
 * Who is writing to a library file: while a write transaction runs, a small JSON file beside the
 * library (`<library>.holder`) names the process, so another writer kept waiting can say who it waits
 * for. SQLite's own lock decides who writes; this note only describes the holder.
 */
export interface LockHolder {
  pid: number;
  host: string;
  command: string;
  startedAt: string;
}

export function holderFile(libraryPath: string): string {
  return `${libraryPath}.holder`;
}

/** This process, as another one would read it: "crystallog library import refs.json --library lib.sqlite". */
function thisCommand(): string {
  const [, script, ...args] = process.argv;
  const program = script ? basename(script).replace(/\.[cm]?js$/, '') : basename(process.argv0);
  return [program, ...args].join(' ').slice(0, 300);
}

/** Note this process as the writer (best effort: a read-only folder keeps no note, the write still runs). */
export function recordHolder(libraryPath: string): void {
  const holder: LockHolder = { pid: process.pid, host: hostname(), command: thisCommand(), startedAt: new Date().toISOString() };
  try {
    writeFileSync(holderFile(libraryPath), JSON.stringify(holder));
  } catch {
    // Nothing to do: the note is a courtesy to waiting writers.
  }
}

/** Remove the note; called while the write lock is still held, so it never removes the next writer's. */
export function forgetHolder(libraryPath: string): void {
  try {
    rmSync(holderFile(libraryPath), { force: true });
  } catch {
    // As above.
  }
}

/** The writer named by the note, when the note is there and its process still runs; else null. */
function currentHolder(libraryPath: string): LockHolder | null {
  let holder: Partial<LockHolder>;
  try {
    holder = JSON.parse(readFileSync(holderFile(libraryPath), 'utf8')) as Partial<LockHolder>;
  } catch {
    return null;
  }
  if (typeof holder.pid !== 'number' || typeof holder.command !== 'string' || typeof holder.startedAt !== 'string') return null;
  const sameHost = holder.host === undefined || holder.host === hostname();
  if (sameHost && (holder.pid === process.pid || !processRuns(holder.pid))) return null; // a note left by a crash
  return { pid: holder.pid, host: holder.host ?? hostname(), command: holder.command, startedAt: holder.startedAt };
}

/** "crystallog library import big.json (pid 4242, writing since 2026-12-02T15:40:01Z)", or "another program". */
export function describeHolder(libraryPath: string): string {
  const holder = currentHolder(libraryPath);
  if (!holder) return 'another program';
  const where = holder.host === hostname() ? '' : ` on ${holder.host}`;
  return `"${holder.command}" (pid ${holder.pid}${where}, writing since ${holder.startedAt})`;
}

/** Whether a process of this host runs (a note or file it left is not stale). */
export function processRuns(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (err) {
    return (err as { code?: string }).code === 'EPERM'; // it runs, under another user
  }
}
