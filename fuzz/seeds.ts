/** The real files a fuzz run mutates, and the references it matches against, read from this checkout. */
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import type { SeedFile } from './inputs.js';

/** The checkout's root (these modules run from fuzz/ or from dist/fuzz/). */
export function projectRoot(): string {
  return fileURLToPath(new URL('.', import.meta.url)).replace(/[\\/](dist[\\/])?fuzz[\\/]?$/, '');
}

/** Pattern files: the reader fixtures, the measured patterns and the examples (structure CIFs and notes left out). */
export function seedFiles(root = projectRoot()): SeedFile[] {
  const folders = ['test/fixtures/patterns', 'test/fixtures/measured', 'examples'];
  const seeds: SeedFile[] = [];
  for (const folder of folders) {
    for (const name of readdirSync(join(root, folder)).sort()) {
      if (!/\.(xy|csv|cif)$/i.test(name) || /refined\.cif$/i.test(name)) continue;
      seeds.push({ name, text: readFileSync(join(root, folder, name), 'utf8') });
    }
  }
  return seeds;
}

/** The examples' four references and silicon (reference JSON), paths and texts. */
export function referenceFiles(root = projectRoot()): Array<{ name: string; path: string; text: string }> {
  return ['examples/simulated-scenario-references.json', 'reference-patterns/silicon.json'].map((name) => {
    const path = join(root, name);
    return { name, path, text: readFileSync(path, 'utf8') };
  });
}
