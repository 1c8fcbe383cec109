import { createHash } from 'node:crypto';
import type { Statement } from 'better-sqlite3';
import { InputError } from '../core/errors.js';
import { CREATE_META_TABLE, openDatabase, schemaVersion, type Db, type Migration } from './library/sqlite.js';

/**
 * A project: one SQLite file holding its samples (the raw files' original bytes, checksummed),
 * its settings and its analysis results, each save a transaction, so work is kept as it goes.
 */

/** Which reference version an analysis used (so a later edit of the library does not rewrite history). */
export interface ReferenceVersionRef {
  id: number;
  version: number;
  name: string;
}

export interface NewSample {
  fileName: string;
  bytes: Uint8Array;
  label?: string | null;
  /** Workup variant: as made, ground, washed, annealed... */
  variant?: string | null;
  exposureHours?: number | null;
  /** Annealing, drying or measuring temperature in °C, for temperature series. */
  temperatureC?: number | null;
  notes?: string | null;
}

export interface SampleRecord {
  id: number;
  fileName: string;
  /** SHA-256 of the original bytes, hex. */
  sha256: string;
  byteLength: number;
  label: string | null;
  variant: string | null;
  exposureHours: number | null;
  temperatureC: number | null;
  notes: string | null;
  addedAt: string;
}

export type SampleChanges = Partial<Pick<SampleRecord, 'label' | 'variant' | 'exposureHours' | 'temperatureC' | 'notes'>>;

export interface SavedResult<T = unknown> {
  id: number;
  sampleId: number;
  savedAt: string;
  referencesUsed: ReferenceVersionRef[];
  result: T;
}

const PROJECT_KIND = 'project';

export const PROJECT_MIGRATIONS: readonly Migration[] = [
  // 1: samples with their raw bytes, one settings document, results kept per save.
  (db) => {
    db.exec(`
      ${CREATE_META_TABLE};
      CREATE TABLE sample (
        id INTEGER PRIMARY KEY,
        file_name TEXT NOT NULL CHECK (length(file_name) > 0),
        sha256 TEXT NOT NULL CHECK (length(sha256) = 64),
        byte_length INTEGER NOT NULL,
        bytes BLOB NOT NULL,
        label TEXT,
        variant TEXT,
        exposure_hours REAL CHECK (exposure_hours IS NULL OR exposure_hours >= 0),
        notes TEXT,
        added_at TEXT NOT NULL
      ) STRICT;
      CREATE INDEX sample_by_sha256 ON sample (sha256);
      CREATE TABLE settings (
        id INTEGER PRIMARY KEY CHECK (id = 1),
        json TEXT NOT NULL,
        updated_at TEXT NOT NULL
      ) STRICT;
      CREATE TABLE result (
        id INTEGER PRIMARY KEY,
        sample_id INTEGER NOT NULL REFERENCES sample (id) ON DELETE CASCADE,
        json TEXT NOT NULL,
        references_used TEXT NOT NULL,
        saved_at TEXT NOT NULL
      ) STRICT;
      CREATE INDEX result_by_sample ON result (sample_id, id);
    `);
  },
  // 2: the curves drawn with a result (background and fitted model, float32), kept beside it so that
  // opening a sample shows what the analysis found without running the peak search again.
  (db) => {
    db.exec(`ALTER TABLE result ADD COLUMN curves BLOB`);
  },
  // 3: a temperature per sample (annealing, drying...), the ordering of a temperature series.
  (db) => {
    db.exec(`ALTER TABLE sample ADD COLUMN temperature_c REAL CHECK (temperature_c IS NULL OR temperature_c >= -273.15)`);
  },
];

/** The curves an analysis drew: background and fitted model, one value per pattern point. */
export interface ResultCurves {
  background: Float32Array;
  model: Float32Array;
}

interface SampleRow {
  id: number;
  file_name: string;
  sha256: string;
  byte_length: number;
  label: string | null;
  variant: string | null;
  exposure_hours: number | null;
  temperature_c: number | null;
  notes: string | null;
  added_at: string;
}

