import { execFileSync } from 'node:child_process';
import { cpSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';

// Every README line that starts with `npx crystallog` runs as written (globs expanded by bash), in a
// temp copy of examples/ and reference-patterns/ so nothing is written into the repo. The GNU parallel
// and Slurm recipes do not start with `npx crystallog`, so this extraction rule skips them.
const root = resolve(__dirname, '../..');
const bin = join(root, 'bin', 'crystallog.js');
const lines = readFileSync(join(root, 'README.md'), 'utf8').split('\n').filter((l) => l.startsWith('npx crystallog '));
const work = mkdtempSync(join(tmpdir(), 'crystallog-readme-'));
cpSync(join(root, 'examples'), join(work, 'examples'), { recursive: true });
cpSync(join(root, 'reference-patterns'), join(work, 'reference-patterns'), { recursive: true });
afterAll(() => rmSync(work, { recursive: true, force: true }));

describe('README command lines', () => {
  it('has command lines to check', () => expect(lines.length).toBeGreaterThanOrEqual(7));
  // In order: later lines use the library and instrument profile the earlier ones made.
  for (const line of lines) {
    it(line, () => {
      const command = line.replace(/^npx crystallog/, `node ${JSON.stringify(bin)}`);
      const stdout = execFileSync('bash', ['-c', command], { cwd: work, encoding: 'utf8', stdio: ['ignore', 'pipe', 'pipe'], maxBuffer: 64 << 20 });
      if (/\s--json(\s|$)/.test(line)) expect(() => JSON.parse(stdout)).not.toThrow();
    }, 60_000);
  }
});
