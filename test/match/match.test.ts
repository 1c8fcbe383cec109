import { describe, expect, it } from 'vitest';
import { InputError } from '../../src/core/errors.js';
import { buildReferenceIndex } from '../../src/core/match/reference-index.js';
import { matchPhases } from '../../src/core/match/match.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { flatBackground, linesAt, peaksOf, stored } from './synthetic.js';

const cu = anodeWavelength('Cu');
const mo = anodeWavelength('Mo');
const L = cu.lambda1;

const target = stored(
  'target-A',
  linesAt(L, [[12.0, 100], [24.1, 40], [28.3, 60], [33.5, 25], [36.4, 80], [41.0, 15], [47.7, 50], [52.2, 10], [56.8, 30], [62.3, 20], [68.9, 12], [75.1, 8]]),
  { tags: ['target'], rir: 2.0 },
);
const impurity = stored('impurity-B', linesAt(L, [[14.5, 100], [29.9, 70], [36.42, 50], [38.2, 45], [44.6, 30], [58.7, 20]]), { tags: ['impurity'], rir: 4.0 });
const stranger = stored('stranger-C', linesAt(L, [[16.1, 100], [31.0, 80], [45.3, 60], [50.5, 40], [64.2, 30]]), { rir: 1.0 });
const hydrate = stored('hydrate-D', linesAt(L, [[8.9, 100], [17.85, 30], [26.9, 20], [39.6, 25]]), { tags: ['decomposition product'] });
const library = [target, impurity, stranger, hydrate];
const background = flatBackground(100);

function verdictOf(result: ReturnType<typeof matchPhases>, name: string): string | undefined {
  return result.phases.find((p) => p.name === name)?.verdict;
}

describe('a single phase', () => {
  it('is confirmed with every line matched, nothing unexplained and nothing missing', () => {
    const peaks = peaksOf([{ lines: target.lines, scale: 10 }], L);
    const result = matchPhases(peaks, library, { wavelength: cu, background });
    expect(result.phases[0].name).toBe('target-A');
    expect(result.phases[0].verdict).toBe('present');
    expect(result.phases[0].matchedLines).toBe(12);
    expect(result.phases[0].missingStrongLines).toEqual([]);
    expect(result.unexplained).toEqual([]);
    expect(verdictOf(result, 'stranger-C') ?? 'not-seen').toBe('not-seen');
    expect(result.phases.every((p, i) => i === 0 || p.score <= result.phases[i - 1].score)).toBe(true);
  });

  it('refines a zero offset of 0.08° and reports it', () => {
    const peaks = peaksOf([{ lines: target.lines, scale: 10 }], L, { zeroDeg: 0.08 });
    const result = matchPhases(peaks, library, { wavelength: cu, background });
    expect(verdictOf(result, 'target-A')).toBe('present');
    // The total shift across the range is what matters; zero and cosθ terms are nearly collinear.
    const total = result.shift.zeroDeg + result.shift.displacementCosDeg * Math.cos((30 * Math.PI) / 360);
    expect(total).toBeCloseTo(0.08, 2);
    expect(result.phases[0].meanResidualDeg).toBeLessThan(0.01);
  });

  it('reports a pure zero offset as an offset, with no displacement beyond its σ', () => {
    const peaks = peaksOf([{ lines: target.lines, scale: 10 }], L, { zeroDeg: 0.06 });
    const result = matchPhases(peaks, library, { wavelength: cu, background });
    // Zero and cosθ terms are nearly collinear; both are refined, and the displacement found is nil within its σ.
    expect(result.shift.displacementSigmaDeg).toBeGreaterThan(0);
    expect(Math.abs(result.shift.displacementCosDeg)).toBeLessThanOrEqual(2 * result.shift.displacementSigmaDeg! + 1e-5);
    expect(result.shift.zeroDeg).toBeCloseTo(0.06, 3);
  });

  it('refines a sample-displacement shift of the cosθ form beyond the tolerance', () => {
    const peaks = peaksOf([{ lines: target.lines, scale: 10 }], L, { displacementCosDeg: -0.14 });
    const result = matchPhases(peaks, library, { wavelength: cu, background, toleranceDeg: 0.05 });
    expect(verdictOf(result, 'target-A')).toBe('present');
    expect(result.phases[0].matchedLines).toBe(12);
    expect(result.phases[0].meanResidualDeg).toBeLessThan(0.01);
  });

  it('works in d-space, so the same phase is found with Mo radiation', () => {
    const peaks = peaksOf([{ lines: target.lines, scale: 10 }], mo.lambda1, { rangeDeg: [3, 40] });
    const result = matchPhases(peaks, library, { wavelength: mo, background: flatBackground(100, 3, 40) });
    expect(result.phases[0].name).toBe('target-A');
    expect(result.phases[0].verdict).toBe('present');
  });
});

