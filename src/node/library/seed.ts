import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { InputError } from '../../core/errors.js';
import { parseReferenceJson } from '../../core/library/json-format.js';
import type { Reference } from '../../core/model/reference.js';
import type { ReferenceLibrary } from './store.js';

const SEEDED_KEY = 'seeded_at';

/** The folder of the package (where package.json names "crystallog"), found from this module, not from cwd. */
export function packageRoot(): string {
  let folder = dirname(fileURLToPath(import.meta.url));
  for (;;) {
    const manifest = join(folder, 'package.json');
    if (existsSync(manifest)) {
      const name = (JSON.parse(readFileSync(manifest, 'utf8')) as { name?: unknown }).name;
      if (name === 'crystallog') return folder;
    }
    const parent = dirname(folder);
    if (parent === folder) throw new Error('cannot find the Crystallog package folder above ' + fileURLToPath(import.meta.url));
    folder = parent;
  }
}

/** The shipped reference files: reference-patterns/*.json in the package. */
export function seedFolder(): string {
  return join(packageRoot(), 'reference-patterns');
}

/** Every reference in the seed folder's JSON files (file order by name); none when the folder is absent. */
export function loadSeedReferences(folder: string = seedFolder()): Reference[] {
  if (!existsSync(folder)) return [];
  const files = readdirSync(folder)
    .filter((f) => f.toLowerCase().endsWith('.json'))
    .sort();
  const byName = new Map<string, string>();
  const refs: Reference[] = [];
  for (const file of files) {
    const path = join(folder, file);
    for (const ref of parseReferenceJson(readFileSync(path, 'utf8'), path)) {
      const key = ref.name.toLowerCase();
      const earlier = byName.get(key);
      if (earlier) throw new InputError(`the seed reference "${ref.name}" is also in ${earlier}`, { file: path });
      byName.set(key, path);
      refs.push(ref);
    }
  }
  return refs;
}

export interface SeedResult {
  /** Names added now. */
  added: string[];
  /** True when the library had been seeded before (nothing done). */
  alreadySeeded: boolean;
}

/**
 * Load the seed references into a library the first time it is used (recorded in its meta table,
 * so a reference the user deletes does not come back). Names already in the library are left alone.
 */
export function ensureSeeded(library: ReferenceLibrary, options: { folder?: string } = {}): SeedResult {
  if (library.getMeta(SEEDED_KEY) !== undefined) return { added: [], alreadySeeded: true };
  const seeds = loadSeedReferences(options.folder);
  return library.transaction(() => {
    if (library.getMeta(SEEDED_KEY) !== undefined) return { added: [], alreadySeeded: true };
    const fresh = seeds.filter((ref) => !library.exists(ref.name));
    const added = fresh.length > 0 ? library.importReferences(fresh, { change: 'seed' }).added : [];
    library.setMeta(SEEDED_KEY, new Date().toISOString());
    return { added, alreadySeeded: false };
  });
}
