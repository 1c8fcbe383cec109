/**
 * One analysis core behind every door: the demo's files through `crystallog analyze --json`,
 * `crystallog size --json`, `crystallog match --json` and the app API give the same phases, verdicts
 * and sizes (the commands run the compiled CLI, as a user does; `npm test` builds it first).
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createAppApi } from '../../src/app/api.js';
import type { SampleDetail, SampleSummary } from '../../src/api/contract.js';
import { freshDataDir } from '../app/fixtures.js';

const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const cli = join(root, 'bin', 'crystallog.js');
const dataDir = freshDataDir('crystallog-one-core-');
const api = createAppApi({ mode: 'browser', dataDir });
const library = join(dataDir, 'library.sqlite');
const work = mkdtempSync(join(tmpdir(), 'crystallog-one-core-cli-'));
const instrument = join(work, 'instrument.json');
const TARGET = 'methylammonium lead iodide';

async function ok<T>(method: string, params: unknown): Promise<T> {
  const reply = await api.call(method, params);
  if (!reply.ok) throw new Error(`${method}: ${reply.error.message}`);
  return reply.result as T;
}

function crystallog(...args: string[]): unknown {
  const run = spawnSync(process.execPath, [cli, ...args, '--json'], { encoding: 'utf8', cwd: work });
  if (run.status !== 0) throw new Error(`crystallog ${args.join(' ')} exited ${run.status}: ${run.stderr}`);
  return JSON.parse(run.stdout);
}

interface PhaseView {
  name: string;
  verdict: string;
}
const phasesOf = (match: { phases: PhaseView[] }) => match.phases.map((p) => ({ name: p.name, verdict: p.verdict }));
const sizeOf = (size: { scherrer: { sizeNm: number | null; sizeSigmaNm: number | null } }) => size.scherrer;

// Humid-air samples at 0, 6 and 48 h, and one workup variant: the doors once disagreed on these.
const DEMO_SAMPLES = [3, 4, 6, 8];
const samples: Array<{ file: string; detail: SampleDetail }> = [];

beforeAll(async () => {
  expect(existsSync(cli)).toBe(true);
  const { steps } = await ok<{ steps: number }>('project.demo', {});
  expect(steps).toBeGreaterThan(Math.max(...DEMO_SAMPLES));
  for (const index of DEMO_SAMPLES) {
    const summary = await ok<SampleSummary>('project.demoSample', { index });
    const detail = await ok<SampleDetail>('sample.get', { id: summary.id });
    samples.push({ file: join(dataDir, 'demo-files', summary.fileName), detail });
  }
  // The same standard file and reference as the app's profile.
  crystallog('instrument', join(dataDir, 'demo-files', 'simulated_LaB6_standard.xy'), '--standard', 'lanthanum hexaboride', '--library', library, '--out', instrument);
}, 300_000);

afterAll(() => api.close());

describe('one analysis core behind every door', () => {
  it('analyze, match, size and the app give the same phases, verdicts and sizes', () => {
    expect(samples.length).toBe(DEMO_SAMPLES.length);
    const files = samples.map((s) => s.file);
    const batch = crystallog('analyze', ...files, '--library', library, '--target', TARGET, '--instrument', instrument) as {
      files: Array<{ match: { phases: PhaseView[] }; size: { scherrer: { sizeNm: number | null; sizeSigmaNm: number | null } } }>;
    };
    samples.forEach(({ file, detail }, i) => {
      const fromBatch = batch.files[i]!;
      const matched = crystallog('match', file, '--library', library, '--target', TARGET) as { phases: PhaseView[] };
      const sized = crystallog('size', file, '--library', library, '--target', TARGET, '--instrument', instrument) as { scherrer: { sizeNm: number | null; sizeSigmaNm: number | null } };
      expect(phasesOf(matched), `match vs analyze on ${file}`).toEqual(phasesOf(fromBatch.match));
      expect(phasesOf(detail.match!), `app vs analyze on ${file}`).toEqual(phasesOf(fromBatch.match));
      expect(sizeOf(sized), `size vs analyze on ${file}`).toEqual(sizeOf(fromBatch.size));
      const appSize = detail.size ? detail.sizeNm : null;
      const batchSize = fromBatch.size.scherrer.sizeNm;
      if (batchSize === null) expect(appSize, `app vs analyze size on ${file}`).toBeNull();
      else expect(appSize!, `app vs analyze size on ${file}`).toBeCloseTo(batchSize, 1);
    });
  });
});
