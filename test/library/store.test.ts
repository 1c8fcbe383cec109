import Database from 'better-sqlite3';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { InputError } from '../../src/core/errors.js';
import { lineArrays, ReferenceLibrary } from '../../src/node/library/store.js';
import { LIBRARY_KIND, LIBRARY_MIGRATIONS } from '../../src/node/library/schema.js';
import { openDatabase, schemaVersion } from '../../src/node/library/sqlite.js';
import { silicon, syntheticPhase, useTempDir } from './helpers.js';

const tempDir = useTempDir();

function openFresh(): ReferenceLibrary {
  return ReferenceLibrary.open(join(tempDir(), 'refs.sqlite'));
}

describe('opening a library file', () => {
  it('creates a fresh file with the latest schema version, WAL journal and foreign keys on', () => {
    const path = join(tempDir(), 'new.sqlite');
    const lib = ReferenceLibrary.open(path);
    expect(lib.schemaVersion).toBe(LIBRARY_MIGRATIONS.length);
    lib.close();
    const raw = new Database(path, { readonly: true });
    expect(raw.pragma('journal_mode', { simple: true })).toBe('wal');
    expect(raw.pragma('user_version', { simple: true })).toBe(LIBRARY_MIGRATIONS.length);
    raw.close();
  });

  it('upgrades a file written at schema version 1 and keeps its references (tags become searchable)', () => {
    const path = join(tempDir(), 'old.sqlite');
    // A file as schema version 1 left it, with one reference written the way version 1 stored it.
    const v1 = openDatabase(path, { kind: LIBRARY_KIND, migrations: LIBRARY_MIGRATIONS, upToVersion: 1 });
    expect(schemaVersion(v1)).toBe(1);
    v1.transaction(() => {
      v1.prepare(`INSERT INTO reference_entry (id, name, current_version) VALUES (1, 'silicon', 1)`).run();
      v1.prepare(
        `INSERT INTO reference_version (entry_id, version, name, source, details, line_count, line_values, content_hash, change, created_at)
         VALUES (1, 1, 'silicon', 'test', '{"formula": "Si", "tags": ["standard"]}', 1, ?, 'x', 'import', '2020-01-01T00:00:00.000Z')`,
      ).run(Buffer.from(new Float64Array([3.1356, 100]).buffer));
    })();
    v1.close();

    const lib = ReferenceLibrary.open(path);
    expect(lib.schemaVersion).toBe(LIBRARY_MIGRATIONS.length);
    expect(lib.list({ tag: 'standard' }).map((r) => r.name)).toEqual(['silicon']);
    expect(lib.list({ search: 'SI' }).map((r) => r.formula)).toEqual(['Si']);
    expect(lib.get('silicon')!.lines).toEqual([{ d: 3.1356, intensity: 100 }]);
    lib.close();
  });

  it('refuses a file from a newer Crystallog, a foreign SQLite file and a file that is not SQLite', () => {
    const dir = tempDir();
    const newer = join(dir, 'newer.sqlite');
    ReferenceLibrary.open(newer).close();
    const raw = new Database(newer);
    raw.pragma(`user_version = ${LIBRARY_MIGRATIONS.length + 1}`);
    raw.close();
    expect(() => ReferenceLibrary.open(newer)).toThrow(/newer than this Crystallog/);

    const foreign = join(dir, 'foreign.sqlite');
    const other = new Database(foreign);
    other.exec('CREATE TABLE something (x)');
    other.close();
    expect(() => ReferenceLibrary.open(foreign)).toThrow(InputError);

    const text = join(dir, 'notes.txt');
    writeFileSync(text, 'this is not a database, just some text that is long enough to have a header page '.repeat(20));
    expect(() => ReferenceLibrary.open(text)).toThrow(InputError);
  });
});

