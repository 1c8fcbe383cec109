import type { Statement } from 'better-sqlite3';
import { InputError } from '../../core/errors.js';
import { formatReferenceJson, toFileEntry } from '../../core/library/json-format.js';
import { hasHkl, packedLinesOf, unpackValues, type PackedLines } from './packing.js';
import { normalisedGroupOf } from '../../core/match/solid-solution.js';
import { detailsOf, HeadsBuilder, snapshotReferences, storedReference, type SnapshotLines, type VersionDetails } from './stored-references.js';
import type { Reference, StoredReference } from '../../core/model/reference.js';
import { LIBRARY_KIND, LIBRARY_MIGRATIONS } from './schema.js';
import { DEFAULT_BUSY_TIMEOUT_MS, openDatabase, readMeta, schemaVersion, writeMeta, type Db } from './sqlite.js';
import { describeHolder, forgetHolder, recordHolder } from './write-lock.js';
import { buildingName, putInPlace, removeBuild, removeStaleBuilds } from './new-file.js';
import { createHash, hash } from 'node:crypto';
import { canonicalContent, checkReferences } from '../../core/library/validate.js';
import { libraryDigest } from '../../core/analysis/analyse.js';
import { lineIntensity, referenceIndexFromPacked, sortLineIndex, type PackedLineIndex, type ReferenceIndex } from '../../core/match/reference-index.js';

export { parseReferenceJson, formatReferenceJson } from '../../core/library/json-format.js';
export { parseReferenceCsv, type CsvReferenceMeta } from '../../core/library/csv-format.js';

/** What an import did, by reference name. */
export interface ImportSummary {
  /** New names. */
  added: string[];
  /** Names that got a new version (changed content, or re-imported after a delete). */
  updated: string[];
  /** Names whose current version already had exactly this content (no new version). */
  unchanged: string[];
}

/** One version in a reference's history. */
export interface ReferenceVersionInfo {
  id: number;
  name: string;
  version: number;
  createdAt: string;
  /** What made this version: "import", "edit", "restore of version 2", "seed". */
  change: string;
  lineCount: number;
  /** The version in use (when the reference is not deleted). */
  current: boolean;
  /** The reference as a whole is deleted (recoverable with undelete or restore). */
  deleted: boolean;
}

export interface ListFilter {
  /** Part of the name or formula, any case. */
  search?: string;
  /** A tag, any case. */
  tag?: string;
}

export interface OpenLibraryOptions {
  /** How long a write waits for another connection to finish, ms. */
  busyTimeoutMs?: number;
  /** Open for reading only (matching, listing, exporting): the file is never written. */
  readOnly?: boolean;
  /** Told once when a write has to wait for another process's write lock (the CLI prints it on stderr). */
  onLockWait?: (message: string) => void;
  /** Largest part of a snapshot array written, bytes (default 8 MB; smaller only to test the parts). */
  snapshotPartBytes?: number;
}

/** A write that has waited this long for the lock says so (a short wait for another save is not worth a word). */
const LOCK_NOTICE_AFTER_MS = 1000;

/** A version row in raw (array) form, in the order of VERSION_COLUMNS: faster to read in bulk than objects. */
type VersionRow = [
  id: number,
  version: number,
  name: string,
  source: string,
  details: string,
  createdAt: string,
  lineCount: number,
  lineValues: Buffer,
  lineIndices: Buffer | null,
];


const VERSION_COLUMNS = `v.entry_id AS id, v.version, v.name, v.source, v.details, v.created_at, v.line_count, v.line_values, v.line_indices`;
const CURRENT = `FROM reference_entry e JOIN reference_version v ON v.entry_id = e.id AND v.version = e.current_version
  WHERE e.deleted_at IS NULL`;

/**
 * The reference library: one SQLite file (WAL, so the app and the CLI can use it at once).
 * Every change is a new version in one transaction; old versions stay readable and restorable,
 * and delete only marks the reference, so nothing is ever lost.
 */
export class ReferenceLibrary {
  private readonly statements: ReturnType<typeof prepareStatements>;
  /** Writes through this connection (another connection's are seen in PRAGMA data_version). */
  private writes = 0;
  private cache: { dataVersion: number; writes: number; refs: StoredReference[] } | null = null;

  private constructor(
    private readonly db: Db,
    readonly path: string,
    private readonly lockWaitMs: number,
    private readonly onLockWait: ((message: string) => void) | undefined,
    private readonly partBytes: number,
  ) {
    this.statements = prepareStatements(db);
  }

  static open(path: string, options: OpenLibraryOptions = {}): ReferenceLibrary {
    const found = { notes: [] as string[] };
    const { onLockWait, snapshotPartBytes, ...databaseOptions } = options;
    // A reader that brings an older file up to date remakes its matching snapshot in the same go, so
    // later reads load it in one read instead of decoding every reference.
    const afterUpgrade = (writer: Db) => {
      const library = new ReferenceLibrary(writer, path, options.busyTimeoutMs ?? DEFAULT_BUSY_TIMEOUT_MS, onLockWait, snapshotPartBytes ?? SNAPSHOT_PART_BYTES);
      library.write(() => library.saveSnapshot());
    };
    const db = openDatabase(path, { kind: LIBRARY_KIND, migrations: LIBRARY_MIGRATIONS, ...databaseOptions, afterUpgrade }, found);
    if (options.readOnly && schemaVersion(db) === 0) {
      db.close();
      throw new InputError('this library file holds no references yet; add some with: crystallog library import FILE --library ' + path, { file: path });
    }
    const library = new ReferenceLibrary(db, path, options.busyTimeoutMs ?? DEFAULT_BUSY_TIMEOUT_MS, onLockWait, snapshotPartBytes ?? SNAPSHOT_PART_BYTES);
    library.openNotes = found.notes;
    return library;
  }

