import { afterEach, describe, expect, it, vi } from 'vitest';
import { runCommand } from '../../src/cli/common/run-command.js';
import { InputError } from '../../src/core/errors.js';

/** What runCommand writes to stderr and stdout, and the exit code it sets, when its work throws `err`. */
async function failureOf(err: Error, file?: string): Promise<{ stderr: string; json: { error: { message: string; file: string | null } }; exitCode: number }> {
  const stderr: string[] = [];
  const stdout: string[] = [];
  vi.spyOn(process.stderr, 'write').mockImplementation((chunk) => (stderr.push(String(chunk)), true));
  vi.spyOn(process.stdout, 'write').mockImplementation((chunk) => (stdout.push(String(chunk)), true));
  await runCommand(true, () => { throw err; }, () => '', file);
  vi.restoreAllMocks();
  const exitCode = Number(process.exitCode);
  process.exitCode = 0;
  return { stderr: stderr.join(''), json: JSON.parse(stdout.join('')), exitCode };
}

afterEach(() => {
  vi.restoreAllMocks();
  process.exitCode = 0;
});

describe('a one-file command names its file on failure', () => {
  it('an internal fault (exit 1) names the file on stderr and in the JSON error', async () => {
    const { stderr, json, exitCode } = await failureOf(new RangeError('Invalid typed array length: 5e+299'), 'data/sample.xy');
    expect(exitCode).toBe(1);
    expect(stderr).toBe('crystallog: internal fault: data/sample.xy: Invalid typed array length: 5e+299\n');
    expect(json.error.file).toBe('data/sample.xy');
  });

  it('a user error keeps its own place (exit 2)', async () => {
    const { stderr, json, exitCode } = await failureOf(new InputError('"x" is not a number', { file: 'data/sample.xy', line: 7 }), 'data/sample.xy');
    expect(exitCode).toBe(2);
    expect(stderr).toBe('crystallog: data/sample.xy, line 7: "x" is not a number\n');
    expect(json.error.file).toBe('data/sample.xy');
  });
});
