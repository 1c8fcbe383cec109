import { spawn, spawnSync } from 'node:child_process';
import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { ReferenceLibrary } from '../../src/node/library/store.js';
import { holderFile } from '../../src/node/library/write-lock.js';
import { syntheticPhase, useTempDir } from './helpers.js';

const tempDir = useTempDir();
const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const cli = join(root, 'bin', 'crystallog.js');

/** Another process that takes the write lock, says so, and holds it for holdMs (as a long import would). */
function holdWriteLock(path: string, holdMs: number): Promise<{ released: Promise<void> }> {
  const script = `
    const Database = require('better-sqlite3');
    const db = new Database(process.argv[1]);
    db.exec('BEGIN IMMEDIATE');
    process.stdout.write('locked\\n');
    Atomics.wait(new Int32Array(new SharedArrayBuffer(4)), 0, 0, Number(process.argv[2]));
    db.exec('COMMIT');
    db.close();`;
  const child = spawn(process.execPath, ['-e', script, path, String(holdMs)], { cwd: process.cwd(), stdio: ['ignore', 'pipe', 'inherit'] });
  const released = new Promise<void>((resolve, reject) => child.on('exit', (code) => (code === 0 ? resolve() : reject(new Error(`lock holder exited ${code}`)))));
  return new Promise((resolve, reject) => {
    child.stdout.on('data', (chunk: Buffer) => {
      if (chunk.toString().includes('locked')) resolve({ released });
    });
    child.on('error', reject);
  });
}

describe('two connections to one library (the app and the CLI)', () => {
  it('each sees the other’s committed changes, and reading does not wait for writing', () => {
    const path = join(tempDir(), 'shared.sqlite');
    const app = ReferenceLibrary.open(path);
    const cli = ReferenceLibrary.open(path);
    app.importReferences([syntheticPhase('from the app')]);
    expect(cli.all().map((r) => r.name)).toEqual(['from the app']);
    cli.importReferences([syntheticPhase('from the cli')]);
    expect(app.all().map((r) => r.name)).toEqual(['from the app', 'from the cli']); // the app's kept list is renewed
    cli.transaction(() => {
      cli.remove('from the app');
      expect(app.list().map((r) => r.name)).toEqual(['from the app', 'from the cli']); // WAL: the reader sees the last commit
    });
    expect(app.list().map((r) => r.name)).toEqual(['from the cli']);
    app.close();
    cli.close();
  });

  it('a write waits for another process’s write to finish instead of failing', async () => {
    const path = join(tempDir(), 'shared.sqlite');
    const lib = ReferenceLibrary.open(path);
    const { released } = await holdWriteLock(path, 600);
    const start = Date.now();
    lib.importReferences([syntheticPhase('after the wait')]);
    expect(Date.now() - start).toBeGreaterThan(300);
    await released;
    expect(lib.get('after the wait')).not.toBeNull();
    lib.close();
  });
});

/**
 * Another crystallog writer (the built library code) that takes the write lock in a transaction,
 * says so, and holds it for holdMs. Run from a script file, so its command line names it.
 */
function crystallogWriterHoldingLock(dir: string, path: string, holdMs: number): Promise<{ pid: number; released: Promise<void> }> {
  const script = join(dir, 'holder-writer.mjs');
  writeFileSync(
    script,
    `const { ReferenceLibrary } = await import(${JSON.stringify(join(root, 'dist', 'src', 'node', 'library', 'store.js'))});
    const library = ReferenceLibrary.open(process.argv[2]);
    library.transaction(() => {
      process.stdout.write('locked\\n');
      Atomics.wait(new Int32Array(new SharedArrayBuffer(4)), 0, 0, Number(process.argv[3]));
    });
    library.close();`,
  );
  const child = spawn(process.execPath, [script, path, String(holdMs)], { cwd: dir, stdio: ['ignore', 'pipe', 'inherit'] });
  const released = new Promise<void>((resolve, reject) => child.on('exit', (code) => (code === 0 ? resolve() : reject(new Error(`lock holder exited ${code}`)))));
  return new Promise((resolve, reject) => {
    child.stdout.on('data', (chunk: Buffer) => {
      if (chunk.toString().includes('locked')) resolve({ pid: child.pid!, released });
    });
    child.on('error', reject);
  });
}

