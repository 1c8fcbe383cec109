import { describe, it, expect } from 'vitest';
import { createHash } from 'node:crypto';
import { mkdtempSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { readPatternBytes } from '../../src/core/pattern/read.js';
import { readPatternFile } from '../../src/node/files.js';
import { InputError } from '../../src/core/errors.js';
import { fixturePath, readError, rows } from './helpers.js';

const utf8 = (text: string): Uint8Array => new TextEncoder().encode(text);

function utf16(text: string, bigEndian: boolean): Uint8Array {
  const out = new Uint8Array(2 + text.length * 2);
  out.set(bigEndian ? [0xfe, 0xff] : [0xff, 0xfe]);
  for (let i = 0; i < text.length; i++) {
    const code = text.charCodeAt(i);
    out[2 + 2 * i + (bigEndian ? 1 : 0)] = code & 0xff;
    out[2 + 2 * i + (bigEndian ? 0 : 1)] = code >> 8;
  }
  return out;
}

describe('bytes to text', () => {
  const body = '# 2θ intensity\n' + rows(5);

  it('reads UTF-8 with and without a byte order mark', () => {
    const bom = new Uint8Array([0xef, 0xbb, 0xbf, ...utf8(body)]);
    expect(Array.from(readPatternBytes(bom, 'bom.xy').x)).toEqual(Array.from(readPatternBytes(utf8(body), 'plain.xy').x));
  });

  it('reads UTF-16 little- and big-endian files with a byte order mark', () => {
    for (const bigEndian of [false, true]) {
      const p = readPatternBytes(utf16(body, bigEndian), 'u16.xy');
      expect(p.x.length).toBe(5);
      expect(p.y[4]).toBe(104);
    }
  });

  it('falls back to Latin-1 for bytes that are not UTF-8', () => {
    const latin1 = new Uint8Array([...utf8('# Wavelength: 1.5406 '), 0xc5, 10, ...utf8(rows(5))]);
    const p = readPatternBytes(latin1, 'latin1.xy');
    expect(p.meta.Wavelength).toBe('1.5406 Å');
    expect(p.wavelength?.lambda1).toBe(1.5406);
  });

  it('refuses an empty file and a file of blanks, on line 1', () => {
    for (const text of ['', '  \n\n\t\n']) {
      const err = readError(utf8(text), 'empty.xy');
      expect(err.line).toBe(1);
      expect(err.message).toMatch(/empty|no data/);
    }
  });

  it('refuses a binary file, naming the line of the first NUL byte', () => {
    const bytes = new Uint8Array([...utf8('1 2\n2 3\n'), 0x00, 0x01, 0x02, 0xff, 0xfe]);
    const err = readError(bytes, 'scan.raw');
    expect(err.line).toBe(3);
    expect(err.message).toContain('binary');
  });

  it('refuses mostly non-text bytes without NUL', () => {
    const bytes = new Uint8Array(4000);
    for (let i = 0; i < bytes.length; i++) bytes[i] = 1 + (i % 7);
    expect(readError(bytes, 'blob.bin').message).toContain('binary');
  });
});

describe('format detection', () => {
  it('reads column text named .cif as column text, and CIF content named .xy as CIF', () => {
    expect(readPatternBytes(utf8(rows(5)), 'misnamed.cif').source.format).toBe('xy');
    const cif = readFileSync(fixturePath('simulated-si111-meas.cif'));
    expect(readPatternBytes(cif, 'misnamed.xy').source.format).toBe('pdcif');
  });

  it('treats a .cif file that starts with CIF tags but no data_ block as CIF and reports the CIF problem', () => {
    const err = readError(utf8('_pd_meas_counts_total 1\n'), 'headless.cif');
    expect(err.line).toBe(1);
    expect(err.message).toContain('data_');
  });
});

describe('readPatternFile', () => {
  it('reads a file once, keeps the SHA-256 and size of the original bytes, and leaves the file as it was', () => {
    const dir = mkdtempSync(join(tmpdir(), 'crystallog-read-'));
    try {
      const path = join(dir, 'sample.xy');
      const text = '# simulated for a reader test\r\n10,0 5\r\n10,1 3\r\n10,2 1\r\n10,3 4\r\n10,4 2\r\n';
      writeFileSync(path, text);
      const before = statSync(path);
      const p = readPatternFile(path);
      expect(p.source).toEqual({
        file: path,
        sha256: createHash('sha256').update(text).digest('hex'),
        byteLength: Buffer.byteLength(text),
        format: 'xy',
      });
      expect(readFileSync(path, 'utf8')).toBe(text);
      expect(statSync(path).mtimeMs).toBe(before.mtimeMs);
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  });

  it('reports a missing file or a folder as the user’s error naming the path', () => {
    const missing = join(tmpdir(), 'crystallog-no-such-file.xy');
    expect(() => readPatternFile(missing)).toThrow(InputError);
    expect(() => readPatternFile(missing)).toThrow(/no such file/);
    expect(() => readPatternFile(tmpdir())).toThrow(/folder/);
  });
});

describe('large files', () => {
  it('reads a million-line file correctly', () => {
    const n = 1_000_000;
    const parts: string[] = ['# simulated million-point scan for a reader test'];
    for (let i = 0; i < n; i++) parts.push(`${(5 + i * 0.0001).toFixed(4)} ${i % 977}`);
    const text = parts.join('\n');
    const p = readPatternBytes(utf8(text), 'big.xy');
    expect(p.x.length).toBe(n);
    expect(p.x[n - 1]).toBeCloseTo(5 + (n - 1) * 0.0001, 9);
    expect(p.y[123456]).toBe(123456 % 977);
    expect(p.readerNotes.filter((note) => !note.includes('zero or negative'))).toEqual([]);
  });
});

describe('files that are not regular files', () => {
  it('refuses a FIFO and a device at once instead of reading them for ever', async () => {
    const { execFileSync } = await import('node:child_process');
    const { mkdtempSync } = await import('node:fs');
    const { join } = await import('node:path');
    const fifo = join(mkdtempSync(join(tmpdir(), 'crystallog-fifo-')), 'pipe.xy');
    execFileSync('mkfifo', [fifo]);
    expect(() => readPatternFile(fifo)).toThrow(/pipe\.xy: this is not a regular file/);
    expect(() => readPatternFile('/dev/zero')).toThrow(/\/dev\/zero: this is not a regular file/);
  });

  it('refuses a file over the size cap, which the caller can raise', async () => {
    const { mkdtempSync, writeFileSync } = await import('node:fs');
    const { join } = await import('node:path');
    const file = join(mkdtempSync(join(tmpdir(), 'crystallog-cap-')), 'big.xy');
    writeFileSync(file, Array.from({ length: 200 }, (_, i) => `${10 + i * 0.02} ${100 + i}`).join('\n'));
    expect(() => readPatternFile(file, { maxBytes: 1000 })).toThrow(/big\.xy: the file has 0 MB, more than the 0 MB/);
    expect(readPatternFile(file).x.length).toBe(200);
  });
});
