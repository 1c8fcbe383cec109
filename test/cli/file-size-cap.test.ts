/** The size cap on pattern files is the user's to raise or lower (CRYSTALLOG_MAX_FILE_MB), with a sentence that says how. */
import { spawnSync } from 'node:child_process';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { maxPatternBytes } from '../../src/core/model/file-limits.js';

const cli = join(process.cwd(), 'bin', 'crystallog.js');
const file = 'examples/simulated_MAPbI3_as-made.xy';
const peaks = (env: Record<string, string>) => spawnSync(process.execPath, [cli, 'peaks', file, '--json'], { encoding: 'utf8', env: { ...process.env, ...env } });

describe('the pattern file size cap', () => {
  it('is 200 MB unless the user sets a positive number of MB', () => {
    expect(maxPatternBytes(undefined)).toBe(200 * 1024 * 1024);
    expect(maxPatternBytes('500')).toBe(500 * 1024 * 1024);
    expect(maxPatternBytes('-3')).toBe(200 * 1024 * 1024);
    expect(maxPatternBytes('lots')).toBe(200 * 1024 * 1024);
  });

  it('refuses a file over a lowered cap, naming the file and the setting, and reads it under the default', () => {
    const small = peaks({ CRYSTALLOG_MAX_FILE_MB: '0.01' });
    expect(small.status).toBe(2);
    expect(small.stderr).toContain(file);
    expect(small.stderr).toMatch(/the file has 0 MB, more than the 0 MB a pattern file may have here; .* set CRYSTALLOG_MAX_FILE_MB to a larger number of MB/);
    expect(JSON.parse(small.stdout).error.file).toBe(file);
    const normal = peaks({});
    expect(normal.status).toBe(0);
    expect(JSON.parse(normal.stdout).peaks.length).toBeGreaterThan(10);
  });
});
