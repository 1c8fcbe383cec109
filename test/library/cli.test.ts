import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readdirSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import {
  exportCommand,
  historyCommand,
  importCommand,
  listCommand,
  removeCommand,
  restoreCommand,
} from '../../src/cli/commands/library.js';
import { InputError } from '../../src/core/errors.js';
import { formatReferenceJson } from '../../src/core/library/json-format.js';
import { silicon, syntheticPhase, useTempDir } from './helpers.js';

const tempDir = useTempDir();

function files(dir: string) {
  const json = join(dir, 'refs.json');
  writeFileSync(json, formatReferenceJson([silicon(), syntheticPhase('lead iodide hydrate', 8, ['decomposition product'])]));
  const csv = join(dir, 'product.csv');
  writeFileSync(csv, 'd,intensity\n9.89,100\n4.95,30\n');
  const bad = join(dir, 'bad.json');
  writeFileSync(bad, `[\n  {"name": "ok", "source": "s", "lines": [{"d": 2}]},\n  {"name": "broken", "source": "s", "lines": [\n    {"d": -3}\n  ]}\n]\n`);
  return { json, csv, bad };
}

describe('crystallog library (command functions)', () => {
  it('imports JSON and CSV, lists with search and tag, and exports the same references back', () => {
    const dir = tempDir();
    const { json, csv } = files(dir);
    const library = join(dir, 'lib.sqlite');
    const imported = importCommand([json, csv], { library, name: 'product', source: 'own measurement', tag: ['target'] });
    expect(imported.added).toEqual(['silicon', 'lead iodide hydrate', 'product']);
    expect(imported.files.map((f) => f.references.length)).toEqual([2, 1]);

    expect(listCommand({ library }).references.map((r) => [r.name, r.version, r.lineCount])).toEqual([
      ['lead iodide hydrate', 1, 8],
      ['product', 1, 2],
      ['silicon', 1, 4],
    ]);
    expect(listCommand({ library, tag: 'target' }).references.map((r) => r.name)).toEqual(['product']);
    expect(listCommand({ library, search: 'iodide' }).count).toBe(1);

    const out = join(dir, 'export.json');
    expect(exportCommand({ library, out })).toMatchObject({ out, count: 3 });
    expect(readdirSync(dir).filter((f) => f.includes('.tmp'))).toEqual([]); // written by temp file + rename
    expect(exportCommand({ library }).text).toBe(readFileSync(out, 'utf8'));
    expect(importCommand([out], { library })).toMatchObject({ added: [], updated: [], unchanged: ['lead iodide hydrate', 'product', 'silicon'] });
  });

  it('imports all files or none: one bad line leaves the library exactly as it was', () => {
    const dir = tempDir();
    const { json, bad } = files(dir);
    const library = join(dir, 'lib.sqlite');
    importCommand([json], { library });
    const before = exportCommand({ library }).text;
    let error: unknown;
    try {
      importCommand([json, bad], { library });
    } catch (err) {
      error = err;
    }
    expect(error).toBeInstanceOf(InputError);
    expect((error as InputError).message).toMatch(/bad\.json, line 4: entry 2 \("broken"\), lines item 1: d must be a positive number/);
    expect(exportCommand({ library }).text).toBe(before);
  });

  it('removes, shows history and restores by version', () => {
    const dir = tempDir();
    const { json } = files(dir);
    const library = join(dir, 'lib.sqlite');
    importCommand([json], { library });
    writeFileSync(json, formatReferenceJson([silicon({ rir: 4.7 })]));
    importCommand([json], { library });
    expect(removeCommand('silicon', { library })).toMatchObject({ removed: 'silicon', version: 2 });
    expect(listCommand({ library }).references.map((r) => r.name)).toEqual(['lead iodide hydrate']);
    expect(historyCommand('silicon', { library }).versions.map((v) => [v.version, v.deleted])).toEqual([
      [1, true],
      [2, true],
    ]);
    expect(restoreCommand('silicon', { library, version: '1' })).toMatchObject({ version: 3, restoredFrom: 1 });
    expect(listCommand({ library }).references.find((r) => r.name === 'silicon')!.rir).toBeNull();
    expect(() => restoreCommand('silicon', { library, version: 'two' })).toThrow(/give a version number/);
    expect(() => listCommand({ library: join(dir, 'nowhere.sqlite') })).toThrow(/nowhere.sqlite does not exist/);
  });
});