  /**
   * Import into a library file that does not exist yet, at a fraction of the cost of the same
   * import into an open library: the file is built under a private name beside it (buildingName),
   * with its journal in memory and no syncs, since no other connection can see it; then it is
   * switched to WAL, synced and put in place whole. A failure, or a kill, leaves no library file.
   * null, nothing imported, when a file of that name appeared meanwhile: import into that one.
   */
  static importIntoNew(path: string, refs: Iterable<Reference>, options: { change?: string } = {}): ImportSummary | null {
    removeStaleBuilds(path);
    const built = buildingName(path);
    let library: ReferenceLibrary | null = null;
    try {
      const db = openDatabase(built, { kind: LIBRARY_KIND, migrations: LIBRARY_MIGRATIONS, buildingFor: path });
      // Named by its final path: the holder note and messages are about the library being made.
      library = new ReferenceLibrary(db, path, DEFAULT_BUSY_TIMEOUT_MS, undefined, SNAPSHOT_PART_BYTES);
      const summary = library.importCheckedReferences(refs, options);
      db.pragma('journal_mode = WAL');
      library.close();
      return putInPlace(built, path) ? summary : null;
    } catch (err) {
      library?.close();
      removeBuild(built);
      throw err;
    }
  }

  /** What opening the file found (an unclean shutdown checked, say), for the user to read. */
  openNotes: string[] = [];

  get schemaVersion(): number {
    return schemaVersion(this.db);
  }

  /** Store references (all or nothing): new names are added, changed ones get a new version. */
  importReferences(refs: readonly Reference[], options: { change?: string } = {}): ImportSummary {
    return this.importCheckedReferences(checkReferences(refs), options);
  }

  /**
   * Store references as they come (a reader of a large file yields them one by one), all in one
   * write transaction: a bad reference anywhere, or an error thrown by the source, rolls back
   * everything, so the library is left as it was. They must be checked and in normal form
   * (checkReferences, or a reference file reader). The matching snapshot is rebuilt once at the end
   * from the stored rows.
   */
  importCheckedReferences(refs: Iterable<Reference>, options: { change?: string } = {}): ImportSummary {
    const change = options.change ?? 'import';
    return this.write(() => {
      const summary: ImportSummary = { added: [], updated: [], unchanged: [] };
      const seen = new Set<string>();
      const written = new WrittenRows(this.partBytes);
      // An empty library has no entry to look up (a name twice in the import is refused just below):
      // its new rows go in by the batch.
      const batch = this.statements.entryCount.get()!.n === 0 ? new NewRows(this.db) : undefined;
      const store: StoreOptions = {
        createdAt: new Date().toISOString(), // one import, one time
        batch,
        written: (row) => written.add(row),
      };
      for (const ref of refs) {
        const key = ref.name.toLowerCase();
        if (seen.has(key)) throw new InputError(`the reference "${ref.name}" appears twice in one import; each name may appear once`);
        seen.add(key);
        summary[this.storeVersion(ref, change, store)].push(ref.name);
      }
      batch?.flush();
      // When every current reference was written just now (an import into an empty library, say),
      // the snapshot is made from the rows in hand (their line values as they lie when they came in
      // name order); else from the stored rows.
      const current = this.statements.currentIdsByName.all();
      const inOrder = written.inOrder(current);
      if (!inOrder && !current.every((id) => written.has(id))) {
        written.clear();
        this.saveSnapshot();
      } else {
        const lineValues = inOrder ? () => written.takeParts() : undefined;
        this.saveSnapshot({ references: current.length, lines: written.lines, rows: written.rows(current), lineValues });
      }
      return summary;
    });
  }

  /** Change some fields of a reference (not its name): a new version, the old one kept. */
  edit(name: string, changes: Partial<Omit<Reference, 'name'>>): StoredReference {
    const current = this.requireCurrent(name);
    const { id: _id, version: _version, createdAt: _createdAt, ...base } = current;
    const [next] = checkReferences([{ ...base, lines: current.lines, ...changes, name: current.name }], `edit of "${current.name}"`);
    this.write(() => this.storeVersion(next!, 'edit'));
    return this.requireCurrent(name);
  }

  /** Current versions, sorted by name, optionally filtered by part of the name/formula and by tag. */
  list(filter: ListFilter = {}): StoredReference[] {
    const search = filter.search?.trim();
    const tag = filter.tag?.trim();
    const pattern = search ? `%${search.replace(/[\\%_]/g, (c) => `\\${c}`)}%` : null;
    if (tag) return this.statements.listByTag.all({ tag, pattern }).map(storedFromRow);
    if (pattern) return this.statements.listBySearch.all({ pattern }).map(storedFromRow);
    return this.all();
  }

  /**
   * Every current reference, sorted by name: one query, lines decoded on first use. Kept in memory
   * until this or another connection changes the library (treat the objects as read-only).
   */
  all(): StoredReference[] {
    const dataVersion = this.db.pragma('data_version', { simple: true }) as number;
    const cached = this.cache;
    if (cached && cached.dataVersion === dataVersion && cached.writes === this.writes) return cached.refs.slice();
    const refs = this.statements.all.all().map(storedFromRow);
    this.cache = { dataVersion, writes: this.writes, refs };
    return refs.slice();
  }

