/**
 * The d-sorted line index a library stores at import time (issue 15): the same index and the same
 * match results as building it from the line objects, on the seed library and on random libraries;
 * rebuilt when the library changes; a bad import file leaves library and index as they were.
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { afterAll, describe, expect, it } from 'vitest';
import { buildReferenceIndex, type ReferenceIndex } from '../../src/core/match/reference-index.js';
import { matchPhases } from '../../src/core/match/match.js';
import type { Reference, StoredReference } from '../../src/core/model/reference.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { seededUniform } from '../../src/core/numeric/random.js';
import { parseReferenceFile } from '../../src/node/library/import-files.js';
import { loadSeedReferences } from '../../src/node/library/seed.js';
import { ReferenceLibrary } from '../../src/node/library/store.js';
import { flatBackground, linesAt, peaksOf } from '../match/synthetic.js';

const cu = anodeWavelength('Cu');
const L = cu.lambda1;
const dir = mkdtempSync(join(tmpdir(), 'crystallog-line-index-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function randomReferences(count: number, seed: number): Reference[] {
  const uniform = seededUniform(seed);
  return Array.from({ length: count }, (_, i) => ({
    name: `random phase ${i}`,
    formula: `X${i}`,
    tags: ['simulated'],
    source: `simulated for the line index test (seed ${seed})`,
    lines: linesAt(L, Array.from({ length: 25 }, (_, j) => [8 + 80 * uniform(), j === 0 ? 100 : 1 + 99 * uniform()] as [number, number])),
  }));
}

function expectSameIndex(a: ReferenceIndex, b: ReferenceIndex): void {
  expect(a.d.length).toBeGreaterThan(0);
  expect(Array.from(a.d)).toEqual(Array.from(b.d));
  expect(Array.from(a.referenceOf)).toEqual(Array.from(b.referenceOf));
  expect(Array.from(a.intensity)).toEqual(Array.from(b.intensity));
}

/** Match two phases of the library mixed, with the stored index and with the index built from line objects. */
function expectSameMatches(references: StoredReference[], stored: ReferenceIndex, picks: Array<[number, number]>): void {
  const background = flatBackground(100);
  for (const [main, minor] of picks) {
    const peaks = peaksOf([{ lines: references[main]!.lines, scale: 10 }, { lines: references[minor]!.lines, scale: 2 }], L, { minArea: 3 });
    const fromObjects = matchPhases(peaks, references, { wavelength: cu, background });
    const fromStored = matchPhases(peaks, references, { wavelength: cu, background, index: stored });
    expect(fromStored).toEqual(fromObjects);
    expect(fromStored.phases.some((p) => p.name === references[main]!.name && p.verdict === 'present')).toBe(true);
  }
}

describe('the line index stored with the library', () => {
  it('is the index built from the line objects, and matches the seed library alike', () => {
    const path = join(dir, 'seed.sqlite');
    const writer = ReferenceLibrary.open(path);
    writer.importReferences(loadSeedReferences());
    writer.close();
    const library = ReferenceLibrary.open(path, { readOnly: true });
    const { references, index } = library.referencesWithIndex();
    // The snapshot's references are the stored rows' references, lines (with hkl) and all.
    expect(references).toEqual(library.all());
    expectSameIndex(index, buildReferenceIndex(references));
    expectSameMatches(references, index, [[0, 1], [2, 3]]);
    library.close();
  });

  it('is read back alike when each of its arrays is stored in many parts', () => {
    const path = join(dir, 'parts.sqlite');
    const writer = ReferenceLibrary.open(path, { snapshotPartBytes: 1000 }); // not a multiple of 8: a Float64 spans two parts
    writer.importReferences(randomReferences(300, 5));
    writer.close();
    const raw = new Database(path, { readonly: true });
    const parts = raw.prepare(`SELECT count(*) AS n FROM line_index_part WHERE array = 'd'`).get() as { n: number };
    raw.close();
    expect(parts.n).toBeGreaterThan(10);
    const reader = ReferenceLibrary.open(path, { readOnly: true });
    const { references, index } = reader.referencesWithIndex();
    expect(references).toEqual(reader.all());
    expectSameIndex(index, buildReferenceIndex(references));
    reader.close();
  });

  it('is read back in a read-only connection and matches a random library alike', () => {
    const path = join(dir, 'random.sqlite');
    const writer = ReferenceLibrary.open(path);
    writer.importReferences(randomReferences(1500, 7));
    writer.close();
    const reader = ReferenceLibrary.open(path, { readOnly: true });
    const { references, index } = reader.referencesWithIndex();
    expect(references).toHaveLength(1500);
    expectSameIndex(index, buildReferenceIndex(references));
    expectSameMatches(references, index, [[17, 1200], [640, 3]]);
    reader.close();
  });

  it('with lines read on demand gives the same references, lines and matches, and names the library when read after it closed', () => {
    const path = join(dir, 'on-demand.sqlite');
    const writer = ReferenceLibrary.open(path);
    writer.importReferences(loadSeedReferences());
    writer.close();
    const library = ReferenceLibrary.open(path, { readOnly: true });
    const loaded = library.referencesWithIndex();
    const onDemand = library.referencesWithIndex({ linesOnDemand: true });
    expect(onDemand.references).toEqual(loaded.references); // reads every reference's lines from the library, hkl included
    expectSameIndex(onDemand.index, loaded.index);
    expectSameMatches(onDemand.references, onDemand.index, [[0, 1], [2, 3]]);
    const unread = library.referencesWithIndex({ linesOnDemand: true }).references[0]!;
    library.close();
    expect(() => unread.lines).toThrow(`after the library ${path} was closed`);
  });

    it('follows every change: an edit, a delete, an undelete', () => {
    const library = ReferenceLibrary.open(join(dir, 'changes.sqlite'));
    library.importReferences(randomReferences(200, 11));
    const before = library.referencesWithIndex().index;
    library.edit('random phase 5', { lines: linesAt(L, [[30, 100], [45, 40]]) });
    let now = library.referencesWithIndex();
    expect(now.index.d.length).toBe(before.d.length - 23);
    expectSameIndex(now.index, buildReferenceIndex(now.references));
    library.remove('random phase 9');
    now = library.referencesWithIndex();
    expect(now.references).toHaveLength(199);
    expectSameIndex(now.index, buildReferenceIndex(now.references));
    library.undelete('random phase 9');
    now = library.referencesWithIndex();
    expectSameIndex(now.index, buildReferenceIndex(now.references));
    library.close();
  });

  it('stays as it was when an import file is malformed, and the message names file and line', () => {
    const library = ReferenceLibrary.open(join(dir, 'bad-import.sqlite'));
    library.importReferences(randomReferences(50, 13));
    const before = library.referencesWithIndex().index;
    const bad = '[\n  {"name": "odd one", "formula": "X", "source": "test", "lines": [{"d": 2.5, "intensity": 100}]},\n  {"name": "broken", "lines": [\n]';
    let message = '';
    try {
      library.importReferences(parseReferenceFile(bad, 'broken-refs.json'));
    } catch (err) {
      message = (err as Error).message;
    }
    expect(message).toMatch(/broken-refs\.json/);
    expect(message).toMatch(/line \d+/);
    expect(library.count()).toBe(50);
    expectSameIndex(library.referencesWithIndex().index, before);
    library.close();
  });
});

