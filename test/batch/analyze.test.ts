import { build } from 'esbuild';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { analyzeCommand, type AnalyzeCommandOptions, type AnalyzeIo } from '../../src/cli/commands/analyze.js';
import { patternToXyText, simulatePattern } from '../../src/core/crystal/simulate.js';
import { InputError } from '../../src/core/errors.js';
import type { Reference } from '../../src/core/model/reference.js';
import { ReferenceLibrary } from '../../src/node/library/store.js';
import { analyzeFiles, shareSetup } from '../../src/node/batch.js';
import { loadReferencesWithIndex } from '../../src/cli/common/io.js';
import { dFromTwoTheta } from '../../src/core/model/units.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';

const cu = anodeWavelength('Cu');
let dir = '';
let workerScript: URL;
let library = '';
const files: string[] = [];

/** A synthetic phase with lines at the given 2θ (Cu Kα1) and relative intensities. */
function phase(name: string, lines: Array<[number, number]>): Reference {
  return { name, formula: 'X', tags: [], source: 'simulated for this test', lines: lines.map(([tt, i]) => ({ d: dFromTwoTheta(tt, cu.lambda1), intensity: i })) };
}

const phaseA = phase('phase-A', [[18.2, 100], [27.5, 45], [33.1, 70], [41.6, 30], [49.3, 55]]);
const phaseB = phase('phase-B', [[15.4, 100], [30.3, 60], [37.8, 40], [45.1, 35], [53.6, 25]]);

function writePattern(name: string, ref: Reference, seed: number, sizeNm: number): string {
  const pattern = simulatePattern({
    phases: [{ lines: ref.lines, scale: 1, sizeNm }],
    wavelength: cu,
    twoThetaMinDeg: 10,
    twoThetaMaxDeg: 60,
    stepDeg: 0.02,
    peakCounts: 4000,
    noiseSeed: seed,
  });
  const file = join(dir, name);
  writeFileSync(file, patternToXyText(pattern, ['simulated for a test; not a measurement']));
  return file;
}

interface Captured {
  stdout: string;
  stderr: string;
  exitCode: number;
}

async function run(options: Partial<AnalyzeCommandOptions>, inputs: string[] = files): Promise<Captured> {
  const out: string[] = [];
  const err: string[] = [];
  const io: AnalyzeIo = { stdout: (t) => out.push(t), stderr: (t) => err.push(t), progress: false, workerScript };
  const exitCode = await analyzeCommand(inputs, { library, json: true, ...options }, io);
  return { stdout: out.join(''), stderr: err.join(''), exitCode };
}

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'crystallog-batch-test-'));
  // Tests run from TypeScript sources; the worker thread needs JavaScript, so bundle it once, inside the
  // project so that its packages (the SQLite binding a worker reads lines with) resolve from node_modules.
  const outfile = join(fileURLToPath(new URL('../../node_modules/.cache/crystallog-test/', import.meta.url)), `batch-worker-${process.pid}.mjs`);
  await build({ entryPoints: [fileURLToPath(new URL('../../src/node/batch-worker.ts', import.meta.url))], bundle: true, platform: 'node', format: 'esm', packages: 'external', outfile, logLevel: 'silent' });
  workerScript = pathToFileURL(outfile);
  library = join(dir, 'library.db');
  const store = ReferenceLibrary.open(library);
  store.importReferences([phaseA, phaseB]);
  store.close();
  files.push(writePattern('a1.xy', phaseA, 11, 40), writePattern('b1.xy', phaseB, 12, 60), writePattern('a2.xy', phaseA, 13, 80));
  writeFileSync(join(dir, 'broken.xy'), '# not a pattern\nhello world\n');
  files.push(join(dir, 'broken.xy'), writePattern('b2.xy', phaseB, 14, 30));
}, 60_000);

afterAll(() => {
  if (dir) rmSync(dir, { recursive: true, force: true });
  if (workerScript) rmSync(workerScript, { force: true });
});

