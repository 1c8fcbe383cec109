import { createHash } from 'node:crypto';
import { closeSync, constants, fstatSync, openSync, readSync } from 'node:fs';
import { InputError } from '../core/errors.js';
import { MAX_PATTERN_MB_SETTING, maxPatternBytes, tooLargeMessage } from '../core/model/file-limits.js';
import type { Pattern } from '../core/model/pattern.js';
import { readHashedPatternBytes } from '../core/pattern/read-hashed.js';


export interface ReadFileOptions {
  /** Refuse files larger than this, bytes (default: CRYSTALLOG_MAX_FILE_MB, else 200 MB; core/model/file-limits.ts). */
  maxBytes?: number;
}

/**
 * The bytes of a regular file, read once and read-only. A FIFO, a device or a socket is refused before
 * a byte is read (reading /dev/zero would never end), and so is a file over the size cap.
 */
function readRegularFile(path: string, options: ReadFileOptions = {}): Uint8Array {
  const maxBytes = options.maxBytes ?? maxPatternBytes(process.env[MAX_PATTERN_MB_SETTING]);
  let fd: number;
  try {
    // Non-blocking, so that opening a FIFO with no writer returns at once (and is then refused).
    fd = openSync(path, constants.O_RDONLY | constants.O_NONBLOCK);
  } catch (err) {
    throw new InputError(`${openFailure((err as NodeJS.ErrnoException).code)}; check the path`, { file: path });
  }
  try {
    const stat = fstatSync(fd);
    if (stat.isDirectory()) throw new InputError('this is a folder, not a file; check the path', { file: path });
    if (!stat.isFile()) throw new InputError('this is not a regular file (a pipe, a device or a socket); save the pattern to a file and give its path', { file: path });
    if (stat.size > maxBytes) {
      throw new InputError(tooLargeMessage(stat.size, maxBytes), { file: path });
    }
    const bytes = new Uint8Array(stat.size);
    let filled = 0;
    while (filled < bytes.length) {
      const got = readSync(fd, bytes, filled, bytes.length - filled, filled);
      if (got === 0) break;
      filled += got;
    }
    return filled === bytes.length ? bytes : bytes.subarray(0, filled);
  } finally {
    closeSync(fd);
  }
}

function openFailure(code: string | undefined): string {
  if (code === 'ENOENT') return 'no such file';
  if (code === 'EISDIR') return 'this is a folder, not a file';
  if (code === 'EACCES' || code === 'EPERM') return 'no permission to read it';
  return `cannot read it (${code ?? 'unknown error'})`;
}

/** Read a pattern file from disk (once, read-only). A missing or unreadable file is the user's error. */
export function readPatternFile(path: string, options: ReadFileOptions = {}): Pattern {
  const bytes = readRegularFile(path, options);
  // Node's native SHA-256 is about ten times faster than the portable one in the core (which is then not loaded).
  return readHashedPatternBytes(bytes, path, createHash('sha256').update(bytes).digest('hex'));
}
