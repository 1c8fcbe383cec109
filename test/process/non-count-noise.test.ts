import { describe, expect, it } from 'vitest';
import { analyzePattern, createAnalysisContext, type AnalysisResult } from '../../src/core/analysis/analyse.js';
import { patternToXyText, simulatePattern, TYPICAL_LAB_INSTRUMENT } from '../../src/core/crystal/simulate.js';
import type { Pattern } from '../../src/core/model/pattern.js';
import type { Reference, StoredReference } from '../../src/core/model/reference.js';
import { dFromTwoTheta } from '../../src/core/model/units.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { readPatternBytes } from '../../src/core/pattern/read.js';
import { notCountsReason } from '../../src/core/process/peaks.js';

const cu = anodeWavelength('Cu');

function phase(name: string, lines: Array<[number, number]>, id: number): StoredReference {
  const ref: Reference = { name, formula: 'X', tags: [], source: 'made up for this test', lines: lines.map(([tt, i]) => ({ d: dFromTwoTheta(tt, cu.lambda1), intensity: i })) };
  return { ...ref, id, version: 1, createdAt: '2026-01-01T00:00:00.000Z' };
}

const major = phase('phase-A', [[18.2, 100], [27.5, 45], [33.1, 70], [41.6, 30], [49.3, 55], [56.8, 20]], 1);
const minor = phase('phase-B', [[15.4, 100], [30.3, 60], [37.8, 40], [45.1, 35], [53.6, 25]], 2);
const absent = phase('phase-C', [[12.1, 100], [24.6, 70], [35.9, 50], [47.7, 40]], 3);
const context = createAnalysisContext([major, minor, absent], null, {});

/** Counts as a laboratory measures them: the two phases, Poisson noise, whole numbers. */
const counts: Pattern = simulatePattern({
  phases: [{ lines: major.lines, scale: 1, sizeNm: 60 }, { lines: minor.lines, scale: 0.15, sizeNm: 40 }],
  wavelength: cu,
  twoThetaMinDeg: 10,
  twoThetaMaxDeg: 60,
  stepDeg: 0.02,
  instrument: TYPICAL_LAB_INSTRUMENT,
  peakCounts: 5000,
  noiseSeed: 77,
  name: 'counts.xy',
});

/** The same measurement as an export would give it: written as text with a header, then read back. */
function exported(fileName: string, header: string, y: (value: number) => number, digits: number): Pattern {
  const rows = Array.from(counts.x, (x, i) => `${x.toFixed(4)} ${y(counts.y[i]!).toFixed(digits)}`);
  return readPatternBytes(new TextEncoder().encode(`# ${header}\n${rows.join('\n')}\n`), fileName);
}

const maximum = Math.max(...counts.y);
const verdicts = (r: AnalysisResult) => Object.fromEntries(r.match.phases.map((p) => [p.name, p.verdict]));

/** Peaks of `a` with no peak of `b` within a hundredth of a degree. */
function unpaired(a: AnalysisResult, b: AnalysisResult): number[] {
  return a.peaks.map((p) => p.twoTheta).filter((tt) => !b.peaks.some((q) => Math.abs(q.twoTheta - tt) < 0.01));
}

describe('intensities that are not counts', () => {
  const fromCounts = analyzePattern(readPatternBytes(new TextEncoder().encode(patternToXyText(counts, ['2theta counts'])), 'counts.xy'), context);

  it('whole non-negative numbers are counts: σ = √background, and nothing is said about it', () => {
    expect(fromCounts.noise.model).toBe('counts');
    expect(fromCounts.noise.note).toBeNull();
    expect(fromCounts.peaks.length).toBeGreaterThanOrEqual(8);
    expect(verdicts(fromCounts)).toMatchObject({ 'phase-A': 'present', 'phase-B': 'present' });
    expect(verdicts(fromCounts)['phase-C'] ?? 'not-seen').toBe('not-seen');
  });

  it('the same pattern scaled to a maximum of 5.0 finds the same peaks and phases, with the noise measured from the data and said so', () => {
    const scaled = analyzePattern(exported('normalised.xy', '2theta intensity', (v) => (5 * v) / maximum, 6), context);
    expect(scaled.noise.model).toBe('measured');
    // Scaled Poisson counts keep σ = √(c·background') for y' = c·y: the measured scale must be about √c.
    expect(scaled.noise.scale).toBeGreaterThan(0.9 * Math.sqrt(5 / maximum));
    expect(scaled.noise.scale).toBeLessThan(1.1 * Math.sqrt(5 / maximum));
    expect(scaled.warnings.some((w) => w.includes('not whole numbers') && w.includes('measured from the point-to-point scatter'))).toBe(true);
    expect(scaled.match.featureless).toBe(false);
    expect(verdicts(scaled)).toEqual(verdicts(fromCounts));
    expect(unpaired(fromCounts, scaled)).toEqual([]);
    expect(unpaired(scaled, fromCounts)).toEqual([]);
  });

  it('counts per second (counts over 2.5 s, three decimals) give the same peaks and phases too', () => {
    const cps = analyzePattern(exported('cps.xy', '2theta cps', (v) => v / 2.5, 3), context);
    expect(cps.noise.model).toBe('measured');
    expect(cps.noise.scale).toBeGreaterThan(0.9 * Math.sqrt(1 / 2.5));
    expect(cps.noise.scale).toBeLessThan(1.1 * Math.sqrt(1 / 2.5));
    expect(verdicts(cps)).toEqual(verdicts(fromCounts));
    expect(unpaired(fromCounts, cps)).toEqual([]);
    expect(unpaired(cps, fromCounts)).toEqual([]);
  });

  it('whole numbers a header calls counts per second or normalised are not taken as counts', () => {
    const cpsHeader = exported('cps-whole.xy', 'Angle  Intensity (cps)', (v) => Math.round(v / 2.5), 0);
    expect(notCountsReason(cpsHeader)).toMatch(/cps/);
    expect(notCountsReason(exported('norm.xy', 'normalised intensity', (v) => Math.round(v), 0))).toMatch(/normalised/);
    expect(notCountsReason(exported('plain.xy', '2theta counts', (v) => Math.round(v), 0))).toBeNull();
    const result = analyzePattern(cpsHeader, context);
    expect(result.noise.model).toBe('measured');
    expect(result.noise.note).toMatch(/cps/);
  });

  it('a noise-free curve that is not counts falls back to counting statistics, and says so', () => {
    const smooth = simulatePattern({ phases: [{ lines: major.lines, scale: 1, sizeNm: 60 }], wavelength: cu, twoThetaMinDeg: 10, twoThetaMaxDeg: 60, stepDeg: 0.02, peakCounts: 5000, name: 'smooth.xy' });
    const result = analyzePattern(smooth, context);
    expect(result.noise.model).toBe('counts');
    expect(result.noise.note).toMatch(/next to no point-to-point scatter/);
  });
});
