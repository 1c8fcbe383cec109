import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { execFileSync } from 'node:child_process';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { classify, fuzzContext } from '../../fuzz/classify.js';
import { CLI_COMMANDS, checkCli, crystallogBin } from '../../fuzz/cli-check.js';
import { inputAt, SMALL_SCALE } from '../../fuzz/inputs.js';
import { referenceFiles, seedFiles } from '../../fuzz/seeds.js';

/**
 * A small fixed-seed share of `npm run fuzz` (fuzz/): mutated real pattern files through reading and the
 * whole analysis in process, and a few through the real command line. The full run has 10 000 inputs.
 */
const SEED = 20261202;
const IN_PROCESS = 200;
const CLI_RUNS = 12;
const seeds = seedFiles();

describe('mutated pattern files through the analysis', () => {
  it(`${IN_PROCESS} inputs each give a result or an InputError naming the file (and its line where it has one)`, () => {
    const context = fuzzContext(referenceFiles());
    const kinds = new Map<string, number>();
    const failures: string[] = [];
    for (let id = 0; id < IN_PROCESS; id++) {
      const input = inputAt(seeds, SEED, id, SMALL_SCALE);
      const outcome = classify(input.bytes, input.name, context);
      kinds.set(outcome.kind, (kinds.get(outcome.kind) ?? 0) + 1);
      if (outcome.kind !== 'ok' && outcome.kind !== 'refused') failures.push(`input ${id} (${input.mutations.join('; ')}): ${outcome.kind}: ${outcome.message}`);
      if (outcome.kind === 'refused' && outcome.line !== null) expect(outcome.line).toBeGreaterThanOrEqual(1);
    }
    expect(failures).toEqual([]);
    // The mutations must leave both kinds of file: some still analysable, some refused.
    expect(kinds.get('ok') ?? 0).toBeGreaterThan(IN_PROCESS / 10);
    expect(kinds.get('refused') ?? 0).toBeGreaterThan(IN_PROCESS / 10);
  });
});

describe('mutated pattern files through the command line', () => {
  let dir = '';
  let library = '';
  beforeAll(() => {
    dir = mkdtempSync(join(tmpdir(), 'crystallog-fuzz-test-'));
    library = join(dir, 'references.db');
    execFileSync(process.execPath, [crystallogBin(), 'library', 'import', ...referenceFiles().map((r) => r.path), '--library', library], { stdio: 'ignore' });
  });
  afterAll(() => {
    if (dir) rmSync(dir, { recursive: true, force: true });
  });

  it(`${CLI_RUNS} runs of peaks, match, size and analyze never exit 1, hang, change the file or print other than one JSON document`, async () => {
    const runs = Array.from({ length: CLI_RUNS }, (_, k) => {
      const input = inputAt(seeds, SEED, 1000 + 37 * k, SMALL_SCALE);
      const file = join(dir, `${input.id}-${input.name}`);
      writeFileSync(file, input.bytes);
      return { file, command: CLI_COMMANDS[k % CLI_COMMANDS.length]!, mutations: input.mutations };
    });
    const results = [];
    for (let k = 0; k < runs.length; k += 2) {
      results.push(...(await Promise.all(runs.slice(k, k + 2).map((r) => checkCli(r.command, r.file, library, 20_000)))));
    }
    const broken = results.filter((r) => r.violations.length > 0).map((r) => `${r.command} ${r.file}: ${r.violations.join('; ')}`);
    expect(broken).toEqual([]);
    const exits = new Set(results.map((r) => r.exitCode));
    expect([...exits].every((code) => code === 0 || code === 2)).toBe(true);
  }, 120_000);
});