describe('evidence against a phase', () => {
  it('calls a phase absent when its strong lines are missing although they would be visible, and lists them', () => {
    // Only two of the stranger's lines happen to coincide with measured peaks.
    const decoy = stored('decoy-E', linesAt(L, [[24.1, 100], [28.3, 90], [20.0, 95], [43.0, 80], [60.0, 60]]));
    const peaks = peaksOf([{ lines: target.lines, scale: 10 }], L);
    const result = matchPhases(peaks, [...library, decoy], { wavelength: cu, background });
    const phase = result.phases.find((p) => p.name === 'decoy-E');
    expect(phase?.verdict).toBe('not-seen');
    expect(phase?.missingStrongLines.map((m) => Math.round(m.intensity))).toEqual(expect.arrayContaining([95, 80, 60]));
    expect(phase?.reasons.join(' ')).toMatch(/strong lines missing/);
  });

  it('never confirms a phase in a featureless pattern and says why', () => {
    const result = matchPhases([], library, { wavelength: cu, background, target: 'target-A' });
    expect(result.featureless).toBe(true);
    expect(result.phases.some((p) => p.verdict === 'present')).toBe(false);
    expect(result.phases.find((p) => p.name === 'target-A')?.verdict).toBe('not-seen');
    expect(result.reasons[0]).toMatch(/featureless/);
  });

  it('does not confirm an attenuated pattern whose peaks barely rise above the noise', () => {
    // Scale so small that the strongest line stands about 4 noise levels high (noise √100 = 10).
    const peaks = peaksOf([{ lines: target.lines, scale: 0.004 * 1000 / 100 }], L, { minArea: 1.5 });
    const result = matchPhases(peaks, library, { wavelength: cu, background });
    expect(result.phases.some((p) => p.verdict === 'present')).toBe(false);
    expect(result.reasons.join(' ')).toMatch(/no phase claim|too few/i);
  });
});

describe('several phases', () => {
  it('explains the target first, then the impurity, sharing the overlapping line', () => {
    const peaks = peaksOf([{ lines: target.lines, scale: 10 }, { lines: impurity.lines, scale: 1.5 }], L, { minArea: 3 });
    const result = matchPhases(peaks, library, { wavelength: cu, background, target: 'target-A' });
    expect(verdictOf(result, 'target-A')).toBe('present');
    expect(['present', 'uncertain']).toContain(verdictOf(result, 'impurity-B'));
    const b = result.phases.find((p) => p.name === 'impurity-B')!;
    // Line 36.42° of B falls on A's 36.4° peak: shared, and claimed by A only.
    expect(b.lines.find((l) => Math.abs(l.twoThetaExpected - 36.42) < 0.05)?.shared).toBe(true);
    expect(result.unexplained).toEqual([]);
  });

  it('gives Chung weight fractions that reproduce the simulated mixture (scale ∝ w·RIR)', () => {
    // Chung, J. Appl. Cryst. 7, 519 (1974): I_i ∝ w_i·RIR_i, so a mixture 80/20 with RIR 2 and 4 has scales 1.6 and 0.8.
    const peaks = peaksOf([{ lines: target.lines, scale: 10 * 0.8 * 2 }, { lines: impurity.lines, scale: 10 * 0.2 * 4 }], L, { minArea: 3 });
    const result = matchPhases(peaks, library, { wavelength: cu, background, target: 'target-A' });
    const a = result.phases.find((p) => p.name === 'target-A')!;
    const b = result.phases.find((p) => p.name === 'impurity-B')!;
    expect(a.weightFraction).toBeCloseTo(0.8, 2);
    expect(b.weightFraction).toBeCloseTo(0.2, 2);
    expect(a.quantification).toBe('quantified');
  });

  it('says "not quantified" for a present phase without a reference intensity ratio', () => {
    const peaks = peaksOf([{ lines: target.lines, scale: 10 }, { lines: hydrate.lines, scale: 3 }], L, { minArea: 3 });
    const result = matchPhases(peaks, library, { wavelength: cu, background, target: 'target-A' });
    const d = result.phases.find((p) => p.name === 'hydrate-D')!;
    expect(d.verdict).not.toBe('not-seen');
    expect(d.weightFraction).toBeNull();
    expect(d.quantification).toBe('not quantified');
    expect(d.reasons.join(' ')).toMatch(/not quantified/);
  });
});

