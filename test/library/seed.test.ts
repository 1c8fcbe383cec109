import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { formatReferenceJson } from '../../src/core/library/json-format.js';
import { ensureSeeded, loadSeedReferences, packageRoot, seedFolder } from '../../src/node/library/seed.js';
import { ReferenceLibrary } from '../../src/node/library/store.js';
import { silicon, syntheticPhase, useTempDir } from './helpers.js';

const tempDir = useTempDir();

function seedDir(): string {
  const dir = join(tempDir(), 'reference-patterns');
  mkdirSync(dir);
  writeFileSync(join(dir, 'b-standards.json'), formatReferenceJson([silicon()]));
  writeFileSync(join(dir, 'a-phases.json'), formatReferenceJson([syntheticPhase('alpha'), syntheticPhase('beta')]));
  writeFileSync(join(dir, 'readme.txt'), 'not a reference file');
  return dir;
}

describe('seed references', () => {
  it('finds the package folder from its own location, not from the working directory', () => {
    const root = packageRoot();
    expect(JSON.parse(readFileSync(join(root, 'package.json'), 'utf8')).name).toBe('crystallog');
    expect(seedFolder()).toBe(join(root, 'reference-patterns'));
  });

  it('reads every JSON file of the folder in name order and none when the folder is missing', () => {
    expect(loadSeedReferences(seedDir()).map((r) => r.name)).toEqual(['alpha', 'beta', 'silicon']);
    expect(loadSeedReferences(join(tempDir(), 'not-seen'))).toEqual([]);
  });

  it('refuses the same name in two seed files, naming the second', () => {
    const dir = seedDir();
    writeFileSync(join(dir, 'c-again.json'), formatReferenceJson([silicon()]));
    expect(() => loadSeedReferences(dir)).toThrow(/c-again\.json: the seed reference "silicon" is also in .*b-standards\.json/);
  });

  it('seeds a library once: a deleted seed reference stays deleted and a user reference of the same name is kept', () => {
    const dir = seedDir();
    const lib = ReferenceLibrary.open(join(tempDir(), 'lib.sqlite'));
    lib.importReferences([silicon({ source: 'my own measurement' })]);
    const first = ensureSeeded(lib, { folder: dir });
    expect(first).toEqual({ added: ['alpha', 'beta'], alreadySeeded: false });
    expect(lib.get('silicon')!.source).toBe('my own measurement');
    expect(lib.history('alpha')[0]!.change).toBe('seed');

    lib.remove('alpha');
    expect(ensureSeeded(lib, { folder: dir })).toEqual({ added: [], alreadySeeded: true });
    expect(lib.get('alpha')).toBeNull();
    expect(lib.getMeta('seeded_at')).toMatch(/^\d{4}-\d\d-\d\dT/);
    lib.close();
    expect(existsSync(dir)).toBe(true);
  });
});
