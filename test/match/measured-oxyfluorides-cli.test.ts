/**
 * Measured check through the command, as a lab would run it: the authors' refined structures of the
 * look-alike pair NaNbO2F2 / NaTaO2F2 (multi-block CIFs written by a refinement program, "?" for
 * unknown values) imported into a fresh library, then each measured room-temperature pattern matched.
 * Files: ozakary/data-NaMO2F2 (commit 45a86e5), CC0 1.0; see test/fixtures/measured/README.md.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';

const root = process.cwd();
const fixture = (name: string): string => join(root, 'test/fixtures/measured', name);
const run = (...args: string[]) => spawnSync(process.execPath, [join(root, 'bin/crystallog.js'), ...args], { encoding: 'utf8' });
const dir = mkdtempSync(join(tmpdir(), 'crystallog-oxyfluorides-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

// The CIFs name no phase, compound or formula (all "?"), so the references are named by file and block.
const NB = 'nanbo2f2-refined data_#(C)';
const TA = 'natao2f2-refined data_#(C)';

describe('measured through the command: crystallog library import + match on NaNbO2F2 / NaTaO2F2', () => {
  const library = join(dir, 'fresh.sqlite');

  it('imports both refined CIFs into a fresh library', { timeout: 120_000 }, () => {
    const imported = run('library', 'import', fixture('nanbo2f2-refined.cif'), fixture('natao2f2-refined.cif'), '--library', library, '--json');
    expect(imported.status, imported.stderr).toBe(0);
    expect(JSON.parse(imported.stdout).added).toEqual([NB, TA]);
  });

  it.each([
    ['nanbo2f2-rt.xy', NB, TA],
    ['natao2f2-rt.xy', TA, NB],
  ])('%s: its own phase is present, the other is not (known answer: single-phase, per the source README)', { timeout: 300_000 }, (pattern, own, other) => {
    const matched = run('match', fixture(pattern), '--library', library, '--json');
    expect(matched.status, matched.stderr).toBe(0);
    const phases = (JSON.parse(matched.stdout) as { phases: { name: string; verdict: string }[] }).phases;
    expect(phases.find((p) => p.name === own)?.verdict).toBe('present');
    expect(phases.find((p) => p.name === other)?.verdict ?? 'not listed').not.toBe('present');
  });
});
