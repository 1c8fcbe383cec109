import Database from 'better-sqlite3';
import { existsSync, rmSync, statSync } from 'node:fs';
import { InputError } from '../../core/errors.js';

export type Db = Database.Database;

/** One schema step: runs inside a transaction and moves the file from version index to index + 1. */
export type Migration = (db: Db) => void;

export interface OpenDatabaseOptions {
  /** What the file holds, recorded in its meta table ('reference-library', 'project'). */
  kind: string;
  /** Schema steps in order; the file's user_version counts how many have run. */
  migrations: readonly Migration[];
  /** Run only the first n migrations (tests of upgrading an older file). */
  upToVersion?: number;
  /** How long a write waits for another connection (the app and the CLI at once), ms. */
  busyTimeoutMs?: number;
  /** Open for reading only: nothing is written to the file, not even its journal mode. */
  readOnly?: boolean;
  /**
   * Run on the writing connection after a file of an older schema opened for reading was brought up
   * to date (the one write such an open makes), to remake what the upgrade dropped (a cache).
   */
  afterUpgrade?: (db: Db) => void;
  /**
   * `path` is a private new file being built for the file named here (and in messages): its journal
   * is kept in memory and nothing is synced, since no other connection can see it (the builder
   * switches it to WAL, syncs it and moves it into place; see ReferenceLibrary.importIntoNew).
   */
  buildingFor?: string;
}

/** What opening found and did that the user should hear of (an unclean shutdown checked, say). */
export interface OpenNotes {
  notes: string[];
  /** Set while opening a file of an older schema for reading: its version, before it is brought up to date. */
  olderSchema?: number;
}

/** A wait long enough for another process to finish a large import (common practice for shared SQLite files). */
export const DEFAULT_BUSY_TIMEOUT_MS = 10_000;

/**
 * Open (or create) a SQLite file of one kind: WAL journal, foreign keys on, busy timeout, and the
 * schema brought up to date by the migrations (each in its own transaction; PRAGMA user_version
 * records how many have run). An existing file is first inspected through a read-only connection, so
 * a file that is refused (another program's database, a newer schema, damage) is never changed.
 */
export function openDatabase(path: string, options: OpenDatabaseOptions, found: OpenNotes = { notes: [] }): Db {
  const isNew = path === ':memory:' || !existsSync(path);
  if (!isNew) inspectExisting(path, options, found);
  if (options.readOnly) {
    if (isNew) throw new InputError(`the ${options.kind} file does not exist`, { file: path });
    if (found.olderSchema !== undefined) {
      // A file from an earlier version is brought up to date once (its migrations only add), then read.
      const writer = openDatabase(path, { ...options, readOnly: false }, found);
      try {
        options.afterUpgrade?.(writer);
      } finally {
        writer.close();
      }
      found.notes.push(`${path}: brought up to date from schema version ${found.olderSchema} to ${options.migrations.length}`);
      found.olderSchema = undefined;
    }
    return openReadOnly(path, options);
  }
  const shown = options.buildingFor ?? path;
  let db: Db;
  try {
    db = new Database(path, { timeout: options.busyTimeoutMs ?? DEFAULT_BUSY_TIMEOUT_MS });
  } catch (err) {
    throw new InputError(`cannot open ${options.kind} file: ${errorText(err)}`, { file: shown });
  }
  try {
    // Set before the file's first page is written (later it holds until a VACUUM).
    if (isNew) db.pragma(`page_size = ${NEW_FILE_PAGE_BYTES}`);
    // A new file's pages need no journal (SQLite journals only pages that existed at BEGIN), so MEMORY costs next to nothing and keeps ROLLBACK.
    db.pragma(options.buildingFor === undefined ? 'journal_mode = WAL' : 'journal_mode = MEMORY');
    db.pragma('foreign_keys = ON');
    db.pragma(options.buildingFor === undefined ? 'synchronous = NORMAL' : 'synchronous = OFF');
    migrate(db, path, isNew, options);
    return db;
  } catch (err) {
    db.close();
    throw asInputError(err, shown, options.kind);
  }
}

/**
 * Page size of a new file: a library is mostly line arrays of a few hundred bytes to 8 MB, and 16 KB
 * pages write an import of 100 000 references with a quarter of the WAL frames and read its 60 MB line
 * index with a quarter of the page reads (measured: commit of such an import 2.7 → 1.9 s CPU).
 */
const NEW_FILE_PAGE_BYTES = 16384;

function openReadOnly(path: string, options: OpenDatabaseOptions): Db {
  try {
    const db = new Database(path, { readonly: true, fileMustExist: true, timeout: options.busyTimeoutMs ?? DEFAULT_BUSY_TIMEOUT_MS });
    db.pragma('foreign_keys = ON');
    return db;
  } catch (err) {
    throw asInputError(err, path, options.kind);
  }
}

/**
 * Look at an existing file without writing to it: is it one of ours, of a schema this build knows, and
 * (when a write-ahead log was left beside it by an unclean shutdown) still whole?
 */
function inspectExisting(path: string, options: OpenDatabaseOptions, found: OpenNotes): void {
  const logsBefore = { wal: existsSync(`${path}-wal`), shm: existsSync(`${path}-shm`) };
  try {
    inspectReadOnly(path, options, found);
  } catch (err) {
    removeNewEmptyLogs(path, logsBefore);
    throw err;
  }
}

