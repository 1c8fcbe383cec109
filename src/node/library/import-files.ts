import { closeSync, openSync, readFileSync, readSync } from 'node:fs';
import { extname } from 'node:path';
import { InputError } from '../../core/errors.js';
import type { Wavelength } from '../../core/model/wavelengths.js';
import { parseReferenceCsv, type CsvReferenceMeta } from '../../core/library/csv-format.js';
import { referencesFromCif } from '../../core/library/from-crystal.js';
import type { SkippedCifBlock } from '../../core/crystal/structure.js';
import { parseReferenceJson, readReferenceJson } from '../../core/library/json-format.js';
import type { Reference } from '../../core/model/reference.js';

export interface ReferenceFileOptions {
  /** CIF: radiation of the computed intensities (default Cu Kα1). CSV: wavelength of a 2θ column. */
  wavelength?: Wavelength;
  /** Details a CSV peak list cannot hold in its columns. */
  csv?: CsvReferenceMeta;
}

export type ReferenceFileKind = 'json' | 'csv' | 'cif';

/** The kind of a reference file, by its extension, else by its first characters. */
export function referenceFileKind(text: string, fileName: string): ReferenceFileKind {
  const ext = extname(fileName).toLowerCase();
  if (ext === '.json') return 'json';
  if (ext === '.cif') return 'cif';
  if (ext === '.csv' || ext === '.txt' || ext === '.tsv') return 'csv';
  const start = text.replace(/^\uFEFF/, '').trimStart();
  if (start.startsWith('{') || start.startsWith('[')) return 'json';
  if (/^(#.*\n\s*)*data_/m.test(start)) return 'cif';
  return 'csv';
}

/** The references of one file, and the parts of it that were not read as references (CIF blocks), with why. */
export interface ReferenceFileContents {
  references: Reference[];
  skipped: SkippedCifBlock[];
}

/** References in a file's text: the reference JSON format, a CSV peak list, or a structure CIF (every phase block). */
function parseReferenceFileContents(text: string, fileName: string, options: ReferenceFileOptions = {}): ReferenceFileContents {
  switch (referenceFileKind(text, fileName)) {
    case 'json':
      return { references: parseReferenceJson(text, fileName), skipped: [] };
    case 'cif':
      return referencesFromCif(text, fileName, options.wavelength ? { wavelength: options.wavelength } : {});
    case 'csv': {
      const meta: CsvReferenceMeta = { ...options.csv };
      if (options.wavelength && meta.wavelengthAngstrom === undefined) meta.wavelengthAngstrom = options.wavelength.lambda1;
      return { references: [parseReferenceCsv(text, fileName, meta)], skipped: [] };
    }
  }
}

export function parseReferenceFile(text: string, fileName: string, options: ReferenceFileOptions = {}): Reference[] {
  return parseReferenceFileContents(text, fileName, options).references;
}

export function readReferenceFileContents(path: string, options: ReferenceFileOptions = {}): ReferenceFileContents {
  let text: string;
  try {
    text = readFileSync(path, 'utf8');
  } catch (err) {
    throw unreadable(path, err);
  }
  return parseReferenceFileContents(text, path, options);
}

/** A file's references as they are read: a reference JSON file is streamed, a CSV or CIF (small) read whole. */
export interface StreamedReferenceFile {
  references: Iterable<Reference>;
  /** CIF blocks not read as references (known once the file is read). */
  skipped: SkippedCifBlock[];
}

/** Bytes read at a time from a large reference file. */
const CHUNK_BYTES = 4 << 20;

/**
 * The references of a reference file, for an import: a JSON file is read in chunks and its references
 * yielded one by one as they are checked (a 160 MB file never sits in memory whole); other kinds
 * are read as a whole.
 */
export function streamReferenceFile(path: string, options: ReferenceFileOptions = {}): StreamedReferenceFile {
  const chunks = fileChunks(path, 64 << 10);
  const first = chunks.next();
  chunks.return(undefined);
  const head = first.done ? '' : new TextDecoder().decode(first.value);
  if (referenceFileKind(head, path) !== 'json') return readReferenceFileContents(path, options);
  return { references: readReferenceJson(fileChunks(path, CHUNK_BYTES), path), skipped: [] };
}

/** A file's bytes, chunk by chunk (each a fresh buffer); an unreadable file is the user's InputError. */
function* fileChunks(path: string, size: number): Generator<Uint8Array> {
  let fd: number;
  try {
    fd = openSync(path, 'r');
  } catch (err) {
    throw unreadable(path, err);
  }
  try {
    for (;;) {
      const chunk = Buffer.allocUnsafe(size);
      let read: number;
      try {
        read = readSync(fd, chunk, 0, size, null);
      } catch (err) {
        throw unreadable(path, err);
      }
      if (read === 0) return;
      yield chunk.subarray(0, read);
    }
  } finally {
    closeSync(fd);
  }
}

function unreadable(path: string, err: unknown): InputError {
  const code = (err as { code?: string }).code;
  return new InputError(code === 'ENOENT' ? 'no such file' : `cannot read the file (${code ?? String(err)})`, { file: path });
}