describe('a library from the version before the stored index', () => {
  it('is brought up to date when first read, with a note, and then matches as before', async () => {
    const path = join(dir, 'older.db');
    const library = ReferenceLibrary.open(path);
    library.importReferences(loadSeedReferences().slice(0, 5));
    library.close();
    // Make it look like the schema before step 3: no line_index table, user_version 2.
    const raw = new Database(path);
    raw.exec('DROP TABLE line_index; DROP TABLE line_index_part');
    raw.pragma('user_version = 2');
    raw.close();
    const reopened = ReferenceLibrary.open(path, { readOnly: true });
    expect(reopened.openNotes.some((n) => /brought up to date from schema version 2/.test(n))).toBe(true);
    expect(reopened.all()).toHaveLength(5);
    reopened.close();
  });

  it('with the one-row snapshot of schema 3 is brought up to date with a note by a reader, its snapshot made anew in parts, and matches as before', async () => {
    const path = join(dir, 'schema-3.db');
    const library = ReferenceLibrary.open(path);
    library.importReferences(loadSeedReferences());
    const expected = library.referencesWithIndex();
    library.close();
    const raw = new Database(path);
    raw.exec(`DROP TABLE line_index; DROP TABLE line_index_part;
      CREATE TABLE line_index (id INTEGER PRIMARY KEY CHECK (id = 1), stamp TEXT NOT NULL, digest TEXT NOT NULL, heads TEXT NOT NULL,
        line_values BLOB NOT NULL, line_indices BLOB NOT NULL, index_start BLOB NOT NULL, d BLOB NOT NULL, reference_of BLOB NOT NULL, intensity BLOB NOT NULL) STRICT;
      INSERT INTO line_index VALUES (1, 'old', 'old', '[]', x'', x'', x'', x'', x'', x'');`);
    raw.pragma('user_version = 3');
    raw.close();
    const reader = ReferenceLibrary.open(path, { readOnly: true });
    expect(reader.openNotes.some((n) => /brought up to date from schema version 3/.test(n))).toBe(true);
    const upgraded = reader.referencesWithIndex(); // the snapshot was made anew with the upgrade, the one write of this open
    expect(upgraded.references).toEqual(expected.references);
    expectSameIndex(upgraded.index, expected.index);
    reader.close();
    const snapshot = new Database(path, { readonly: true });
    expect(snapshot.prepare(`SELECT count(*) AS n FROM line_index`).get()).toEqual({ n: 1 });
    snapshot.close();
    const writer = ReferenceLibrary.open(path);
    const rebuilt = writer.referencesWithIndex();
    expect(rebuilt.references).toEqual(expected.references);
    expectSameIndex(rebuilt.index, expected.index);
    expectSameMatches(rebuilt.references, rebuilt.index, [[0, 1], [2, 3]]);
    writer.close();
  });
});