describe('storing references', () => {
  it('keeps every line field (d, null intensity, hkl, multiplicity) and sorts lines by decreasing d', () => {
    const lib = openFresh();
    const ref = silicon();
    const shuffled = { ...ref, lines: [ref.lines[2]!, { d: 0.9, intensity: null }, ref.lines[0]!, ref.lines[3]!, ref.lines[1]!] };
    lib.importReferences([shuffled]);
    const stored = lib.get('silicon')!;
    expect(stored.lines.map((l) => l.d)).toEqual([...shuffled.lines.map((l) => l.d)].sort((a, b) => b - a));
    expect(stored.lines[0]).toEqual(ref.lines[0]);
    expect(stored.lines[4]).toEqual({ d: 0.9, intensity: null });
    expect(stored.cell).toEqual(ref.cell);
    expect(stored.version).toBe(1);
    lib.close();
  });

  it('gives the lines of a loaded reference as typed arrays (NaN for an unknown intensity), also after the lines are replaced', () => {
    const lib = openFresh();
    lib.importReferences([{ ...syntheticPhase('p', 2), lines: [{ d: 4, intensity: 100 }, { d: 2, intensity: null }] }]);
    const [ref] = lib.all();
    const arrays = lineArrays(ref!);
    expect(Array.from(arrays.d)).toEqual([4, 2]);
    expect(Array.from(arrays.intensity)).toEqual([100, Number.NaN]);
    ref!.lines = [{ d: 3, intensity: 50 }];
    expect(Array.from(lineArrays(ref!).d)).toEqual([3]);
    expect(JSON.parse(JSON.stringify(ref)).lines).toEqual([{ d: 3, intensity: 50 }]);
    expect({ ...lib.get('p')! }.lines).toHaveLength(2); // spreading a stored reference copies its lines
    lib.close();
  });

  it('finds references by part of the name or formula and by tag, in any case', () => {
    const lib = openFresh();
    lib.importReferences([
      silicon(),
      syntheticPhase('lead iodide', 5, ['Precursor']),
      syntheticPhase('lead iodide hydrate', 5, ['decomposition product', 'moisture']),
      syntheticPhase('50%_phase', 5),
    ]);
    expect(lib.list({ search: 'IODIDE' }).map((r) => r.name)).toEqual(['lead iodide', 'lead iodide hydrate']);
    expect(lib.list({ search: 'si' }).map((r) => r.name)).toEqual(['silicon']); // formula "Si" and name both match once
    expect(lib.list({ tag: 'precursor' }).map((r) => r.name)).toEqual(['lead iodide']);
    expect(lib.list({ tag: 'MOISTURE' }).map((r) => r.name)).toEqual(['lead iodide hydrate']);
    expect(lib.list({ tag: 'decomposition product', search: 'hydrate' }).map((r) => r.name)).toEqual(['lead iodide hydrate']);
    expect(lib.list({ search: '%' }).map((r) => r.name)).toEqual(['50%_phase']); // % is a character, not a wildcard
    expect(lib.list().length).toBe(4);
    lib.close();
  });

  it('rejects negative d, intensity above 100, an empty name and a missing source, and leaves the library unchanged', () => {
    const lib = openFresh();
    lib.importReferences([syntheticPhase('kept')]);
    const before = lib.exportJson();
    const good = syntheticPhase('other');
    const bad = [
      { ...good, lines: [{ d: -1.2, intensity: 50 }] },
      { ...good, lines: [{ d: 2.5, intensity: 120 }] },
      { ...good, name: '  ' },
      { ...good, source: '' },
      { ...good, source: undefined as unknown as string },
    ];
    const messages = bad.map((ref) => {
      try {
        lib.importReferences([syntheticPhase('would be new'), ref]);
        return 'accepted';
      } catch (err) {
        expect(err).toBeInstanceOf(InputError);
        return (err as Error).message;
      }
    });
    expect(messages[0]).toMatch(/entry 2 \("other"\), lines item 1: d must be a positive number/);
    expect(messages[1]).toMatch(/intensity must be between 0 and 100/);
    expect(messages[2]).toMatch(/name is empty/);
    expect(messages[3]).toMatch(/source is empty/);
    expect(messages[4]).toMatch(/source is missing/);
    expect(lib.exportJson()).toBe(before);
    lib.close();
  });

  it('rejects the same name twice in one import', () => {
    const lib = openFresh();
    expect(() => lib.importReferences([syntheticPhase('twin'), syntheticPhase('Twin')])).toThrow(/appears twice/);
    expect(lib.count()).toBe(0);
    lib.close();
  });
});

