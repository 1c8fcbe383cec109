import { sha256 } from '@noble/hashes/sha2.js';
import { bytesToHex } from '@noble/hashes/utils.js';

/** SHA-256 of bytes or text (UTF-8), as lowercase hex: identifies an original file or a record. */
export function sha256Hex(data: Uint8Array | string): string {
  return bytesToHex(sha256(typeof data === 'string' ? new TextEncoder().encode(data) : data));
}

/** An incremental SHA-256 for data that arrives in parts. */
export function sha256Stream(): { update(data: Uint8Array | string): void; hex(): string } {
  const hash = sha256.create();
  return {
    update(data) {
      hash.update(typeof data === 'string' ? new TextEncoder().encode(data) : data);
    },
    hex: () => bytesToHex(hash.digest()),
  };
}