/** Build dist/ when it is missing or older than this area's sources (the command runs the compiled code). */
function ensureBuilt(root: string): void {
  const built = join(root, 'dist/src/cli/commands/library.js');
  const sources = [join(root, 'src/cli/commands/library.ts'), ...['src/core/library', 'src/node/library'].flatMap((d) => readdirSync(join(root, d)).map((f) => join(root, d, f)))];
  const newest = Math.max(...sources.map((f) => statSync(f).mtimeMs));
  if (existsSync(built) && statSync(built).mtimeMs >= newest) return;
  // Other areas may still have type errors while being written; tsc emits anyway, so only the output is checked.
  spawnSync(process.execPath, [join(root, 'node_modules/typescript/bin/tsc'), '-p', 'tsconfig.json'], { cwd: root, stdio: 'ignore' });
  if (!existsSync(built)) throw new Error('the build did not produce dist/src/cli/commands/library.js');
}

describe('crystallog library (the command itself)', () => {
  it('imports, lists as one JSON document, and exits 2 naming file and line for a bad file', { timeout: 300_000 }, () => {
    const root = process.cwd();
    ensureBuilt(root);
    const dir = tempDir();
    const { json, bad } = files(dir);
    const library = join(dir, 'lib.sqlite');
    const run = (...args: string[]) => spawnSync(process.execPath, [join(root, 'bin/crystallog.js'), 'library', ...args], { encoding: 'utf8' });

    const imported = run('import', json, '--library', library, '--json');
    expect(imported.status).toBe(0);
    expect(JSON.parse(imported.stdout).added).toEqual(['silicon', 'lead iodide hydrate']);

    const listed = run('list', '--library', library, '--tag', 'standard', '--json');
    expect(listed.status).toBe(0);
    expect(JSON.parse(listed.stdout).references.map((r: { name: string }) => r.name)).toEqual(['silicon']);

    const failed = run('import', bad, '--library', library, '--json');
    expect(failed.status).toBe(2);
    // With --json a failure is also one JSON document on stdout (../shared/CLI.md).
    expect(JSON.parse(failed.stdout).error).toMatchObject({ file: bad, line: 4, message: expect.stringMatching(/d must be a positive number/) });
    expect(failed.stderr).toMatch(/^crystallog: .*bad\.json, line 4: .*d must be a positive number/);

    const exported = run('export', '--library', library);
    expect(exported.status).toBe(0);
    expect(JSON.parse(exported.stdout)).toHaveLength(2);
  });
});

describe('crystallog library import of a structure CIF', () => {
  it('takes --name, --formula and --tag as for a CSV peak list', () => {
    const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
    const cifDir = mkdtempSync(join(tmpdir(), 'crystallog-cif-import-'));
    const db = join(cifDir, 'lab.sqlite');
    const cif = join(root, 'test', 'fixtures', 'cif', 'zno.cif');
    const cli = (...args: string[]) => spawnSync(process.execPath, [join(root, 'bin', 'crystallog.js'), 'library', ...args], { encoding: 'utf8' });
    const imported = cli('import', cif, '--library', db, '--name', 'zinc oxide (wurtzite)', '--formula', 'ZnO', '--tag', 'impurity', '--json');
    expect(imported.status, imported.stderr).toBe(0);
    const listed = JSON.parse(cli('list', '--library', db, '--tag', 'impurity', '--json').stdout) as { references: Array<{ name: string; formula: string }> };
    expect(listed.references.map((r) => [r.name, r.formula])).toEqual([['zinc oxide (wurtzite)', 'ZnO']]);
  });
});
