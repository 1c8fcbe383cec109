import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { instrumentCommand } from '../../src/cli/commands/instrument.js';
import { seriesCommand } from '../../src/cli/commands/series.js';
import { sizeCommand } from '../../src/cli/commands/size.js';
import { patternToXyText, simulatePattern } from '../../src/core/crystal/simulate.js';
import { InputError } from '../../src/core/errors.js';
import { ReferenceLibrary } from '../../src/node/library/store.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { parseInstrumentProfile } from '../../src/core/size/instrument.js';
import { cubicPhase, siliconStandard } from './fixtures.js';

const CU = anodeWavelength('Cu');
const dir = mkdtempSync(join(tmpdir(), 'crystallog-size-'));
const libraryPath = join(dir, 'refs.sqlite');
const phase = { ...cubicPhase(), lines: cubicPhase().lines.map((l, i) => ({ ...l, intensity: 100 / (1 + i) })) };
const library = ReferenceLibrary.open(libraryPath);
library.importReferences([siliconStandard(), phase]);
library.close();

function writePattern(name: string, lines: typeof phase.lines, sizeNm: number | undefined, seed: number): string {
  const pattern = simulatePattern({ phases: [{ lines, scale: 1, sizeNm }], wavelength: CU, twoThetaMinDeg: 20, twoThetaMaxDeg: 110, stepDeg: 0.02, peakCounts: 10000, noiseSeed: seed });
  const file = join(dir, `${name}.xy`);
  writeFileSync(file, patternToXyText(pattern, ['simulated by Crystallog; not a measurement']));
  return file;
}
const standardFile = writePattern('silicon', siliconStandard().lines, undefined, 1);
const sampleA = writePattern('as-made', phase.lines, 30, 2);
const sampleB = writePattern('ground', phase.lines, 30, 3);
const profilePath = join(dir, 'lab.json');

describe('crystallog instrument / size / series commands', () => {
  it('instrument writes a named, dated profile file with residuals and keeps it in the library', () => {
    const r = instrumentCommand(standardFile, { standard: 'silicon', library: libraryPath, out: profilePath, date: '2025-03-14' });
    const saved = parseInstrumentProfile(readFileSync(profilePath, 'utf8'), profilePath);
    expect(saved.name).toBe('lab');
    expect(saved.date.startsWith('2025-03-14')).toBe(true);
    expect(saved.standard.name).toBe('silicon');
    expect(Object.keys(saved.caglioti)).toEqual(['u', 'v', 'w']);
    expect(saved.residuals.length).toBeGreaterThanOrEqual(5);
    expect(typeof saved.rms).toBe('number');
    expect(r.libraryKey).toContain('lab');
  });

  it('size prints the CLI.md fields and the cautions', () => {
    const r = sizeCommand(sampleA, { instrument: profilePath, phase: phase.name, library: libraryPath });
    expect(r).toMatchObject({ k: 0.9, breadth: 'fwhm', correction: 'voigt' });
    for (const p of r.peaks) expect(Object.keys(p)).toEqual(expect.arrayContaining(['twoTheta', 'hkl', 'sizeNm', 'sizeSigmaNm', 'limit']));
    expect(r.scherrer.sizeNm).toBeGreaterThan(20);
    expect(r.scherrer.sizeSigmaNm).toBeGreaterThan(0);
    expect(Object.keys(r.williamsonHall!)).toEqual(expect.arrayContaining(['sizeNm', 'strain', 'r2']));
    expect(r.cautions.length).toBeGreaterThan(0);
  });

  it('size finds the profile by name in the library and refuses bad options', () => {
    expect(sizeCommand(sampleA, { instrument: 'lab', library: libraryPath }).settings.instrument?.name).toBe('lab');
    expect(() => sizeCommand(sampleA, { breadth: 'half' })).toThrow(InputError);
    expect(() => sizeCommand(sampleA, { phase: 'x' })).toThrow(/--library/);
    expect(() => sizeCommand(sampleA, { instrument: join(dir, 'missing.json') })).toThrow(InputError);
  });

  it('series gives a row per file and the pairwise comparison with its test', async () => {
    const r = await seriesCommand([sampleA, sampleB], { labels: 'as made,ground', library: libraryPath, target: phase.name, instrument: profilePath });
    expect(r.rows.map((row) => row.label)).toEqual(['as made', 'ground']);
    expect(r.rows[0].verdict).toBe('present');
    expect(r.comparison.pairs).toHaveLength(1);
    expect(typeof r.comparison.pairs[0].differs).toBe('boolean');
    expect(r.comparison.test).toMatch(/z-test/);
    expect(r.settings.instrument?.name).toBe('lab');
  });

  it('series of many files runs on the worker pool and gives the same rows as one at a time', async () => {
    const files = [2, 3, 4, 5, 6, 7].map((seed) => writePattern(`variant-${seed}`, phase.lines, 30, seed));
    const labels = files.map((_, i) => `variant ${i + 1}`).join(',');
    const pooled = await seriesCommand(files, { labels, library: libraryPath, target: phase.name, instrument: profilePath });
    const inTurn = await seriesCommand(files.slice(0, 2), { labels: 'variant 1,variant 2', library: libraryPath, target: phase.name, instrument: profilePath });
    expect(pooled.rows).toHaveLength(6);
    expect(pooled.rows.slice(0, 2).map((r) => r.scherrer.sizeNm)).toEqual(inTurn.rows.map((r) => r.scherrer.sizeNm));
    // All six were simulated at 30 nm: no pair may be called different (simulated truth).
    expect(pooled.comparison.pairs.every((p) => !p.differs)).toBe(true);
  });

  it('series --temperatures orders an annealing series by °C and tests its trend; a bad entry is named', async () => {
    const files = [[25, 20], [100, 35], [200, 60]].map(([celsius, sizeNm], i) => writePattern(`anneal-${celsius}`, phase.lines, sizeNm, 20 + i));
    const r = await seriesCommand(files, { temperatures: '25,100,200', library: libraryPath, target: phase.name, instrument: profilePath });
    expect(r.kind).toBe('temperature');
    expect(r.rows.map((row) => row.temperatureC)).toEqual([25, 100, 200]);
    expect(r.comparison.pairs).toHaveLength(0);
    expect(r.comparison.trend!.differs).toBe(true);
    expect(r.comparison.trend!.statement).toMatch(/nm per °C/);
    await expect(seriesCommand(files, { temperatures: '25,hot,200', library: libraryPath, target: phase.name })).rejects.toThrow(/--temperatures: entry 2 "hot"/);
  });

  it('series stops with the reason of a file that cannot be read, naming it', async () => {
    const files = [2, 3, 4, 5, 6].map((seed) => writePattern(`ok-${seed}`, phase.lines, 30, seed));
    const broken = join(dir, 'broken.xy');
    writeFileSync(broken, '10.0 100\n10.1 lots\n');
    await expect(seriesCommand([...files, broken], { library: libraryPath, target: phase.name })).rejects.toThrow(/broken\.xy/);
  });
});
