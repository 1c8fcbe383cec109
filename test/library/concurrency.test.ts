import { spawn } from 'node:child_process';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { ReferenceLibrary } from '../../src/node/library/store.js';
import { syntheticPhase, useTempDir } from './helpers.js';

const tempDir = useTempDir();

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