interface ResultRow {
  id: number;
  sample_id: number;
  json: string;
  references_used: string;
  saved_at: string;
}

/** The curves blob is read only when a sample is opened, not with every list of results. */
const RESULT_COLUMNS = 'id, sample_id, json, references_used, saved_at';
const SAMPLE_COLUMNS = 'id, file_name, sha256, byte_length, label, variant, exposure_hours, temperature_c, notes, added_at';

export class ProjectStore {
  private readonly statements: ReturnType<typeof prepareStatements>;

  private constructor(
    private readonly db: Db,
    readonly path: string,
  ) {
    this.statements = prepareStatements(db);
  }

  static open(path: string, options: { busyTimeoutMs?: number } = {}): ProjectStore {
    return new ProjectStore(openDatabase(path, { kind: PROJECT_KIND, migrations: PROJECT_MIGRATIONS, ...options }), path);
  }

  get schemaVersion(): number {
    return schemaVersion(this.db);
  }

  /** Keep a raw file as it came (bytes untouched, SHA-256 recorded) with its label, variant and exposure. */
  addSample(sample: NewSample): SampleRecord {
    const fileName = sample.fileName?.trim();
    if (!fileName) throw new InputError('a sample needs the name of its file');
    if (!(sample.bytes instanceof Uint8Array)) throw new InputError(`the sample ${fileName} has no file content`);
    checkExposure(sample.exposureHours, fileName);
    checkTemperature(sample.temperatureC, fileName);
    const id = this.write(() =>
      Number(
        this.statements.insertSample.run({
          file_name: fileName,
          sha256: sha256(sample.bytes),
          byte_length: sample.bytes.byteLength,
          bytes: Buffer.from(sample.bytes.buffer, sample.bytes.byteOffset, sample.bytes.byteLength),
          label: sample.label ?? null,
          variant: sample.variant ?? null,
          exposure_hours: sample.exposureHours ?? null,
          temperature_c: sample.temperatureC ?? null,
          notes: sample.notes ?? null,
          added_at: new Date().toISOString(),
        }).lastInsertRowid,
      ),
    );
    return this.requireSample(id);
  }

  listSamples(): SampleRecord[] {
    return this.statements.listSamples.all().map(sampleFromRow);
  }

  getSample(id: number): SampleRecord | null {
    const row = this.statements.sample.get(id);
    return row ? sampleFromRow(row) : null;
  }

  /** Samples whose raw bytes have this checksum (to notice a file added twice). */
  findSamplesBySha256(hash: string): SampleRecord[] {
    return this.statements.samplesBySha256.all(hash.toLowerCase()).map(sampleFromRow);
  }

  /** The original bytes of a sample's file, checked against the recorded SHA-256. */
  getSampleBytes(id: number): Uint8Array {
    const row = this.statements.sampleBytes.get(id);
    if (!row) throw new InputError(`there is no sample ${id} in this project`, { file: this.path });
    if (sha256(row.bytes) !== row.sha256) {
      throw new Error(`the stored bytes of sample ${id} no longer match their SHA-256; the project file is damaged`);
    }
    return new Uint8Array(row.bytes.buffer, row.bytes.byteOffset, row.bytes.byteLength);
  }

  updateSample(id: number, changes: SampleChanges): SampleRecord {
    const current = this.requireSample(id);
    checkExposure(changes.exposureHours, current.fileName);
    checkTemperature(changes.temperatureC, current.fileName);
    const next = { ...current, ...changes };
    this.write(() =>
      this.statements.updateSample.run({
        id,
        label: next.label ?? null,
        variant: next.variant ?? null,
        exposure_hours: next.exposureHours ?? null,
        temperature_c: next.temperatureC ?? null,
        notes: next.notes ?? null,
      }),
    );
    return this.requireSample(id);
  }

  /** Remove a sample with its results. */
  removeSample(id: number): void {
    this.requireSample(id);
    this.write(() => this.statements.deleteSample.run(id));
  }