describe('versions and history', () => {
  it('re-importing the same content changes nothing; changed content becomes a new version and the old stays readable', () => {
    const lib = openFresh();
    expect(lib.importReferences([silicon()])).toEqual({ added: ['silicon'], updated: [], unchanged: [] });
    expect(lib.importReferences([silicon()])).toEqual({ added: [], updated: [], unchanged: ['silicon'] });
    const changed = silicon({ notes: 'remeasured', lines: silicon().lines.slice(0, 2) });
    expect(lib.importReferences([changed])).toEqual({ added: [], updated: ['silicon'], unchanged: [] });

    const current = lib.get('silicon')!;
    expect(current.version).toBe(2);
    expect(current.lines).toHaveLength(2);
    const first = lib.get('silicon', 1)!;
    expect(first.lines).toHaveLength(4);
    expect(first.id).toBe(current.id); // the id names the reference, the version the content
    expect(lib.getVersion(current.id, 1)!.lines).toEqual(first.lines);
    expect(lib.get('silicon', 9)).toBeNull();
    lib.close();
  });

  it('an edit is a new version; restore makes an old version current again as a further version', () => {
    const lib = openFresh();
    lib.importReferences([silicon()]);
    const edited = lib.edit('silicon', { rir: 4.7, tags: ['standard', 'target'] });
    expect(edited.version).toBe(2);
    expect(lib.list({ tag: 'target' }).map((r) => r.name)).toEqual(['silicon']);

    const restored = lib.restore('silicon', 1);
    expect(restored.version).toBe(3);
    expect(restored.rir).toBeUndefined();
    expect(restored.lines).toEqual(lib.get('silicon', 1)!.lines);
    expect(lib.list({ tag: 'target' })).toEqual([]); // tags follow the current version

    const history = lib.history('silicon');
    expect(history.map((h) => [h.version, h.change, h.current])).toEqual([
      [1, 'import', false],
      [2, 'edit', false],
      [3, 'restore of version 1', true],
    ]);
    expect(() => lib.restore('silicon', 7)).toThrow(/has no version 7; its versions are 1, 2, 3/);
    lib.close();
  });

  it('delete is recoverable: the reference leaves the lists, keeps its history, and comes back by undelete, restore or re-import', () => {
    const lib = openFresh();
    lib.importReferences([silicon(), syntheticPhase('quartz')]);
    lib.remove('silicon');
    expect(lib.list().map((r) => r.name)).toEqual(['quartz']);
    expect(lib.get('silicon')).toBeNull();
    expect(lib.get('silicon', 1)!.name).toBe('silicon'); // old versions stay readable
    expect(lib.history('silicon')[0]!.deleted).toBe(true);
    expect(() => lib.remove('silicon')).toThrow(/already deleted/);

    expect(lib.undelete('silicon').version).toBe(1);
    lib.remove('silicon');
    expect(lib.importReferences([silicon()])).toEqual({ added: [], updated: ['silicon'], unchanged: [] });
    expect(lib.get('silicon')!.version).toBe(2);
    lib.remove('silicon');
    expect(lib.restore('silicon', 1).version).toBe(3);
    expect(() => lib.remove('no such phase')).toThrow(/there is no reference named "no such phase"/);
    lib.close();
  });
});