describe('crystallog analyze over many files', () => {
  it('returns one result per file in input order, the bad file in its place with its error, and exit code 2', async () => {
    const { stdout, stderr, exitCode } = await run({ workers: '2' });
    const doc = JSON.parse(stdout) as { files: Array<{ file: string; error?: string; match?: { phases: Array<{ name: string; verdict: string }> } }> };
    expect(doc.files.map((f) => f.file)).toEqual(files);
    expect(doc.files[3].error).toMatch(/broken\.xy/);
    expect(stderr).toMatch(/broken\.xy/);
    expect(exitCode).toBe(2);
    const expected = ['phase-A', 'phase-B', 'phase-A', null, 'phase-B'];
    doc.files.forEach((f, i) => {
      if (expected[i] === null) return;
      expect(f.error).toBeUndefined();
      expect(f.match!.phases[0]).toMatchObject({ name: expected[i], verdict: 'present' });
    });
  }, 60_000);

  it('gives the same results when the workers read the lines from the library file as with every line handed to them', async () => {
    const good = files.filter((f) => !f.endsWith('broken.xy'));
    const fromFile = loadReferencesWithIndex(library); // the library is closed again: only the workers read lines
    const store = ReferenceLibrary.open(library, { readOnly: true });
    const inMemory = store.all();
    store.close();
    const settings = {};
    expect('library' in shareSetup({ ...fromFile, instrument: null, settings }).lines).toBe(true); // the lines stay in the file
    const viaFile = await analyzeFiles(good, { ...fromFile, instrument: null, settings }, { workers: 2, workerScript });
    const viaMemory = await analyzeFiles(good, { references: inMemory, instrument: null, settings }, { workers: 2, workerScript });
    expect(viaFile.every((o) => o.error === null && o.json !== null)).toBe(true);
    expect(viaFile.map((o) => o.json)).toEqual(viaMemory.map((o) => o.json));
  }, 60_000);

  it('gives byte-identical JSON with one worker and with three', async () => {
    const one = await run({ workers: '1' });
    const three = await run({ workers: '3' });
    expect(one.stdout.length).toBeGreaterThan(1000);
    expect(three.stdout).toBe(one.stdout);
  }, 60_000);

  it('streams one parseable JSON line per file with its input index (--jsonl)', async () => {
    const { stdout, exitCode } = await run({ json: false, jsonl: true, workers: '2' });
    const lines = stdout.trimEnd().split('\n').map((line) => JSON.parse(line) as { index: number; file: string; error?: string; peaks?: unknown[] });
    expect(lines).toHaveLength(files.length);
    expect(lines.map((l) => l.index).sort((a, b) => a - b)).toEqual([0, 1, 2, 3, 4]);
    for (const line of lines) expect(line.file).toBe(files[line.index]);
    expect(lines.filter((l) => l.error !== undefined).map((l) => l.index)).toEqual([3]);
    expect(lines.find((l) => l.index === 0)!.peaks!.length).toBeGreaterThanOrEqual(5);
    expect(exitCode).toBe(2);
  }, 60_000);

  it('exits 0 when every file is good', async () => {
    const good = files.filter((f) => !f.endsWith('broken.xy'));
    const { exitCode, stdout } = await run({ workers: '2' }, good);
    expect(exitCode).toBe(0);
    expect((JSON.parse(stdout) as { files: unknown[] }).files).toHaveLength(good.length);
  }, 60_000);

  it('takes file paths from a list (--files-from), one per line, skipping blank and # lines', async () => {
    const list = join(dir, 'list.txt');
    writeFileSync(list, `# two patterns\n${files[1]}\n\n${files[0]}\n`);
    const { stdout, exitCode } = await run({ workers: '1', filesFrom: list }, []);
    expect(exitCode).toBe(0);
    expect((JSON.parse(stdout) as { files: Array<{ file: string }> }).files.map((f) => f.file)).toEqual([files[1], files[0]]);
  }, 60_000);

  it('searches with the background width given by --background and records it; refuses an impossible one', async () => {
    const given = await run({ workers: '1', background: '0.5' }, [files[0]]);
    const automatic = await run({ workers: '1' }, [files[0]]);
    type Settings = { files: Array<{ settings: { backgroundHalfWidthDeg: number | null }; peaks: Array<{ area: number }> }> };
    const a = (JSON.parse(given.stdout) as Settings).files[0];
    const b = (JSON.parse(automatic.stdout) as Settings).files[0];
    expect(a.settings.backgroundHalfWidthDeg).toBe(0.5);
    expect(b.settings.backgroundHalfWidthDeg).toBeNull();
    expect(a.peaks.map((p) => p.area)).not.toEqual(b.peaks.map((p) => p.area));
    await expect(run({ background: '-1' })).rejects.toThrow(/option --background -1: background clipping half-width must be between 0.1 and 20 ° 2θ/);
  }, 60_000);

  it('refuses a target that is not in the library before starting any worker', async () => {
    await expect(run({ target: 'no-such-phase' })).rejects.toThrow(InputError);
    await expect(run({ target: 'no-such-phase' })).rejects.toThrow(/no-such-phase/);
  });
});