  /**
   * Every current reference with the d-sorted index over their lines, from the snapshot kept with the
   * library (its arrays read part by part, one JSON parse, lines decoded only for the references a
   * match looks at; with linesOnDemand the lines are not loaded at all but read per reference while
   * the library is open). When the snapshot is missing or older than the library, it is made from
   * the packed line arrays (never from line objects) and, when the file is writable, stored.
   */
  referencesWithIndex(options: { linesOnDemand?: boolean; sharedMemory?: boolean } = {}): { references: readonly StoredReference[]; index: ReferenceIndex } {
    const head = this.statements.snapshotHead.get();
    if (head && head.stamp === this.stamp()) {
      const blob = (name: SnapshotBlob) => this.readPart(name, options.sharedMemory ?? false);
      const lines: SnapshotLines = options.linesOnDemand
        ? { read: (id: number, version: number) => this.packedLinesOfVersion(id, version), library: this.path }
        : { values: blob('line_values'), indices: blob('line_indices'), indexStart: typedView(Int32Array, blob('index_start')) };
      const facts = this.statements.snapshotFacts.get()!;
      const references = snapshotReferences({
        heads: { bytes: blob('heads'), start: typedView(Int32Array, blob('head_start')), ...facts },
        lines,
        valueStart: typedView(Int32Array, blob('value_start')),
      });
      const index = { d: typedView(Float64Array, blob('d')), referenceOf: typedView(Int32Array, blob('reference_of')), intensity: typedView(Float32Array, blob('intensity')) };
      return { references, index: { ...referenceIndexFromPacked(references, index), libraryDigest: head.digest } };
    }
    if (!this.db.readonly) {
      this.write(() => this.saveSnapshot());
      return this.referencesWithIndex(options);
    }
    const references = this.all();
    return { references, index: referenceIndexFromPacked(references, packedIndexOf(references)) };
  }

  /**
   * Reads stored versions' packed lines from a library file by id and version, read-only (a batch
   * worker reading the lines its patterns ask for; a version never changes once stored).
   */
  static openLineReader(path: string): { read: (id: number, version: number) => PackedLines; close: () => void } {
    const library = ReferenceLibrary.open(path, { readOnly: true });
    return { read: (id, version) => library.packedLinesOfVersion(id, version), close: () => library.close() };
  }

  /** A stored version's packed lines, read while the library is open (for references whose lines are read on demand). */
  private packedLinesOfVersion(id: number, version: number): PackedLines {
    if (!this.db.open) throw new Error(`the lines of reference version ${id}.${version} were asked for after the library ${this.path} was closed`);
    const row = this.statements.packedLines.get(id, version);
    if (!row) throw new Error(`reference version ${id}.${version} is missing from the library ${this.path}`);
    return { count: row.line_count, values: row.line_values, indices: row.line_indices };
  }

  /** The library state in a few numbers: any import, edit, delete, undelete or restore changes it. */
  private stamp(): string {
    const { n, versions, last } = this.statements.stamp.get()!;
    return `${n}:${versions}:${last}`;
  }

  /**
   * Store the snapshot of the current references, made from their rows (as stored, or the rows of
   * every current reference in name order with their totals when the caller has them) in one pass: packed line bytes
   * copied end to end, heads from the stored details text, no reference or line objects.
   */
  private saveSnapshot(given?: { references: number; lines: number; rows: Iterable<VersionRow>; lineValues?: (() => Buffer[]) | undefined }): void {
    const bytes = (a: Float64Array | Int32Array | Float32Array) => Buffer.from(a.buffer, a.byteOffset, a.byteLength);
    const { references, lines } = given ?? this.statements.currentTotals.get()!;
    // The rows' packed values end to end, unless the caller has them so already (in parts, handed over).
    let lineValues: Float64Array | null = given?.lineValues ? null : new Float64Array(2 * lines);
    let gathered: PackedLineIndex | null = { d: new Float64Array(lines), referenceOf: new Int32Array(lines), intensity: new Float32Array(lines) };
    const indexStart = new Int32Array(references);
    const valueStart = new Int32Array(references + 1);
    const indices: Buffer[] = [];
    const builder = new HeadsBuilder();
    const digestOf: { name: string; version: number }[] = [];
    let n = 0;
    let ints = 0;
    let r = 0;
    for (const [id, version, name, source, details, createdAt, count, values, lineIndices] of given?.rows ?? this.statements.all.iterate()) {
      const { d, intensity } = unpackValues(values, count);
      lineValues?.set(d, 2 * n);
      lineValues?.set(intensity, 2 * n + count);
      gathered.d.set(d, n);
      gathered.referenceOf.fill(r, n, n + count);
      for (let i = 0; i < count; i++) {
        const value = intensity[i]!;
        gathered.intensity[n + i] = lineIntensity(Number.isNaN(value) ? null : value);
      }
      indexStart[r] = lineIndices ? ints : -1;
      if (lineIndices) {
        indices.push(Buffer.from(lineIndices));
        ints += 4 * count;
      }
      const { tags, cell } = JSON.parse(details) as VersionDetails;
      builder.add(id, version, name, source, details, tags, normalisedGroupOf(cell) !== null && hasHkl(lineIndices, count) ? cell! : null, createdAt, count);
      valueStart[r] = 2 * n;
      digestOf.push({ name, version });
      n += count;
      r++;
    }
    valueStart[r] = 2 * n;
    const heads = builder.finish();
    this.statements.saveSnapshot.run({ stamp: this.stamp(), digest: libraryDigest(digestOf), names: heads.names, tagged: heads.tagged, partners: heads.partners });
    this.savePart('heads', Buffer.from(heads.bytes.buffer, heads.bytes.byteOffset, heads.bytes.byteLength));
    this.savePart('head_start', bytes(heads.start));
    this.savePart('value_start', bytes(valueStart));
    this.saveParts('line_values', lineValues ? [bytes(lineValues)] : given!.lineValues!());
    lineValues = null;
    this.savePart('line_indices', Buffer.concat(indices));
    indices.length = 0;
    this.savePart('index_start', bytes(indexStart));
    const packed = sortLineIndex(gathered);
    gathered = null;
    this.savePart('d', bytes(packed.d));
    this.savePart('reference_of', bytes(packed.referenceOf));
    this.savePart('intensity', bytes(packed.intensity));
  }

