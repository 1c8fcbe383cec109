/**
 * The desktop shell's engine process: the app's API run by the system's Node.js in a child process (the
 * shell's own runtime has another ABI, so better-sqlite3 cannot load there). Runs the compiled engine in
 * dist/ (`npm test` builds it first), as the shell does.
 */
import { existsSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';
import { startEngine } from '../../src/app/engine-client.js';

const script = fileURLToPath(new URL('../../dist/src/app/engine-process.js', import.meta.url));
const dataDir = mkdtempSync(join(tmpdir(), 'crystallog-engine-test-'));

afterAll(() => rmSync(dataDir, { recursive: true, force: true }));

describe('the engine process behind the desktop window', () => {
  it('answers API calls from its own process, with the same checks and sentences as in-process', async () => {
    expect(existsSync(script), 'the engine is not built: run "npm run build"').toBe(true);
    const engine = startEngine({ nodePath: process.execPath, script, env: { CRYSTALLOG_DATA_DIR: dataDir } });
    await engine.ready;
    const info = await engine.call('app.info', {});
    expect(info.ok && (info.result as { mode: string }).mode).toBe('electron');
    expect(await engine.call('project.drop-all', {})).toEqual({ ok: false, error: { kind: 'input', message: 'Crystallog has no request called "project.drop-all".' } });
    // Calls may overlap; each gets its own reply.
    const [created, listed] = await Promise.all([engine.call('project.create', { name: 'Engine check' }), engine.call('library.list', {})]);
    expect(created.ok).toBe(true);
    expect(listed.ok && (listed.result as unknown[]).length).toBeGreaterThan(0);
    const state = await engine.call('project.state', {});
    expect(state.ok && (state.result as { project: { name: string } }).project.name).toBe('Engine check');
    engine.close();
  }, 30_000);

  it('says the engine stopped, instead of hanging, when its process has gone', async () => {
    const engine = startEngine({ nodePath: process.execPath, script, env: { CRYSTALLOG_DATA_DIR: dataDir } });
    await engine.ready;
    engine.close();
    await new Promise((resolve) => setTimeout(resolve, 500));
    const reply = await engine.call('app.info', {});
    expect(reply.ok).toBe(false);
    expect(!reply.ok && reply.error.message).toMatch(/engine stopped/);
  }, 30_000);

  it('fails to start with the reason when the Node.js executable cannot be run', async () => {
    const engine = startEngine({ nodePath: join(dataDir, 'no-such-node'), script });
    await expect(engine.ready).rejects.toThrow(/no-such-node/);
  });
});
