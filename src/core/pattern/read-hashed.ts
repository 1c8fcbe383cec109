import type { Pattern } from '../model/pattern.js';
import { readColumnText } from './readers/columns.js';
import { decodeText } from './readers/decode.js';
import { finishData, type RawPattern } from './readers/finish.js';
import { looksLikeCif, readPowderCif } from './readers/pdcif.js';

/**
 * Read a powder pattern from file bytes whose SHA-256 the caller has already taken (Node's native hash):
 * column text (XY, CSV with or without header) or powder CIF, told apart by content (a CIF has a data_
 * block; a .cif name alone does not make a file CIF). The bytes are not changed. Kept apart from read.ts
 * so that a command reading one file does not load the portable hash it does not use.
 */
export function readHashedPatternBytes(bytes: Uint8Array, fileName: string, sha256: string): Pattern {
  const text = decodeText(bytes, fileName);
  const raw: RawPattern = looksLikeCif(text) || (hasCifExtension(fileName) && startsLikeCif(text))
    ? readPowderCif(text, fileName)
    : readColumnText(text, fileName);
  const data = finishData(raw, fileName);
  return {
    x: data.x,
    y: data.y,
    sigma: data.sigma,
    wavelength: raw.wavelength,
    source: { file: fileName, sha256, byteLength: bytes.byteLength, format: raw.format },
    meta: raw.meta,
    readerNotes: data.notes,
    dataEndLine: raw.lastLine,
  };
}

/** The first line that is neither blank nor a # comment starts with data_, loop_ or a _tag. */
function startsLikeCif(text: string): boolean {
  for (const line of text.slice(0, 20000).split('\n')) {
    const content = line.trim();
    if (content === '' || content.startsWith('#')) continue;
    return /^(data_|loop_|_)/i.test(content);
  }
  return false;
}

function hasCifExtension(fileName: string): boolean {
  return /\.(cif|pdcif)$/i.test(fileName);
}
