import { closeSync, fsyncSync, linkSync, openSync, readdirSync, renameSync, rmSync, existsSync } from 'node:fs';
import { hostname } from 'node:os';
import { basename, dirname, join } from 'node:path';
import { processRuns } from './write-lock.js';

/**
 * A file built whole under a private name beside its final one, then put in place in one step, so a
 * failure or a kill never leaves a half-made file under the final name: `<file>.building-<host>-<pid>`.
 */
export function buildingName(path: string): string {
  return `${path}.building-${safeHost()}-${process.pid}`;
}

function safeHost(): string {
  return hostname().replace(/[^A-Za-z0-9.]/g, '_');
}

/** Remove what a killed build of this file left (only this host's, and only of processes that no longer run). */
export function removeStaleBuilds(path: string): void {
  const prefix = `${basename(path)}.building-${safeHost()}-`;
  let names: string[];
  try {
    names = readdirSync(dirname(path));
  } catch {
    return;
  }
  for (const name of names) {
    if (!name.startsWith(prefix)) continue;
    const pid = /^(\d+)(?:-wal|-shm|-journal)?$/.exec(name.slice(prefix.length))?.[1];
    if (pid !== undefined && !processRuns(Number(pid))) rmSync(join(dirname(path), name), { force: true });
  }
}

/** The built file and the logs SQLite may keep beside it. */
export function removeBuild(built: string): void {
  for (const f of [built, `${built}-wal`, `${built}-shm`, `${built}-journal`]) rmSync(f, { force: true });
}

/**
 * Sync the built file and give it its final name, unless a file of that name appeared meanwhile
 * (then false, the built file removed): a hard link never replaces a file; where the file system
 * has no hard links, a rename after one more look.
 */
export function putInPlace(built: string, path: string): boolean {
  const fd = openSync(built, 'r+');
  try {
    fsyncSync(fd);
  } finally {
    closeSync(fd);
  }
  try {
    linkSync(built, path);
  } catch (err) {
    if ((err as { code?: string }).code === 'EEXIST' || existsSync(path)) {
      removeBuild(built);
      return false;
    }
    renameSync(built, path);
    syncFolder(path);
    return true;
  }
  rmSync(built, { force: true });
  syncFolder(path);
  return true;
}

/** The folder's entry of a new name made durable (best effort: not every platform can open a folder). */
function syncFolder(path: string): void {
  try {
    const fd = openSync(dirname(path), 'r');
    try {
      fsyncSync(fd);
    } finally {
      closeSync(fd);
    }
  } catch {
    // A folder that cannot be synced here keeps the new name as the file system does.
  }
}