  /** One array of the snapshot, in parts of at most partBytes (schema.ts, step 4). */
  private savePart(array: SnapshotBlob, bytes: Buffer): void {
    this.saveParts(array, [bytes]);
  }

  /** One array of the snapshot given as pieces end to end (each let go of once written), in parts of at most partBytes. */
  private saveParts(array: SnapshotBlob, pieces: Buffer[]): void {
    let part = 0;
    for (let k = 0; k < pieces.length; k++) {
      const bytes = pieces[k]!;
      for (let at = 0; at < bytes.byteLength; at += this.partBytes) this.statements.savePart.run(array, part++, bytes.subarray(at, at + this.partBytes));
      pieces[k] = EMPTY;
    }
    if (part === 0) this.statements.savePart.run(array, 0, EMPTY);
  }

  /** One array of the snapshot, its parts joined in one buffer (in shared memory, for a batch's workers, when asked). */
  private readPart(array: SnapshotBlob, shared: boolean): Buffer {
    const size = this.statements.partBytes.get(array) ?? 0;
    const whole = shared ? Buffer.from(new SharedArrayBuffer(size)) : Buffer.allocUnsafe(size);
    let at = 0;
    for (const bytes of this.statements.parts.iterate(array)) {
      whole.set(bytes, at);
      at += bytes.byteLength;
    }
    return whole;
  }

  /**
   * A reference as a chemist names it: its name, else its formula as written ("LaB6", "Al2O3"; case
   * and spaces ignored). null when nothing fits; two references with that formula are the user's to tell apart.
   */
  findByNameOrFormula(text: string): StoredReference | null {
    const byName = this.get(text);
    if (byName) return byName;
    const compact = (f: string) => f.replace(/\s+/g, '').toLowerCase();
    const wanted = compact(text);
    const byFormula = this.list({ search: text.trim() }).filter((r) => compact(r.formula) === wanted);
    if (byFormula.length > 1) {
      throw new InputError(`${byFormula.length} references have the formula ${text.trim()} (${byFormula.map((r) => `"${r.name}"`).join(', ')}); give the name of the one you mean`);
    }
    return byFormula[0] ?? null;
  }

  /**
   * The current version of a reference, or a given version (readable even after it was replaced
   * or the reference deleted). null when there is no such reference or version.
   */
  get(name: string, version?: number): StoredReference | null {
    const key = name.trim();
    const row = version === undefined ? this.statements.current.get(key) : this.statements.versionByName.get(key, version);
    return row ? storedFromRow(row) : null;
  }

  /** Whether the name is in the library at all (deleted references included). */
  exists(name: string): boolean {
    return this.statements.entryByName.get(name.trim()) !== undefined;
  }

  /** A version by the reference's id, as recorded with an analysis. */
  getVersion(id: number, version: number): StoredReference | null {
    const row = this.statements.versionById.get(id, version);
    return row ? storedFromRow(row) : null;
  }

  /** Every version of a reference, oldest first (also for a deleted reference). */
  history(name: string): ReferenceVersionInfo[] {
    const entry = this.requireEntry(name);
    return this.statements.history.all(entry.id).map((row) => ({
      id: entry.id,
      name: row.name,
      version: row.version,
      createdAt: row.created_at,
      change: row.change,
      lineCount: row.line_count,
      current: row.version === entry.current_version && entry.deleted_at === null,
      deleted: entry.deleted_at !== null,
    }));
  }

  /** Delete a reference (recoverable: undelete or restore brings it back with its history). */
  remove(name: string): void {
    const entry = this.requireEntry(name);
    if (entry.deleted_at !== null) throw new InputError(`the reference "${entry.name}" is already deleted`);
    this.write(() => this.statements.markDeleted.run(new Date().toISOString(), entry.id));
  }

  /** Bring back a deleted reference as it was. */
  undelete(name: string): StoredReference {
    const entry = this.requireEntry(name);
    if (entry.deleted_at === null) throw new InputError(`the reference "${entry.name}" is not deleted`);
    this.write(() => this.statements.markDeleted.run(null, entry.id));
    return this.requireCurrent(name);
  }

  /** Make an old version current again, as a new version that copies it (the history stays linear). */
  restore(name: string, version: number): StoredReference {
    const old = this.get(name, version);
    if (!old) {
      const versions = this.history(name).map((v) => v.version);
      throw new InputError(`the reference "${name}" has no version ${version}; its versions are ${versions.join(', ')}`);
    }
    const { id: _id, version: _version, createdAt: _createdAt, ...content } = old;
    this.write(() => this.storeVersion({ ...content, lines: old.lines }, `restore of version ${version}`));
    return this.requireCurrent(name);
  }

  /** Current references in the reference file format (what `library export` writes). */
  exportReferences(): Reference[] {
    return this.all().map(toFileEntry);
  }