  /**
   * Save an analysis result (JSON; typed arrays become lists) with the reference versions it used and,
   * when given, the curves it drew.
   */
  saveResult(sampleId: number, result: unknown, referencesUsed: readonly ReferenceVersionRef[] = [], curves: ResultCurves | null = null): SavedResult {
    this.requireSample(sampleId);
    const json = JSON.stringify(result, typedArraysAsLists);
    if (json === undefined) throw new InputError('an analysis result must be a JSON value');
    const refs = referencesUsed.map(({ id, version, name }) => ({ id, version, name }));
    const savedAt = new Date().toISOString();
    const id = this.write(() =>
      Number(this.statements.insertResult.run(sampleId, json, JSON.stringify(refs), savedAt, curves ? packCurves(curves) : null).lastInsertRowid),
    );
    return { id, sampleId, savedAt, referencesUsed: refs, result: JSON.parse(json) as unknown };
  }

  /** The last saved result of a sample, or null. */
  latestResult<T = unknown>(sampleId: number): SavedResult<T> | null {
    const row = this.statements.latestResult.get(sampleId);
    return row ? resultFromRow<T>(row) : null;
  }

  /** The curves kept with the last saved result of a sample, or null (none kept, or saved before curves were kept). */
  latestCurves(sampleId: number): ResultCurves | null {
    const row = this.statements.latestCurves.get(sampleId);
    return row?.curves ? unpackCurves(row.curves) : null;
  }

  /** Every saved result of a sample, oldest first. */
  resultHistory<T = unknown>(sampleId: number): SavedResult<T>[] {
    return this.statements.resultHistory.all(sampleId).map((row) => resultFromRow<T>(row));
  }

  getSettings<T extends Record<string, unknown> = Record<string, unknown>>(): T {
    const row = this.statements.settings.get();
    return (row ? JSON.parse(row.json) : {}) as T;
  }

  setSettings(settings: Record<string, unknown>): void {
    if (typeof settings !== 'object' || settings === null || Array.isArray(settings)) {
      throw new InputError('project settings must be an object of named values');
    }
    const json = JSON.stringify(settings, typedArraysAsLists);
    this.write(() => this.statements.saveSettings.run(json, new Date().toISOString()));
  }

  close(): void {
    if (this.db.open) this.db.close();
  }

  /** Several writes as one transaction: all of them are kept, or none (a sample and its first result). */
  together<T>(work: () => T): T {
    return this.write(work);
  }

  private write<T>(work: () => T): T {
    return this.db.transaction(work).immediate();
  }

  private requireSample(id: number): SampleRecord {
    const sample = this.getSample(id);
    if (!sample) throw new InputError(`there is no sample ${id} in this project`, { file: this.path });
    return sample;
  }
}