describe('an import kept waiting by another writer’s lock', () => {
  function lockedImport(dir: string, path: string, waitMs: number) {
    const refs = join(dir, 'waiting.json');
    writeFileSync(refs, JSON.stringify(syntheticPhase('waiting import')));
    const start = Date.now();
    const run = spawnSync(process.execPath, [cli, 'library', 'import', refs, '--library', path, '--json'], {
      encoding: 'utf8',
      env: { ...process.env, CRYSTALLOG_LOCK_WAIT_MS: String(waitMs) },
    });
    return { run, waitedMs: Date.now() - start };
  }

  function seeded(dir: string): { path: string; bytes: Buffer } {
    const path = join(dir, 'locked.sqlite');
    const lib = ReferenceLibrary.open(path);
    lib.importReferences([syntheticPhase('already there')]);
    lib.close();
    return { path, bytes: readFileSync(path) };
  }

  const namesIn = (path: string) => {
    const lib = ReferenceLibrary.open(path, { readOnly: true });
    const names = lib.all().map((r) => r.name);
    lib.close();
    return names;
  };

  it('says it waits, then exits 2 naming the library file and the crystallog that holds it, and changes nothing', async () => {
    const dir = tempDir();
    const { path, bytes } = seeded(dir);
    const { pid, released } = await crystallogWriterHoldingLock(dir, path, 5000);
    const { run, waitedMs } = lockedImport(dir, path, 1500);
    expect(run.status, run.stderr).toBe(2);
    const [waiting, failure] = run.stderr.trim().split('\n');
    expect(waiting).toMatch(new RegExp(`^crystallog: ${path}: "holder-writer ${path} 5000" \\(pid ${pid}, writing since \\d{4}-\\d\\d-\\d\\dT[^)]*\\) is writing to this library; waiting up to 1.5 s for it to finish$`));
    expect(failure).toMatch(new RegExp(`^crystallog: ${path}: the library is still locked after waiting 1.5 s: "holder-writer ${path} 5000" \\(pid ${pid}, .*nothing was changed`));
    expect(failure).not.toMatch(/database is locked|internal fault/);
    expect(JSON.parse(run.stdout).error.file).toBe(path);
    expect(waitedMs).toBeGreaterThanOrEqual(1500);
    expect(namesIn(path)).toEqual(['already there']);
    expect(readFileSync(path).equals(bytes)).toBe(true);
    await released;
    expect(namesIn(path)).toEqual(['already there']);
    expect(existsSync(holderFile(path))).toBe(false); // the note goes with the transaction
  }, 30_000);

  it('names "another program" when the holder left no note (another SQLite client)', async () => {
    const dir = tempDir();
    const { path, bytes } = seeded(dir);
    const { released } = await holdWriteLock(path, 4000);
    const { run } = lockedImport(dir, path, 1500);
    expect(run.status, run.stderr).toBe(2);
    expect(run.stderr).toContain(`crystallog: ${path}: another program is writing to this library; waiting up to 1.5 s`);
    expect(run.stderr).toContain(`crystallog: ${path}: the library is still locked after waiting 1.5 s: another program is writing to it`);
    expect(readFileSync(path).equals(bytes)).toBe(true);
    await released;
    expect(namesIn(path)).toEqual(['already there']);
  }, 30_000);

  it('imports once the holder lets go within the wait', async () => {
    const dir = tempDir();
    const { path } = seeded(dir);
    const { released } = await crystallogWriterHoldingLock(dir, path, 4000);
    const { run } = lockedImport(dir, path, 10_000);
    expect(run.status, run.stderr).toBe(0);
    expect(run.stderr).toMatch(/holder-writer.* is writing to this library; waiting up to 10 s/);
    await released;
    expect(namesIn(path)).toEqual(['already there', 'waiting import']);
  }, 30_000);
});
