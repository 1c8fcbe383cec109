import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { InputError } from '../core/errors.js';
import type { Pattern } from '../core/model/pattern.js';
import { readPatternBytes } from '../core/pattern/read.js';

/** Read a pattern file from disk (once, read-only). A missing or unreadable file is the user's error. */
export function readPatternFile(path: string): Pattern {
  let bytes: Uint8Array;
  try {
    bytes = readFileSync(path);
  } catch (err) {
    const code = (err as NodeJS.ErrnoException).code;
    const reason =
      code === 'ENOENT' ? 'no such file' : code === 'EISDIR' ? 'this is a folder, not a file' : code === 'EACCES' ? 'no permission to read it' : `cannot read it (${code ?? 'unknown error'})`;
    throw new InputError(`${reason}; check the path`, { file: path });
  }
  // Node's native SHA-256 is about ten times faster than the portable one in the core.
  return readPatternBytes(bytes, path, { sha256: createHash('sha256').update(bytes).digest('hex') });
}