function prepareStatements(db: Db) {
  return {
    insertSample: db.prepare(`INSERT INTO sample (file_name, sha256, byte_length, bytes, label, variant, exposure_hours, temperature_c, notes, added_at)
      VALUES (@file_name, @sha256, @byte_length, @bytes, @label, @variant, @exposure_hours, @temperature_c, @notes, @added_at)`),
    listSamples: db.prepare(`SELECT ${SAMPLE_COLUMNS} FROM sample ORDER BY id`) as Statement<[], SampleRow>,
    sample: db.prepare(`SELECT ${SAMPLE_COLUMNS} FROM sample WHERE id = ?`) as Statement<[number], SampleRow>,
    samplesBySha256: db.prepare(`SELECT ${SAMPLE_COLUMNS} FROM sample WHERE sha256 = ? ORDER BY id`) as Statement<[string], SampleRow>,
    sampleBytes: db.prepare(`SELECT sha256, bytes FROM sample WHERE id = ?`) as Statement<[number], { sha256: string; bytes: Buffer }>,
    updateSample: db.prepare(`UPDATE sample SET label = @label, variant = @variant, exposure_hours = @exposure_hours, temperature_c = @temperature_c, notes = @notes WHERE id = @id`),
    deleteSample: db.prepare(`DELETE FROM sample WHERE id = ?`),
    insertResult: db.prepare(`INSERT INTO result (sample_id, json, references_used, saved_at, curves) VALUES (?, ?, ?, ?, ?)`),
    latestCurves: db.prepare(`SELECT curves FROM result WHERE sample_id = ? ORDER BY id DESC LIMIT 1`) as Statement<[number], { curves: Buffer | null }>,
    latestResult: db.prepare(`SELECT ${RESULT_COLUMNS} FROM result WHERE sample_id = ? ORDER BY id DESC LIMIT 1`) as Statement<[number], ResultRow>,
    resultHistory: db.prepare(`SELECT ${RESULT_COLUMNS} FROM result WHERE sample_id = ? ORDER BY id`) as Statement<[number], ResultRow>,
    settings: db.prepare(`SELECT json FROM settings WHERE id = 1`) as Statement<[], { json: string }>,
    saveSettings: db.prepare(`INSERT INTO settings (id, json, updated_at) VALUES (1, ?, ?)
      ON CONFLICT (id) DO UPDATE SET json = excluded.json, updated_at = excluded.updated_at`),
  };
}

function sampleFromRow(row: SampleRow): SampleRecord {
  return {
    id: row.id,
    fileName: row.file_name,
    sha256: row.sha256,
    byteLength: row.byte_length,
    label: row.label,
    variant: row.variant,
    exposureHours: row.exposure_hours,
    temperatureC: row.temperature_c,
    notes: row.notes,
    addedAt: row.added_at,
  };
}

function resultFromRow<T>(row: ResultRow): SavedResult<T> {
  return {
    id: row.id,
    sampleId: row.sample_id,
    savedAt: row.saved_at,
    referencesUsed: JSON.parse(row.references_used) as ReferenceVersionRef[],
    result: JSON.parse(row.json) as T,
  };
}

/** Both curves in one blob: the point count (uint32), then background and model as float32, little-endian. */
function packCurves(curves: ResultCurves): Buffer {
  const n = curves.background.length;
  if (curves.model.length !== n) throw new Error('background and model curves differ in length');
  const out = Buffer.alloc(4 + 8 * n);
  out.writeUInt32LE(n, 0);
  for (let i = 0; i < n; i++) {
    out.writeFloatLE(curves.background[i]!, 4 + 4 * i);
    out.writeFloatLE(curves.model[i]!, 4 + 4 * (n + i));
  }
  return out;
}

function unpackCurves(blob: Buffer): ResultCurves | null {
  if (blob.length < 4) return null;
  const n = blob.readUInt32LE(0);
  if (blob.length !== 4 + 8 * n) return null;
  const background = new Float32Array(n);
  const model = new Float32Array(n);
  for (let i = 0; i < n; i++) {
    background[i] = blob.readFloatLE(4 + 4 * i);
    model[i] = blob.readFloatLE(4 + 4 * (n + i));
  }
  return { background, model };
}

function sha256(bytes: Uint8Array): string {
  return createHash('sha256').update(bytes).digest('hex');
}

function checkExposure(hours: number | null | undefined, fileName: string): void {
  if (hours === undefined || hours === null) return;
  if (!Number.isFinite(hours) || hours < 0) {
    throw new InputError(`the exposure time of ${fileName} must be zero or more hours (got ${hours})`);
  }
}

function checkTemperature(celsius: number | null | undefined, fileName: string): void {
  if (celsius === undefined || celsius === null) return;
  if (!Number.isFinite(celsius) || celsius < -273.15) {
    throw new InputError(`the temperature of ${fileName} must be a number of °C at or above absolute zero (−273.15 °C; got ${celsius})`);
  }
}

function typedArraysAsLists(_key: string, value: unknown): unknown {
  return ArrayBuffer.isView(value) && !(value instanceof DataView) ? Array.from(value as Float64Array) : value;
}
