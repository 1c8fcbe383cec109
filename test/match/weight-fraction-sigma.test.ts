/**
 * Weight fractions carry a σ from the joint scale fit (the scatter of each phase's group areas about
 * the model), propagated through Chung's matrix flushing (Chung, J. Appl. Cryst. 7, 519 (1974)).
 * Simulated with the app's own demo references (the 24 h humid-air example, labelled as simulated).
 */
import { execFileSync } from 'node:child_process';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';

const cli = join(process.cwd(), 'bin', 'crystallog.js');
const library = join(mkdtempSync(join(tmpdir(), 'crystallog-wf-')), 'refs.sqlite');
const run = (...args: string[]) => execFileSync(process.execPath, [cli, ...args], { encoding: 'utf8', stdio: ['ignore', 'pipe', 'pipe'] });

describe('weight fractions with σ in match --json', () => {
  it('gives each quantified present phase a positive σ that is smaller than its fraction, and none to phases not seen', () => {
    run('library', 'import', 'examples/simulated-scenario-references.json', '--library', library);
    const result = JSON.parse(run('match', 'examples/simulated_MAPbI3_humid-air_24h.xy', '--library', library, '--json')) as {
      phases: Array<{ name: string; verdict: string; weightFraction: number | null; weightFractionSigma?: number | null }>;
    };
    const present = result.phases.filter((p) => p.verdict === 'present');
    expect(present.length).toBeGreaterThanOrEqual(2);
    for (const p of present) {
      expect(p.weightFraction).not.toBeNull();
      expect(p.weightFractionSigma, p.name).toBeGreaterThan(0);
      expect(p.weightFractionSigma!, p.name).toBeLessThan(p.weightFraction!);
    }
    const sum = present.reduce((s, p) => s + p.weightFraction!, 0);
    expect(sum).toBeCloseTo(1, 3);
    for (const p of result.phases.filter((q) => q.verdict === 'not-seen')) expect(p.weightFraction).toBeNull();
  }, 60_000);
});