  exportJson(): string {
    return formatReferenceJson(this.exportReferences());
  }

  count(): number {
    return this.statements.count.get()!.n;
  }

  /** The library's own notes (e.g. whether the seed references were loaded). */
  getMeta(key: string): string | undefined {
    return readMeta(this.db, key);
  }

  setMeta(key: string, value: string): void {
    this.write(() => writeMeta(this.db, key, value));
  }

  /** Run several changes as one transaction (writes taken first, so two processes queue cleanly). */
  transaction<T>(work: () => T): T {
    return this.write(work);
  }

  close(): void {
    if (this.db.open) this.db.close();
  }

  /**
   * One write transaction: the write lock taken first (waiting for another writer up to the busy
   * timeout, saying so after a second), this process noted as the holder while it runs.
   */
  private write<T>(work: () => T): T {
    this.writes++;
    if (this.db.inTransaction) return this.db.transaction(work)(); // nested: a savepoint in the open transaction
    this.takeWriteLock();
    const noted = this.path !== ':memory:';
    if (noted) recordHolder(this.path);
    try {
      // Every change makes the snapshot old; an import makes a new one.
      this.statements.dropSnapshot.run();
      this.statements.dropParts.run();
      const result = this.db.transaction(work)();
      if (noted) forgetHolder(this.path); // before COMMIT releases the lock: never the next writer's note
      this.db.exec('COMMIT');
      return result;
    } catch (err) {
      if (noted) forgetHolder(this.path);
      if (this.db.inTransaction) this.db.exec('ROLLBACK');
      throw err;
    }
  }

  /** BEGIN IMMEDIATE, waiting for another writer up to lockWaitMs; then the user's to resolve (exit 2). */
  private takeWriteLock(): void {
    const quiet = Math.min(this.lockWaitMs, LOCK_NOTICE_AFTER_MS);
    try {
      if (this.tryBegin(quiet)) return;
      this.onLockWait?.(`${this.path}: ${describeHolder(this.path)} is writing to this library; waiting up to ${seconds(this.lockWaitMs)} for it to finish`);
      if (this.lockWaitMs > quiet && this.tryBegin(this.lockWaitMs - quiet)) return;
    } finally {
      this.db.pragma(`busy_timeout = ${this.lockWaitMs}`);
    }
    throw new InputError(
      `the library is still locked after waiting ${seconds(this.lockWaitMs)}: ${describeHolder(this.path)} is writing to it; nothing was changed, try again when it has finished (CRYSTALLOG_LOCK_WAIT_MS sets how long to wait)`,
      { file: this.path },
    );
  }

  /** true when the write lock was taken within waitMs; false when another connection kept it. */
  private tryBegin(waitMs: number): boolean {
    this.db.pragma(`busy_timeout = ${Math.max(0, Math.round(waitMs))}`);
    try {
      this.db.exec('BEGIN IMMEDIATE');
      return true;
    } catch (err) {
      if (String((err as { code?: unknown }).code).startsWith('SQLITE_BUSY')) return false;
      throw err;
    }
  }

  /** Add one checked reference as a new version when its content differs from the current one (its row told to `written`). */
  private storeVersion(ref: Reference, change: string, options: StoreOptions = {}): keyof ImportSummary {
    const s = this.statements;
    const packed = packedLinesOf(ref);
    const hash = contentHash(ref, packed);
    const { batch } = options;
    const entry = batch ? undefined : s.entryByName.get(ref.name);
    let entryId: number;
    let version: number;
    let outcome: keyof ImportSummary;
    if (!entry) {
      entryId = batch ? batch.addEntry(ref.name, ref.formula) : Number(s.insertEntry.run(ref.name, ref.formula).lastInsertRowid);
      version = 1;
      outcome = 'added';
    } else {
      if (entry.deleted_at === null && sameContent(s.currentHash.get(entry.id)?.content_hash, hash, ref)) return 'unchanged';
      entryId = entry.id;
      version = s.lastVersion.get(entry.id)!.last + 1;
      outcome = 'updated';
    }
    const details = JSON.stringify(detailsOf(ref));
    const createdAt = options.createdAt ?? new Date().toISOString();
    const row = [entryId, version, ref.name, ref.source, details, packed.count, packed.values, packed.indices, hash, change, createdAt] as const;
    if (batch) batch.addVersion(row, ref.tags);
    else s.insertVersion.run(...row);
    options.written?.([entryId, version, ref.name, ref.source, details, createdAt, packed.count, packed.values, packed.indices]);
    if (batch) return outcome;
    if (outcome === 'updated') {
      s.setCurrent.run(version, ref.name, ref.formula, entryId);
      s.clearTags.run(entryId);
    }
    for (const tag of ref.tags) s.insertTag.run(entryId, tag);
    return outcome;
  }

  private requireEntry(name: string): EntryRow {
    const entry = this.statements.entryByName.get(name.trim());
    if (!entry) throw new InputError(`there is no reference named "${name}" in the library`);
    return entry;
  }

  private requireCurrent(name: string): StoredReference {
    const entry = this.requireEntry(name);
    if (entry.deleted_at !== null) throw new InputError(`the reference "${entry.name}" is deleted; undelete or restore it first`);
    return this.get(name)!;
  }
}

const EMPTY = Buffer.alloc(0);

/**
 * The rows an import wrote, kept for the snapshot made at its end: their heads, and their packed line
 * values copied end to end into parts of partBytes rather than one buffer per row held to the end
 * (when the rows came in name order, the parts are the snapshot's line_values as they are).
 */
