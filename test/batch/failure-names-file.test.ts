import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { analyzeCommand, type AnalyzeIo } from '../../src/cli/commands/analyze.js';
import { fileFailure } from '../../src/node/batch.js';
import { ReferenceLibrary } from '../../src/node/library/store.js';

let dir = '';
let library = '';

beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'crystallog-batch-failure-'));
  library = join(dir, 'library.db');
  const store = ReferenceLibrary.open(library);
  store.importReferences([{ name: 'phase-A', formula: 'X', tags: [], source: 'made up for this test', lines: [{ d: 3.1, intensity: 100 }] }]);
  store.close();
});

afterAll(() => {
  if (dir) rmSync(dir, { recursive: true, force: true });
});

/** A stand-in worker that says it is ready, then fails on its first file the way `body` does. */
function failingWorker(name: string, body: string): URL {
  const file = join(dir, name);
  writeFileSync(file, `import { parentPort } from 'node:worker_threads';\nparentPort.on('message', () => { ${body} });\nparentPort.postMessage({ ready: true });\n`);
  return pathToFileURL(file);
}

async function stderrOf(workerScript: URL, files: string[]): Promise<{ lines: string[]; exitCode: number }> {
  const err: string[] = [];
  const io: AnalyzeIo = { stdout: () => {}, stderr: (t) => err.push(t), progress: false, workerScript };
  const exitCode = await analyzeCommand(files, { library, json: true, workers: '1' }, io);
  return { lines: err.join('').trimEnd().split('\n'), exitCode };
}

describe('every per-file failure line of a batch names the file', () => {
  it('an internal fault thrown in the worker names the file it was working on', async () => {
    const files = [join(dir, 'first.xy'), join(dir, 'second.xy')];
    const { lines, exitCode } = await stderrOf(failingWorker('throws.mjs', "throw new RangeError('Invalid typed array length: 1e12');"), files);
    expect(exitCode).toBe(1);
    expect(lines).toHaveLength(2);
    lines.forEach((line, i) => {
      expect(line).toContain(files[i]);
      expect(line).toContain('internal fault');
    });
  });

  it('a worker that stops on a file names that file', async () => {
    const file = join(dir, 'stops.xy');
    const { lines, exitCode } = await stderrOf(failingWorker('exits.mjs', 'process.exit(3);'), [file]);
    expect(exitCode).toBe(1);
    expect(lines).toEqual([expect.stringContaining(file)]);
    expect(lines[0]).toContain('exit code 3');
  });

  it('a message that names the file already is kept as it is; one that does not gets the file in front', () => {
    expect(fileFailure('a.xy', 'a.xy, line 3: "x" is not a number', 'input')).toBe('a.xy, line 3: "x" is not a number');
    expect(fileFailure('a.xy', 'Invalid typed array length: 5e9', 'internal')).toBe('a.xy: internal fault: Invalid typed array length: 5e9');
    expect(fileFailure('a.xy', 'threshold of 0 σ: give a positive number', 'input')).toBe('a.xy: threshold of 0 σ: give a positive number');
  });
});
