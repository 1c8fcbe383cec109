import { spawn, spawnSync } from 'node:child_process';
import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { ReferenceLibrary } from '../../src/node/library/store.js';
import { holderFile } from '../../src/node/library/write-lock.js';
import { seededUniform } from '../../src/core/numeric/random.js';
import Database from 'better-sqlite3';
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

describe('kill -9 in the middle of a large import, again and again', () => {
  const REFERENCES = 1500;

  /** One import's references, named by its round so the library's counts tell what each import left. */
  function generatedImport(dir: string, round: number): string {
    const file = join(dir, `round-${round}.json`);
    const refs = Array.from({ length: REFERENCES }, (_, k) => ({
      ...syntheticPhase(`round-${round}-${k}`, 40, ['generated']),
      lines: syntheticPhase('', 40).lines.map((line, i) => ({ d: line.d * (1 + k * 1e-5), intensity: i === 0 ? 100 : (line.intensity + k) % 100 })),
    }));
    writeFileSync(file, JSON.stringify(refs));
    return file;
  }

  const sleep = (ms: number) => new Promise((resolve) => setTimeout(resolve, ms));

  /**
   * Start `library import FILE`; kill it with SIGKILL killAfterMs after it starts, or (when inWrite)
   * killAfterMs after its write transaction began (its holder note appeared). Resolves when it has ended.
   */
  async function importAndKill(file: string, path: string, killAfterMs: number | null, inWrite: boolean) {
    const child = spawn(process.execPath, [cli, 'library', 'import', file, '--library', path], { stdio: ['ignore', 'ignore', 'pipe'] });
    let stderr = '';
    child.stderr.on('data', (c: Buffer) => (stderr += c.toString()));
    const ended = new Promise<{ code: number | null; signal: NodeJS.Signals | null }>((resolve) => child.on('exit', (code, signal) => resolve({ code, signal })));
    let exited = false;
    void ended.then(() => (exited = true));
    const started = Date.now();
    let writeStartedAt: number | null = null;
    while (!exited && (inWrite || killAfterMs === null)) {
      if (existsSync(holderFile(path))) {
        writeStartedAt = Date.now();
        break;
      }
      await sleep(1);
    }
    if (killAfterMs !== null && !exited) {
      await sleep(killAfterMs);
      child.kill('SIGKILL');
    }
    const end = await ended;
    return { ...end, stderr, totalMs: Date.now() - started, writeMs: writeStartedAt === null ? null : Date.now() - writeStartedAt };
  }

  function inspect(path: string, round: number) {
    const db = new Database(path);
    const integrity = db.pragma('integrity_check', { simple: true });
    const count = (sql: string) => (db.prepare(sql).get(`round-${round}-%`) as { n: number }).n;
    const entries = count(`SELECT count(*) AS n FROM reference_entry WHERE name LIKE ?`);
    const versions = count(`SELECT count(*) AS n FROM reference_version WHERE name LIKE ?`);
    const tags = count(`SELECT count(*) AS n FROM reference_tag t JOIN reference_entry e ON e.id = t.entry_id WHERE e.name LIKE ?`);
    const total = (db.prepare(`SELECT count(*) AS n FROM reference_entry`).get() as { n: number }).n;
    db.close();
    return { integrity, entries, versions, tags, total };
  }

  it('leaves a whole library holding all or none of each killed import, and the next import succeeds', async () => {
    const dir = tempDir();
    const path = join(dir, 'killed.sqlite');
    // Round 0 runs to its end: its times set the range of the kill moments.
    const whole = await importAndKill(generatedImport(dir, 0), path, null, false);
    expect(whole.code, whole.stderr).toBe(0);
    expect(inspect(path, 0)).toMatchObject({ integrity: 'ok', entries: REFERENCES, versions: REFERENCES, tags: REFERENCES });
    const totalMs = whole.totalMs;
    const writeMs = whole.writeMs!;
    expect(writeMs).toBeGreaterThan(20);

    const uniform = seededUniform(20261202);
    let expectedTotal = REFERENCES;
    const outcomes: string[] = [];
    let killedInWrite = 0;
    for (let round = 1; round <= 10; round++) {
      // Even rounds: a moment inside the write transaction; odd rounds: any moment of the whole run.
      const inWrite = round % 2 === 0;
      // (Inside the write: within three quarters of round 0's write, so a faster round is still mid-write.)
      const killAfterMs = Math.floor(uniform() * (inWrite ? 0.75 * writeMs : 0.9 * totalMs));
      const killed = await importAndKill(generatedImport(dir, round), path, killAfterMs, inWrite);
      const leftNote = existsSync(holderFile(path));
      if (killed.signal === 'SIGKILL' && leftNote) killedInWrite++;
      const after = inspect(path, round);
      expect(after.integrity, `round ${round}`).toBe('ok');
      expect([0, REFERENCES], `round ${round}: ${after.entries} of ${REFERENCES} references`).toContain(after.entries);
      expect(after.versions).toBe(after.entries);
      expect(after.tags).toBe(after.entries);
      if (killed.signal !== 'SIGKILL') expect(after.entries, 'an import not killed finished').toBe(REFERENCES);
      expectedTotal += after.entries;
      outcomes.push(`${round}:${inWrite ? 'write' : 'run'}+${killAfterMs}ms:${killed.signal ?? 'ended'}:${after.entries === 0 ? 'none' : 'all'}`);

      // The next import after the kill: the library opens, a stale holder note is ignored, and it is stored.
      const next = join(dir, `after-${round}.json`);
      writeFileSync(next, JSON.stringify(syntheticPhase(`after-kill-${round}`)));
      const followUp = spawnSync(process.execPath, [cli, 'library', 'import', next, '--library', path], { encoding: 'utf8' });
      expect(followUp.status, followUp.stderr).toBe(0);
      expect(followUp.stderr).not.toMatch(/waiting/);
      expectedTotal += 1;
      expect(inspect(path, round).total).toBe(expectedTotal);
      expect(existsSync(holderFile(path))).toBe(false);
    }
    console.log(`kill -9 rounds (import of ${REFERENCES} references; whole run ${totalMs} ms, write ${writeMs} ms): ${outcomes.join(', ')}`);
    // Kills aimed inside the write did land there (their holder note was left behind), so all-or-none was put to the test.
    expect(killedInWrite).toBeGreaterThanOrEqual(2);
  }, 300_000);
});