class WrittenRows {
  // One entry per row in each (no object per row): its VersionRow fields but the values, and where those start (bytes).
  private readonly ids: number[] = [];
  private readonly versions: number[] = [];
  private readonly names: string[] = [];
  private readonly sources: string[] = [];
  private readonly details: string[] = [];
  private readonly createdAt: string[] = [];
  private readonly counts: number[] = [];
  private readonly starts: number[] = [];
  private readonly indices: (Buffer | null)[] = [];
  private byId: Map<number, number> | null = null;
  private parts: Buffer[] = [];
  private bytes = 0;
  /** Lines of all rows. */
  lines = 0;

  constructor(private readonly partBytes: number) {}

  add([id, version, name, source, details, createdAt, count, values, indices]: VersionRow): void {
    this.ids.push(id);
    this.versions.push(version);
    this.names.push(name);
    this.sources.push(source);
    this.details.push(details);
    this.createdAt.push(createdAt);
    this.counts.push(count);
    this.starts.push(this.bytes);
    this.indices.push(indices);
    this.byId = null;
    this.lines += count;
    for (let from = 0; from < values.byteLength; ) {
      const at = this.bytes % this.partBytes;
      if (at === 0) this.parts.push(Buffer.allocUnsafe(this.partBytes));
      const n = Math.min(values.byteLength - from, this.partBytes - at);
      this.parts[this.parts.length - 1]!.set(values.subarray(from, from + n), at);
      from += n;
      this.bytes += n;
    }
  }

  has(id: number): boolean {
    return this.positions().has(id);
  }

  /** Whether the rows were written in this order of ids, and only they. */
  inOrder(ids: readonly number[]): boolean {
    return ids.length === this.ids.length && ids.every((id, k) => this.ids[k] === id);
  }

  /** The rows of these ids in this order, their values where they lie (copied when they span two parts). */
  *rows(ids: readonly number[]): Generator<VersionRow> {
    const positions = this.inOrder(ids) ? null : this.positions();
    for (let r = 0; r < ids.length; r++) {
      const k = positions ? positions.get(ids[r]!)! : r;
      const start = this.starts[k]!;
      const count = this.counts[k]!;
      yield [this.ids[k]!, this.versions[k]!, this.names[k]!, this.sources[k]!, this.details[k]!, this.createdAt[k]!, count, this.slice(start, start + 16 * count), this.indices[k]!];
    }
  }

  /** The values parts end to end (the last one cut to its bytes), handed over: kept no longer here. */
  takeParts(): Buffer[] {
    const parts = this.parts;
    this.parts = [];
    if (parts.length > 0) parts[parts.length - 1] = parts[parts.length - 1]!.subarray(0, this.bytes - (parts.length - 1) * this.partBytes);
    return parts;
  }

  clear(): void {
    for (const list of [this.ids, this.versions, this.names, this.sources, this.details, this.createdAt, this.counts, this.starts, this.indices]) list.length = 0;
    this.byId = null;
    this.parts = [];
  }

  /** Row position by id. */
  private positions(): Map<number, number> {
    if (!this.byId) this.byId = new Map(this.ids.map((id, k) => [id, k]));
    return this.byId;
  }

  private slice(from: number, to: number): Buffer {
    const part = Math.floor(from / this.partBytes);
    const at = from - part * this.partBytes;
    if (to - from <= this.partBytes - at) return this.parts[part]!.subarray(at, at + to - from);
    const out = Buffer.allocUnsafe(to - from);
    for (let k = from; k < to; ) {
      const p = Math.floor(k / this.partBytes);
      const i = k - p * this.partBytes;
      const n = Math.min(to - k, this.partBytes - i);
      out.set(this.parts[p]!.subarray(i, i + n), k - from);
      k += n;
    }
    return out;
  }
}

/** How storeVersion stores a version. */
interface StoreOptions {
  /** Its created_at (default now). */
  createdAt?: string;
  /** The library held no entry when the import began: new rows go in by the batch, no name is looked up. */
  batch?: NewRows | undefined;
  /** Told the row as stored. */
  written?: (row: VersionRow) => void;
}

/** References written per multi-row INSERT into an empty library. */
const BATCH = 100;

/**
 * The rows of new references written BATCH at a time, one multi-row INSERT per table, rather than
 * three statements per reference (each a call into SQLite with its own binding and step): an
 * import of 100 000 references into an empty library spends about half as long in its INSERTs.
 * Entry ids are given here, from 1 (the library holds no entry).
 */
class NewRows {
  private entries: unknown[] = [];
  private versions: unknown[] = [];
  private tags: unknown[] = [];
  private lastId = 0;
  private readonly statements = new Map<string, Statement>();

  constructor(private readonly db: Db) {}

  addEntry(name: string, formula: string): number {
    this.entries.push(++this.lastId, name, formula);
    return this.lastId;
  }

  addVersion(row: readonly unknown[], tags: readonly string[]): void {
    this.versions.push(...row);
    for (const tag of tags) this.tags.push(this.lastId, tag);
    if (this.versions.length === BATCH * row.length) this.flush();
  }

  /** Write what was gathered: entries first, which the versions and tags refer to. */
  flush(): void {
    this.write(`INSERT INTO reference_entry (id, name, current_version, formula) VALUES`, '(?, ?, 1, ?)', 3, this.entries);
    this.write(
      `INSERT INTO reference_version (entry_id, version, name, source, details, line_count, line_values, line_indices, content_hash, change, created_at) VALUES`,
      '(?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)',
      11,
      this.versions,
    );
    this.write(`INSERT OR IGNORE INTO reference_tag (entry_id, tag) VALUES`, '(?, ?)', 2, this.tags);
    this.entries = [];
    this.versions = [];
    this.tags = [];
  }

