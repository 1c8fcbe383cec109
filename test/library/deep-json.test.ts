/**
 * A reference JSON file nested 100 000 deep ([[[[...]]]] or {"a":{"a":...}}) overflowed the stack and
 * the command died as an internal fault (exit 1). It is the user's file that is wrong: exit 2 with a
 * sentence naming the file and line. Brackets inside strings are text and do not count.
 */
import { spawnSync } from 'node:child_process';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { useTempDir } from './helpers.js';

const tempDir = useTempDir();
const root = process.cwd();
const crystallog = (...args: string[]) => spawnSync(process.execPath, [join(root, 'bin/crystallog.js'), ...args], { encoding: 'utf8' });

describe('crystallog library import of a deeply nested JSON file', () => {
  it.each([
    ['arrays', '\n' + '['.repeat(100_000) + ']'.repeat(100_000)],
    ['objects', '\n' + '{"a":'.repeat(100_000) + '1' + '}'.repeat(100_000)],
  ])('refuses %s nested 100 000 deep with exit 2, naming the file and line', { timeout: 60_000 }, (_kind, text) => {
    const dir = tempDir();
    const file = join(dir, 'deep.json');
    writeFileSync(file, text);
    const run = crystallog('library', 'import', file, '--library', join(dir, 'lib.sqlite'), '--json');
    expect(run.status, run.stderr).toBe(2);
    expect(run.stderr).toContain(`${file}, line 2: the JSON nests arrays and objects more than 64 deep`);
    expect(JSON.parse(run.stdout).error).toMatchObject({ file, line: 2 });
  });

  it('counts no bracket inside a string: a name of 200 brackets and an escaped quote imports', { timeout: 60_000 }, () => {
    const dir = tempDir();
    const file = join(dir, 'odd-name.json');
    const name = `${'['.repeat(100)}\\"${'{'.repeat(100)}`;
    writeFileSync(file, `[{"name": "${name}", "source": "test", "lines": [{"d": 3.1, "intensity": 100, "hkl": [1, 1, 1]}]}]`);
    const run = crystallog('library', 'import', file, '--library', join(dir, 'lib.sqlite'), '--json');
    expect(run.status, run.stderr).toBe(0);
    expect(JSON.parse(run.stdout).added).toEqual([`${'['.repeat(100)}"${'{'.repeat(100)}`]);
  });
});
