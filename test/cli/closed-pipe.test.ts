/**
 * `crystallog analyze … | head`: when the reader stops early the command ends quietly, without a
 * stack trace (the compiled CLI, as a user runs it; `npm test` builds it first).
 */
import { spawnSync } from 'node:child_process';
import { copyFileSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { ReferenceLibrary } from '../../src/node/library/store.js';
import { loadSeedReferences } from '../../src/node/library/seed.js';

const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');

describe('a closed pipe', () => {
  it('ends analyze quietly when the reader stops after one line', () => {
    const dir = mkdtempSync(join(tmpdir(), 'crystallog-pipe-'));
    const library = join(dir, 'lab.sqlite');
    const lib = ReferenceLibrary.open(library);
    lib.importReferences(loadSeedReferences());
    lib.close();
    const files = Array.from({ length: 30 }, (_, i) => {
      const file = join(dir, `si-${i}.xy`);
      copyFileSync(join(root, 'test', 'fixtures', 'patterns', 'simulated-si111.xy'), file);
      return file;
    });
    const script = `node ${JSON.stringify(join(root, 'bin', 'crystallog.js'))} analyze ${files.map((f) => JSON.stringify(f)).join(' ')} --library ${JSON.stringify(library)} --workers 1 --jsonl | head -n 1`;
    const run = spawnSync('bash', ['-o', 'pipefail', '-c', script], { encoding: 'utf8' });
    expect(run.stdout.trim().split('\n')).toHaveLength(1);
    expect(JSON.parse(run.stdout).file).toBe(files[0]);
    expect(run.stderr).not.toMatch(/EPIPE|at .*\.js:\d+|internal fault/);
    expect(run.status).toBe(0);
  }, 60_000);
});
