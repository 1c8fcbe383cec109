/**
 * `crystallog library import` of a large JSON file streams it into one transaction (issue 15): a bad
 * reference at the very end leaves an existing library exactly as it was (references and stored
 * line index), and a library file the failed import would have created is not left behind.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { formatReferenceJson } from '../../src/core/library/json-format.js';
import { canonicalContent } from '../../src/core/library/validate.js';
import { ReferenceLibrary } from '../../src/node/library/store.js';
import { silicon, syntheticPhase, useTempDir } from './helpers.js';

const tempDir = useTempDir();
const root = process.cwd();
const crystallog = (...args: string[]) => spawnSync(process.execPath, [join(root, 'bin/crystallog.js'), ...args], { encoding: 'utf8' });

function libraryState(path: string) {
  const library = ReferenceLibrary.open(path, { readOnly: true });
  const { references, index } = library.referencesWithIndex();
  const state = { names: references.map((r) => `${r.name} v${r.version}`), d: Array.from(index.d), referenceOf: Array.from(index.referenceOf) };
  library.close();
  return state;
}

describe('a streamed import of a large reference file', () => {
  const refs = Array.from({ length: 3000 }, (_, i) => syntheticPhase(`phase ${String(i).padStart(4, '0')}`, 20));
  const text = formatReferenceJson(refs);
  const lastLine = text.lastIndexOf('{"d":');
  const broken = text.slice(0, lastLine) + text.slice(lastLine).replace(/^\{"d":[\d.]+/, '{"d":-1');

  it('leaves the library as it was when the last reference is bad, naming file and line', { timeout: 60_000 }, () => {
    const dir = tempDir();
    const library = join(dir, 'lib.sqlite');
    const first = join(dir, 'first.json');
    writeFileSync(first, formatReferenceJson([silicon(), syntheticPhase('phase 0001', 5)]));
    expect(crystallog('library', 'import', first, '--library', library).status).toBe(0);
    const before = libraryState(library);

    const file = join(dir, 'large.json');
    writeFileSync(file, broken);
    const run = crystallog('library', 'import', file, '--library', library, '--json');
    expect(run.status, run.stderr).toBe(2);
    const line = broken.slice(0, lastLine).split('\n').length;
    expect(run.stderr).toContain(`${file}, line ${line}: entry 3000 ("phase 2999"), lines item 20: d must be a positive number of Å (got -1)`);
    expect(libraryState(library)).toEqual(before);

    writeFileSync(file, text);
    const fixed = crystallog('library', 'import', file, '--library', library, '--json');
    expect(fixed.status, fixed.stderr).toBe(0);
    expect(JSON.parse(fixed.stdout)).toMatchObject({ added: expect.any(Array), updated: ['phase 0001'] });
    expect(libraryState(library).names).toHaveLength(3001);
  });

  it('leaves no library file behind when the import that would create it fails', { timeout: 60_000 }, () => {
    const dir = tempDir();
    const file = join(dir, 'large.json');
    writeFileSync(file, broken);
    const library = join(dir, 'new.sqlite');
    expect(crystallog('library', 'import', file, '--library', library).status).toBe(2);
    expect([library, `${library}-wal`, `${library}-shm`].filter((f) => existsSync(f))).toEqual([]);
  });
});

describe('content hashes', () => {
  it('still tell an unchanged re-import for a version stored with the earlier hash of its content', () => {
    const path = join(tempDir(), 'lib.sqlite');
    const library = ReferenceLibrary.open(path);
    library.importReferences([silicon()]);
    library.close();
    const raw = new Database(path);
    const legacy = createHash('sha256').update(canonicalContent(ReferenceLibrary.open(path, { readOnly: true }).get('silicon')!)).digest('hex');
    raw.prepare('UPDATE reference_version SET content_hash = ?').run(legacy);
    raw.close();
    const again = ReferenceLibrary.open(path);
    expect(again.importReferences([silicon()])).toEqual({ added: [], updated: [], unchanged: ['silicon'] });
    expect(again.importReferences([silicon({ source: 'another source' })])).toEqual({ added: [], updated: ['silicon'], unchanged: [] });
    again.close();
  });
});