  /** The values as rows of `width`, up to BATCH rows per statement. */
  private write(insert: string, one: string, width: number, values: unknown[]): void {
    for (let at = 0; at < values.length; at += BATCH * width) {
      const part = at === 0 && values.length <= BATCH * width ? values : values.slice(at, at + BATCH * width);
      const rows = part.length / width;
      const sql = `${insert} ${Array(rows).fill(one).join(', ')}`;
      let statement = this.statements.get(sql);
      if (!statement) this.statements.set(sql, (statement = this.db.prepare(sql)));
      statement.run(part);
    }
  }
}

/** The snapshot's arrays (line_index_part, schema.ts steps 3 to 5), each stored in parts of at most 8 MB. */
const SNAPSHOT_BLOBS = ['heads', 'head_start', 'line_values', 'line_indices', 'index_start', 'value_start', 'd', 'reference_of', 'intensity'] as const;
const SNAPSHOT_PART_BYTES = 8 * 1024 * 1024;
type SnapshotBlob = (typeof SNAPSHOT_BLOBS)[number];

interface EntryRow {
  id: number;
  name: string;
  current_version: number;
  deleted_at: string | null;
}

function prepareStatements(db: Db) {
  const rows = (sql: string) => (db.prepare(sql) as Statement<unknown[], VersionRow>).raw();
  return {
    all: rows(`SELECT ${VERSION_COLUMNS} ${CURRENT} ORDER BY e.name`),
    listBySearch: rows(`SELECT ${VERSION_COLUMNS} ${CURRENT} AND (e.name LIKE @pattern ESCAPE '\\' OR e.formula LIKE @pattern ESCAPE '\\') ORDER BY e.name`),
    listByTag: rows(`SELECT ${VERSION_COLUMNS} FROM reference_tag t JOIN reference_entry e ON e.id = t.entry_id
      JOIN reference_version v ON v.entry_id = e.id AND v.version = e.current_version
      WHERE t.tag = @tag AND e.deleted_at IS NULL AND (@pattern IS NULL OR e.name LIKE @pattern ESCAPE '\\' OR e.formula LIKE @pattern ESCAPE '\\')
      ORDER BY e.name`),
    current: rows(`SELECT ${VERSION_COLUMNS} ${CURRENT} AND e.name = ?`),
    versionByName: rows(`SELECT ${VERSION_COLUMNS} FROM reference_entry e JOIN reference_version v ON v.entry_id = e.id
      WHERE e.name = ? AND v.version = ?`),
    versionById: rows(`SELECT ${VERSION_COLUMNS} FROM reference_version v WHERE v.entry_id = ? AND v.version = ?`),
    history: db.prepare(`SELECT version, name, change, line_count, created_at FROM reference_version WHERE entry_id = ? ORDER BY version`) as Statement<
      [number],
      { version: number; name: string; change: string; line_count: number; created_at: string }
    >,
    count: db.prepare(`SELECT count(*) AS n FROM reference_entry WHERE deleted_at IS NULL`) as Statement<[], { n: number }>,
    entryCount: db.prepare(`SELECT count(*) AS n FROM reference_entry`) as Statement<[], { n: number }>,
    entryByName: db.prepare(`SELECT id, name, current_version, deleted_at FROM reference_entry WHERE name = ?`) as Statement<[string], EntryRow>,
    currentHash: db.prepare(`SELECT v.content_hash FROM reference_entry e JOIN reference_version v
      ON v.entry_id = e.id AND v.version = e.current_version WHERE e.id = ?`) as Statement<[number], { content_hash: string }>,
    lastVersion: db.prepare(`SELECT max(version) AS last FROM reference_version WHERE entry_id = ?`) as Statement<[number], { last: number }>,
    insertEntry: db.prepare(`INSERT INTO reference_entry (name, current_version, formula) VALUES (?, 1, ?)`),
    insertVersion: db.prepare(`INSERT INTO reference_version (entry_id, version, name, source, details, line_count, line_values,
      line_indices, content_hash, change, created_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)`),
    setCurrent: db.prepare(`UPDATE reference_entry SET current_version = ?, name = ?, formula = ?, deleted_at = NULL WHERE id = ?`),
    markDeleted: db.prepare(`UPDATE reference_entry SET deleted_at = ? WHERE id = ?`),
    clearTags: db.prepare(`DELETE FROM reference_tag WHERE entry_id = ?`),
    insertTag: db.prepare(`INSERT OR IGNORE INTO reference_tag (entry_id, tag) VALUES (?, ?)`),
    packedLines: db.prepare(`SELECT line_count, line_values, line_indices FROM reference_version WHERE entry_id = ? AND version = ?`) as Statement<
      [number, number],
      { line_count: number; line_values: Buffer; line_indices: Buffer | null }
    >,
    snapshotHead: db.prepare(`SELECT stamp, digest FROM line_index WHERE id = 1`) as Statement<[], { stamp: string; digest: string }>,
    snapshotFacts: db.prepare(`SELECT names, tagged, partners FROM line_index WHERE id = 1`) as Statement<[], { names: string; tagged: string; partners: string }>,
    parts: (db.prepare(`SELECT bytes FROM line_index_part WHERE array = ? ORDER BY part`) as Statement<[string], Buffer>).pluck(),
    partBytes: (db.prepare(`SELECT sum(length(bytes)) FROM line_index_part WHERE array = ?`) as Statement<[string], number | null>).pluck(),
    currentIdsByName: (db.prepare(`SELECT e.id FROM reference_entry e WHERE e.deleted_at IS NULL ORDER BY e.name`) as Statement<[], number>).pluck(),
    currentTotals: db.prepare(`SELECT count(*) AS "references", coalesce(sum(v.line_count), 0) AS lines ${CURRENT}`) as Statement<[], { references: number; lines: number }>,
    stamp: db.prepare(`SELECT count(*) AS n, total(current_version) AS versions, (SELECT max(rowid) FROM reference_version) AS last
      FROM reference_entry WHERE deleted_at IS NULL`) as Statement<[], { n: number; versions: number; last: number | null }>,
    saveSnapshot: db.prepare(`INSERT OR REPLACE INTO line_index (id, stamp, digest, names, tagged, partners) VALUES (1, @stamp, @digest, @names, @tagged, @partners)`),
    savePart: db.prepare(`INSERT OR REPLACE INTO line_index_part (array, part, bytes) VALUES (?, ?, ?)`),
    dropSnapshot: db.prepare(`DELETE FROM line_index`),
    dropParts: db.prepare(`DELETE FROM line_index_part`),
  };
}