/**
 * Reading a file whose header says WAL makes SQLite create an empty -wal and -shm beside it. For a
 * refused file no Crystallog will use them: they go again, so a refused file is left exactly as it
 * was found. Only files this open made, and only an empty log (none there before means no other
 * connection had the file open).
 */
function removeNewEmptyLogs(path: string, before: { wal: boolean; shm: boolean }): void {
  const wal = `${path}-wal`;
  try {
    if (before.wal || (existsSync(wal) && statSync(wal).size > 0)) return;
    rmSync(wal, { force: true });
    if (!before.shm) rmSync(`${path}-shm`, { force: true });
  } catch {
    // Left as they are: empty logs beside a refused file do no harm.
  }
}

function inspectReadOnly(path: string, options: OpenDatabaseOptions, found: OpenNotes): void {
  const db = openReadOnly(path, options);
  try {
    checkKindAndVersion(db, path, options);
    const wal = `${path}-wal`;
    if (existsSync(wal) && statSync(wal).size > 0) {
      const verdict = db.pragma('quick_check', { simple: true }) as string;
      if (verdict !== 'ok') {
        throw new InputError(`this ${options.kind} file is damaged (${verdict}); restore it from a backup or export what can be read`, { file: path });
      }
      found.notes.push(`${path}: a write-ahead log was left beside it (an earlier session ended without closing it); the file was checked and is whole, its committed changes kept`);
    }
    if (options.readOnly && schemaVersion(db) < options.migrations.length && schemaVersion(db) > 0) found.olderSchema = schemaVersion(db);
  } catch (err) {
    throw asInputError(err, path, options.kind);
  } finally {
    db.close();
  }
}

/** SQLite's own failures, said as the user's problem with the file where they are. */
function asInputError(err: unknown, path: string, kind: string): unknown {
  if (err instanceof InputError || !isSqliteError(err)) return err;
  if (/SQLITE_NOTADB|SQLITE_CORRUPT/.test(err.code)) return new InputError(`this is not a Crystallog ${kind} file (${err.message})`, { file: path });
  if (/SQLITE_READONLY|SQLITE_CANTOPEN|SQLITE_PERM|SQLITE_AUTH/.test(err.code)) {
    return new InputError(`cannot write to this ${kind} file: it or its folder is read-only (${err.message}); copy it somewhere writable or ask for write permission`, { file: path });
  }
  if (/SQLITE_BUSY|SQLITE_LOCKED/.test(err.code)) {
    return new InputError(`this ${kind} file is busy: another program (or another crystallog) has been writing to it for too long; try again when it has finished`, { file: path });
  }
  return err;
}

function checkKindAndVersion(db: Db, path: string, options: OpenDatabaseOptions): void {
  const current = db.pragma('user_version', { simple: true }) as number;
  if (current === 0) {
    const tables = db.prepare(`SELECT count(*) AS n FROM sqlite_schema WHERE type = 'table'`).get() as { n: number };
    if (tables.n > 0) {
      throw new InputError(`this SQLite file is not a Crystallog ${options.kind} file (it has tables of its own)`, { file: path });
    }
    return;
  }
  const kind = readMeta(db, 'kind');
  if (kind !== options.kind) {
    throw new InputError(`this file is a Crystallog ${kind ?? 'unknown'} file, not a ${options.kind} file`, { file: path });
  }
  if (current > options.migrations.length) {
    throw new InputError(
      `this ${options.kind} file has schema version ${current}, newer than this Crystallog understands (${options.migrations.length}); update Crystallog to open it`,
      { file: path },
    );
  }
}

function migrate(db: Db, path: string, isNew: boolean, options: OpenDatabaseOptions): void {
  const target = options.upToVersion ?? options.migrations.length;
  // Checked again on the writing connection: another process may have changed the file meanwhile.
  if (!isNew) checkKindAndVersion(db, path, options);
  const current = db.pragma('user_version', { simple: true }) as number;
  for (let version = current; version < target; version++) {
    // IMMEDIATE: take the write lock first, so two processes opening a new file cannot both migrate it.
    db.transaction(() => {
      const now = db.pragma('user_version', { simple: true }) as number;
      if (now !== version) return; // another connection ran this step meanwhile
      options.migrations[version]!(db);
      if (version === 0) writeMeta(db, 'kind', options.kind);
      db.pragma(`user_version = ${version + 1}`);
    }).immediate();
  }
}

/** Every kind of file starts with this table (the first migration of each kind creates it). */
export const CREATE_META_TABLE = `CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT NOT NULL) STRICT`;

export function readMeta(db: Db, key: string): string | undefined {
  const hasMeta = db.prepare(`SELECT 1 FROM sqlite_schema WHERE type = 'table' AND name = 'meta'`).get() !== undefined;
  if (!hasMeta) return undefined;
  const row = db.prepare('SELECT value FROM meta WHERE key = ?').get(key) as { value: string } | undefined;
  return row?.value;
}

export function writeMeta(db: Db, key: string, value: string): void {
  db.prepare('INSERT INTO meta (key, value) VALUES (?, ?) ON CONFLICT (key) DO UPDATE SET value = excluded.value').run(key, value);
}

export function schemaVersion(db: Db): number {
  return db.pragma('user_version', { simple: true }) as number;
}

function isSqliteError(err: unknown): err is Error & { code: string } {
  return err instanceof Error && typeof (err as { code?: unknown }).code === 'string';
}

function errorText(err: unknown): string {
  return err instanceof Error ? err.message : String(err);
}
