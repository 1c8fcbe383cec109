import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it, vi } from 'vitest';
import { main } from '../../src/cli/main.js';
import { patternToXyText, simulatePattern } from '../../src/core/crystal/simulate.js';
import { ReferenceLibrary } from '../../src/node/library/store.js';
import { CU, loadStructure, phaseFromStructure } from './accuracy-support.js';

const dir = mkdtempSync(join(tmpdir(), 'crystallog-match-cli-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

async function run(args: string[]): Promise<{ stdout: string; stderr: string; code: number }> {
  let stdout = '';
  let stderr = '';
  const out = vi.spyOn(process.stdout, 'write').mockImplementation((chunk) => ((stdout += String(chunk)), true));
  const err = vi.spyOn(process.stderr, 'write').mockImplementation((chunk) => ((stderr += String(chunk)), true));
  process.exitCode = 0;
  try {
    await main(['node', 'crystallog', ...args]);
  } finally {
    out.mockRestore();
    err.mockRestore();
  }
  const code = Number(process.exitCode ?? 0);
  process.exitCode = 0;
  return { stdout, stderr, code };
}

describe('crystallog match', () => {
  const zno = phaseFromStructure('zno', loadStructure('zno'));
  const rutile = phaseFromStructure('rutile', loadStructure('rutile'));
  const db = join(dir, 'refs.sqlite');
  const lib = ReferenceLibrary.open(db);
  lib.importReferences([zno.reference, rutile.reference].map(({ id: _i, version: _v, createdAt: _c, ...ref }) => ref));
  lib.close();
  const file = join(dir, 'mixture.xy');
  // Chung-consistent simulation: scale = w · RIR (90 % zincite, 10 % rutile).
  const pattern = simulatePattern({
    phases: [
      { lines: zno.reference.lines, scale: 0.9 * (zno.reference.rir ?? 1), sizeNm: 60 },
      { lines: rutile.reference.lines, scale: 0.1 * (rutile.reference.rir ?? 1), sizeNm: 60 },
    ],
    wavelength: CU,
    twoThetaMinDeg: 10,
    twoThetaMaxDeg: 90,
    stepDeg: 0.02,
    zeroShiftDeg: 0.05,
    peakCounts: 20000,
    noiseSeed: 42,
  });
  writeFileSync(file, patternToXyText(pattern, ['simulated by Crystallog; not a measurement']));

  it('prints exactly one JSON document with the contract fields', async () => {
    const { stdout, code } = await run(['match', file, '--library', db, '--target', 'zno', '--json']);
    expect(code).toBe(0);
    const result = JSON.parse(stdout);
    expect(typeof result.shift.zeroDeg).toBe('number');
    expect(typeof result.shift.displacementCosDeg).toBe('number');
    // One shift per pattern, with σ and the displacement in mm (CLI.md).
    expect(Object.keys(result.shift)).toEqual(expect.arrayContaining(['zeroDeg', 'zeroSigmaDeg', 'displacementCosDeg', 'displacementSigmaDeg', 'displacementMm']));
    expect(result.shift.zeroSigmaDeg).toBeGreaterThan(0);
    const names = result.phases.map((p: { name: string }) => p.name);
    expect(names).toEqual(expect.arrayContaining(['zno', 'rutile']));
    for (const p of result.phases) {
      expect(Object.keys(p)).toEqual(expect.arrayContaining(['name', 'score', 'verdict', 'matchedLines', 'missingStrongLines', 'weightFraction', 'reasons']));
      expect(['present', 'uncertain', 'not-seen']).toContain(p.verdict);
    }
    const zincite = result.phases.find((p: { name: string }) => p.name === 'zno');
    expect(zincite.verdict).toBe('present');
    expect(zincite.weightFraction).toBeGreaterThan(0.8);
    // Refined cell of a phase in the explanation; simulated with the reference's own cell, so the change is within 3σ.
    expect(Object.keys(zincite.cell)).toEqual(['a', 'aSigma', 'b', 'bSigma', 'c', 'cSigma', 'alpha', 'alphaSigma', 'beta', 'betaSigma', 'gamma', 'gammaSigma', 'volume', 'volumeSigma']);
    expect(Math.abs(zincite.cell.a - zno.structure.cell.a)).toBeLessThanOrEqual(3 * zincite.cell.aSigma);
    expect(Math.abs(zincite.cell.c - zno.structure.cell.c)).toBeLessThanOrEqual(3 * zincite.cell.cSigma);
    expect(zincite.cell.b).toBe(zincite.cell.a);
    expect(typeof zincite.cellChangePercent).toBe('number');
    for (const p of result.phases.filter((q: { inExplanation: boolean }) => !q.inExplanation)) expect(p.cell).toBeUndefined();
    expect(Array.isArray(result.unexplained)).toBe(true);
    for (const u of result.unexplained) expect(Object.keys(u)).toEqual(expect.arrayContaining(['twoTheta', 'd', 'height', 'lowAngle']));
    expect(result.phases.every((p: { score: number }, i: number) => i === 0 || p.score <= result.phases[i - 1].score)).toBe(true);
  });

  it('exits with 2 and one line on stderr for an unknown target or a missing library', async () => {
    const unknown = await run(['match', file, '--library', db, '--target', 'unobtainium', '--json']);
    expect(unknown.code).toBe(2);
    // With --json a failure is also one JSON document on stdout (../shared/CLI.md).
    expect(JSON.parse(unknown.stdout).error).toMatchObject({ message: expect.stringMatching(/unobtainium/), file: null, line: null });
    expect(unknown.stderr.trim().split('\n')).toHaveLength(1);
    const missing = await run(['match', file, '--library', join(dir, 'nope.sqlite'), '--json']);
    expect(missing.code).toBe(2);
    expect(missing.stderr).toMatch(/does not exist/);
  });
});
