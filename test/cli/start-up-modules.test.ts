/**
 * A one-file command loads only what it needs (issue 15: start-up): `crystallog peaks FILE` loads the
 * CLI frame, its own command module and the peak search, and no schema library, CSV package, SQLite
 * binding, portable SHA-256 (the file's hash is Node's native one) or other command's module. Checked on the compiled, bundled CLI as a user runs it
 * (`npm test` builds it first), by a module resolve hook that lists every file the process loads, read back to the compiled modules bundled in each.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { describe, expect, it } from 'vitest';

const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');

/** Every module URL the command resolves (stderr of a resolve hook), and its exit status. */
function modulesLoadedBy(args: string[]): { modules: string[]; status: number | null } {
  const dir = mkdtempSync(join(tmpdir(), 'crystallog-modules-'));
  const hook = join(dir, 'hook.mjs');
  writeFileSync(hook, "export async function resolve(spec, context, next) { const found = await next(spec, context); process.stderr.write(`module ${found.url}\\n`); return found; }\n");
  const register = `import { register } from 'node:module'; register(${JSON.stringify(pathToFileURL(hook).href)});`;
  const run = spawnSync(process.execPath, ['--import', `data:text/javascript,${encodeURIComponent(register)}`, join(root, 'bin', 'crystallog.js'), ...args], { encoding: 'utf8' });
  const modules = [...run.stderr.matchAll(/^module (.+)$/gm)].map((m) => m[1]!);
  return { modules, status: run.status };
}

/** The compiled modules (dist/src/...) a bundled command loaded: the inputs of each bundle file it loaded (modules.json, written by the build). */
function compiledModulesIn(loaded: string[]): string[] {
  const bundle = join(root, 'dist', 'cli-bundle');
  const inputs = JSON.parse(readFileSync(join(bundle, 'modules.json'), 'utf8')) as Record<string, string[]>;
  const files = loaded.filter((m) => m.startsWith(pathToFileURL(bundle).href)).map((m) => fileURLToPath(m).slice(bundle.length + 1));
  expect(files.length).toBeGreaterThan(0);
  return files.flatMap((file) => inputs[file] ?? [`(not in modules.json) ${file}`]);
}

describe('start-up of a one-file command', () => {
  it('peaks loads its own command and the peak search, and none of the heavy packages or other commands', () => {
    const { modules, status } = modulesLoadedBy(['peaks', join(root, 'test', 'fixtures', 'patterns', 'simulated-si111-header.csv'), '--json']);
    expect(status).toBe(0);
    const compiled = compiledModulesIn(modules);
    expect(compiled).toContain('dist/src/cli/commands/peaks.js');
    expect(compiled).toContain('dist/src/core/process/peaks.js');
    const heavy = modules.filter((m) => /\/node_modules\/(zod|papaparse|better-sqlite3|@noble\/hashes)\//.test(m));
    const otherCommands = compiled.filter((m) => /\/cli\/commands\/(?!peaks\.js|index\.js)[^/]+\.js$/.test(m));
    const library = compiled.filter((m) => m.includes('/node/library/'));
    expect(heavy).toEqual([]);
    expect(otherCommands).toEqual([]);
    expect(library).toEqual([]);
  }, 60_000);
});
