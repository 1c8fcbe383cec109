/**
 * An import that creates its library file builds it under a private name beside it and puts it in
 * place whole (ReferenceLibrary.importIntoNew): the result is the library an import into an empty
 * file makes, in WAL mode, and a failure, a kill or a rival that made the file meanwhile never leaves
 * a half-made file under the library's name.
 */
import Database from 'better-sqlite3';
import { spawnSync } from 'node:child_process';
import { readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { InputError } from '../../src/core/errors.js';
import type { Reference } from '../../src/core/model/reference.js';
import { checkReferences } from '../../src/core/library/validate.js';
import { ReferenceLibrary } from '../../src/node/library/store.js';
import { buildingName } from '../../src/node/library/new-file.js';
import { silicon, syntheticPhase, useTempDir } from './helpers.js';

const tempDir = useTempDir();

function contents(path: string) {
  const library = ReferenceLibrary.open(path, { readOnly: true });
  const { references, index } = library.referencesWithIndex();
  const state = {
    references: references.map(({ createdAt: _createdAt, ...r }) => ({ ...r, lines: r.lines })),
    index: { d: Array.from(index.d), referenceOf: Array.from(index.referenceOf), intensity: Array.from(index.intensity), digest: index.libraryDigest },
    history: references.map((r) => library.history(r.name).map(({ createdAt: _c, ...v }) => v)),
  };
  library.close();
  return state;
}

const refs = (): Reference[] => checkReferences([silicon(), ...Array.from({ length: 50 }, (_, i) => syntheticPhase(`phase ${i}`, 10 + (i % 7), i % 3 ? ['generated'] : []))]);

describe('an import that creates its library file', () => {
  it('makes the library that importing its references one by one makes, in WAL mode, with nothing left beside it', () => {
    const dir = tempDir();
    const built = join(dir, 'built.sqlite');
    expect(ReferenceLibrary.importIntoNew(built, refs(), { change: 'import from refs.json' })).toMatchObject({ updated: [], unchanged: [] });
    expect(readdirSync(dir)).toEqual(['built.sqlite']);
    // One by one: each reference after the first stored by its own statements, the snapshot made from the stored rows.
    const plain = join(dir, 'plain.sqlite');
    const library = ReferenceLibrary.open(plain);
    for (const ref of refs()) library.importCheckedReferences([ref], { change: 'import from refs.json' });
    library.close();
    expect(contents(built)).toEqual(contents(plain));
    const raw = new Database(built, { readonly: true });
    expect(raw.pragma('journal_mode', { simple: true })).toBe('wal');
    expect(raw.pragma('integrity_check', { simple: true })).toBe('ok');
    raw.close();
    // A re-import of the same content into the made library changes nothing.
    const again = ReferenceLibrary.open(built);
    expect(again.importCheckedReferences(refs())).toMatchObject({ added: [], updated: [] });
    again.close();
  });

  it('stores the snapshot alike in many parts when the references come in name order (their values kept in parts as they are)', () => {
    const dir = tempDir();
    const sorted = checkReferences(Array.from({ length: 120 }, (_, i) => syntheticPhase(`phase ${String(i).padStart(3, '0')}`, 5 + (i % 11))));
    const inParts = join(dir, 'parts.sqlite');
    const writer = ReferenceLibrary.open(inParts, { snapshotPartBytes: 1000 }); // not a multiple of 16: a reference's values span two parts
    writer.importCheckedReferences(sorted, { change: 'import' });
    writer.close();
    const raw = new Database(inParts, { readonly: true });
    expect((raw.prepare(`SELECT count(*) AS n FROM line_index_part WHERE array = 'line_values'`).get() as { n: number }).n).toBeGreaterThan(10);
    raw.close();
    const whole = join(dir, 'whole.sqlite');
    const library = ReferenceLibrary.open(whole);
    for (const ref of sorted) library.importCheckedReferences([ref], { change: 'import' });
    library.close();
    expect(contents(inParts)).toEqual(contents(whole));
  });

  it('leaves no file when a reference is bad, and says what the source said', () => {
    const dir = tempDir();
    const path = join(dir, 'lib.sqlite');
    function* failing(): Generator<Reference> {
      yield* refs().slice(0, 10);
      throw new InputError('entry 11: d must be a positive number of Å', { file: 'refs.json', line: 40 });
    }
    expect(() => ReferenceLibrary.importIntoNew(path, failing())).toThrow('refs.json, line 40: entry 11: d must be a positive number of Å');
    expect(readdirSync(dir)).toEqual([]);
  });

  it('imports nothing and keeps the rival file when another process made the library meanwhile', () => {
    const dir = tempDir();
    const path = join(dir, 'lib.sqlite');
    function* racing(): Generator<Reference> {
      yield* refs().slice(0, 5);
      const rival = ReferenceLibrary.open(path);
      rival.importReferences([syntheticPhase('the rival’s')]);
      rival.close();
      yield* refs().slice(5);
    }
    expect(ReferenceLibrary.importIntoNew(path, racing())).toBeNull();
    const library = ReferenceLibrary.open(path, { readOnly: true });
    expect(library.all().map((r) => r.name)).toEqual(['the rival’s']);
    library.close();
    expect(readdirSync(dir).filter((f) => f.includes('.building-'))).toEqual([]);
  });

  it('removes what a killed build of the same file left, and no build of a process that still runs', () => {
    const dir = tempDir();
    const path = join(dir, 'lib.sqlite');
    // A process id that no longer runs: a child that has ended.
    const ended = spawnSync(process.execPath, ['-e', '0']).pid!;
    const stale = buildingName(path).replace(/-\d+$/, `-${ended}`);
    const running = buildingName(path).replace(/-\d+$/, `-${process.ppid}`);
    for (const f of [stale, `${stale}-journal`, running]) writeFileSync(f, 'left by a killed import');
    expect(ReferenceLibrary.importIntoNew(path, refs())).not.toBeNull();
    expect(readdirSync(dir).sort()).toEqual(['lib.sqlite', running.slice(dir.length + 1)]);
  });

  it('through the CLI: a new library file with every reference', () => {
    const dir = tempDir();
    const file = join(dir, 'refs.json');
    writeFileSync(file, JSON.stringify(refs()));
    const path = join(dir, 'lib.sqlite');
    const run = spawnSync(process.execPath, [join(process.cwd(), 'bin/crystallog.js'), 'library', 'import', file, '--library', path, '--json'], { encoding: 'utf8' });
    expect(run.status, run.stderr).toBe(0);
    expect(JSON.parse(run.stdout).added).toHaveLength(51);
    expect(contents(path).references).toHaveLength(51);
  });
});
