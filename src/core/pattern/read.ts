import { sha256Hex } from '../model/checksum.js';
import type { Pattern } from '../model/pattern.js';
import { readHashedPatternBytes } from './read-hashed.js';

/**
 * Read a powder pattern from file bytes (see read-hashed.ts for the formats). Their SHA-256 identifies
 * the original file; the caller may pass it in when a faster native hash is at hand.
 */
export function readPatternBytes(bytes: Uint8Array, fileName: string, known: { sha256?: string } = {}): Pattern {
  return readHashedPatternBytes(bytes, fileName, known.sha256 ?? sha256Hex(bytes));
}
