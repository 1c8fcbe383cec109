import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { expect, it } from 'vitest';

const root = resolve(__dirname, '../..');
const bin = JSON.stringify(join(root, 'bin', 'crystallog.js'));

it('crystallog analyze … | head ends quietly with exit 0 (EPIPE is not a fault)', () => {
  const work = mkdtempSync(join(tmpdir(), 'crystallog-pipe-'));
  try {
    const script = [
      'set -o pipefail',
      `node ${bin} library import ${JSON.stringify(root)}/reference-patterns/*.json --library lab.db > /dev/null`,
      `node ${bin} analyze ${JSON.stringify(root)}/examples/*.xy --library lab.db --jsonl | head -c 20 > /dev/null`,
    ].join('\n');
    const run = spawnSync('bash', ['-c', script], { cwd: work, encoding: 'utf8' });
    expect(run.stderr).not.toMatch(/EPIPE|Unhandled|at .*\.js:\d+/);
    expect(run.status).toBe(0);
  } finally {
    rmSync(work, { recursive: true, force: true });
  }
}, 60_000);