describe('unexplained peaks', () => {
  it('lists a peak below the target first line as low-angle, with its 2θ, d and height, and names a decomposition product it fits', () => {
    const peaks = [...peaksOf([{ lines: target.lines, scale: 10 }], L), ...peaksOf([{ lines: [hydrate.lines[0]], scale: 2 }], L)];
    const result = matchPhases(peaks, library, { wavelength: cu, background, target: 'target-A' });
    expect(result.unexplained).toHaveLength(1);
    const u = result.unexplained[0];
    expect(u.twoTheta).toBeCloseTo(8.9, 3);
    expect(u.d).toBeCloseTo(L / (2 * Math.sin((8.9 * Math.PI) / 360)), 3);
    expect(u.height).toBeGreaterThan(0);
    expect(u.lowAngle).toBe(true);
    expect(u.possibleSources).toContain('hydrate-D');
    expect(result.reasons.join(' ')).toMatch(/low-angle/);
  });

  it('takes a decomposition product before other references when low-angle peaks are open', () => {
    // A look-alike of the hydrate with the same first line but not tagged, and slightly better elsewhere.
    const rival = stored('rival-F', linesAt(L, [[8.9, 100], [17.85, 30], [21.3, 25]]));
    const peaks = peaksOf([{ lines: target.lines, scale: 10 }, { lines: hydrate.lines, scale: 2 }], L, { minArea: 3 });
    const result = matchPhases(peaks, [...library, rival], { wavelength: cu, background, target: 'target-A' });
    expect(verdictOf(result, 'hydrate-D')).not.toBe('not-seen');
    expect(result.unexplained.filter((u) => u.lowAngle)).toEqual([]);
  });
});

describe('look-alikes and the target', () => {
  const lookAlike = stored(
    'look-alike-A2',
    target.lines.map((l, i) => ({ d: l.d * 1.002, intensity: i % 2 === 0 ? l.intensity : Math.max(5, 100 - (l.intensity ?? 0)) })),
  );

  it('prefers the phase whose high-angle positions and intensities fit, and does not confirm its look-alike', () => {
    const peaks = peaksOf([{ lines: target.lines, scale: 10 }], L);
    const result = matchPhases(peaks, [...library, lookAlike], { wavelength: cu, background });
    expect(result.phases[0].name).toBe('target-A');
    expect(verdictOf(result, 'look-alike-A2')).not.toBe('present');
  });

  it('does not force a wrong target onto the pattern when another phase fits clearly better', () => {
    const peaks = peaksOf([{ lines: target.lines, scale: 10 }], L);
    const result = matchPhases(peaks, [...library, lookAlike], { wavelength: cu, background, target: 'look-alike-A2' });
    expect(verdictOf(result, 'target-A')).toBe('present');
    expect(verdictOf(result, 'look-alike-A2')).not.toBe('present');
  });
});

describe('inputs', () => {
  it('rejects an unknown target and an impossible tolerance as the user\'s errors', () => {
    expect(() => matchPhases([], library, { wavelength: cu, target: 'nothing-like-it' })).toThrow(InputError);
    expect(() => matchPhases([], library, { wavelength: cu, toleranceDeg: -1 })).toThrow(InputError);
  });

  it('gives the same answer with a prebuilt index as without', () => {
    const peaks = peaksOf([{ lines: target.lines, scale: 10 }, { lines: impurity.lines, scale: 1.5 }], L, { minArea: 3 });
    const index = buildReferenceIndex(library);
    const a = matchPhases(peaks, library, { wavelength: cu, background });
    const b = matchPhases(peaks, [], { wavelength: cu, background, index });
    expect(b).toEqual(a);
  });
});