function seconds(ms: number): string {
  return `${Number((ms / 1000).toFixed(1))} s`;
}

/**
 * What a version's content_hash is over: its fields as JSON, then its packed line bytes (so no line
 * objects are turned to text). Versions stored before this form carry a bare hash of
 * canonicalContent (validate.ts); sameContent still compares those.
 */
const PACKED_HASH = 'packed:';

/** Reused by contentHash: the bytes hashed are written here rather than joined in new buffers per reference. */
let hashScratch = Buffer.allocUnsafe(64 * 1024);

function contentHash(ref: Reference, packed: PackedLines): string {
  const fields = JSON.stringify([ref.name, ref.formula, ref.tags, ref.source, ref.notes ?? null, ref.rir ?? null, ref.cell ?? null, ref.intensityBasis ?? null]);
  const indices = packed.indices;
  const most = 3 * fields.length + 1 + packed.values.byteLength + (indices ? 1 + indices.byteLength : 0); // UTF-8 takes at most 3 bytes per UTF-16 unit
  if (most > hashScratch.byteLength) hashScratch = Buffer.allocUnsafe(2 * most);
  let at = hashScratch.write(fields, 0);
  hashScratch[at++] = 0;
  hashScratch.set(packed.values, at);
  at += packed.values.byteLength;
  if (indices) {
    hashScratch[at++] = 0;
    hashScratch.set(indices, at);
    at += indices.byteLength;
  }
  return PACKED_HASH + hash('sha256', hashScratch.subarray(0, at)); // one-shot: far cheaper than createHash per reference
}

/** Whether a stored content_hash (of either form) is that of this reference. */
function sameContent(stored: string | undefined, hash: string, ref: Reference): boolean {
  if (stored === undefined) return false;
  if (stored.startsWith(PACKED_HASH)) return stored === hash;
  return stored === createHash('sha256').update(canonicalContent(ref)).digest('hex');
}



/**
 * A stored reference from its row. Its `lines` are decoded from the packed arrays on first use,
 * so loading many references for a screen that reads only their typed arrays stays fast.
 */
function storedFromRow([id, version, name, source, detailsJson, createdAt, count, values, indices]: VersionRow): StoredReference {
  return storedReference(id, version, name, source, JSON.parse(detailsJson) as VersionDetails, createdAt, { count, values, indices });
}

/**
 * d (Å) and relative intensity (NaN = unknown) of a reference's lines as typed arrays; views on the
 * stored bytes for references loaded from a library (no copy, no per-line objects).
 */
export function lineArrays(ref: Reference): { d: Float64Array; intensity: Float64Array } {
  const packed = packedLinesOf(ref);
  return unpackValues(packed.values, packed.count);
}


/** Gather every line of the references from their packed arrays (no line objects) and sort by d. */
function packedIndexOf(references: readonly StoredReference[]): PackedLineIndex {
  let total = 0;
  const arrays = references.map((ref) => {
    const a = lineArrays(ref);
    total += a.d.length;
    return a;
  });
  const gathered: PackedLineIndex = { d: new Float64Array(total), referenceOf: new Int32Array(total), intensity: new Float32Array(total) };
  let n = 0;
  arrays.forEach(({ d, intensity }, r) => {
    gathered.d.set(d, n);
    gathered.referenceOf.fill(r, n, n + d.length);
    for (let i = 0; i < d.length; i++) {
      const value = intensity[i]!;
      gathered.intensity[n + i] = lineIntensity(Number.isNaN(value) ? null : value);
    }
    n += d.length;
  });
  return sortLineIndex(gathered);
}

/** A typed array over stored bytes; copied only when SQLite handed back a misaligned buffer. */
function typedView<T extends Float64Array | Int32Array | Float32Array>(
  Kind: { new (buffer: ArrayBufferLike, byteOffset: number, length: number): T; BYTES_PER_ELEMENT: number },
  bytes: Buffer,
): T {
  const length = bytes.byteLength / Kind.BYTES_PER_ELEMENT;
  if (bytes.byteOffset % Kind.BYTES_PER_ELEMENT === 0) return new Kind(bytes.buffer, bytes.byteOffset, length);
  const copy = new Uint8Array(bytes.byteLength);
  copy.set(bytes);
  return new Kind(copy.buffer, 0, length);
}
