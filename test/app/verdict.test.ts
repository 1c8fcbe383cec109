import { describe, expect, it } from 'vitest';
import type { MatchResult, PhaseMatch } from '../../src/core/match/types.js';
import { lowAnglePeaks, sampleVerdict } from '../../src/core/analysis/verdict.js';
import { guessHours, guessTemperature, guessVariant } from '../../src/app/file-names.js';
import { renderCsvReport, renderHtmlReport, type ReportInput } from '../../src/core/report/report.js';

function phase(name: string, verdict: PhaseMatch['verdict'], lines: Array<[number, boolean?]>): PhaseMatch {
  return {
    name, formula: name, tags: [], score: verdict === 'not-seen' ? 0.1 : 0.9, verdict, matchedLines: lines.length, missingStrongLines: [], weightFraction: null,
    quantification: 'not quantified', parts: { position: 1, intensityFound: 1, missingStrong: 1, relativeIntensity: 1, explained: 1 }, scale: 1, explainedAreaShare: 0.5, meanResidualDeg: 0.01,
    lines: lines.map(([tt, shared]) => ({ d: 1, intensity: 50, twoThetaExpected: tt, twoThetaMeasured: tt, shared: shared ?? false })), reasons: [],
  };
}

function match(phases: PhaseMatch[], extra: Partial<MatchResult> = {}): MatchResult {
  return { shift: { zeroDeg: 0, displacementCosDeg: 0 }, phases, unexplained: [], unexplainedAreaShare: 0, featureless: false, toleranceDeg: 0.1, reasons: [], ...extra };
}

describe('the verdict at a glance', () => {
  it('is "target" when the target is present and nothing else is', () => {
    expect(sampleVerdict(match([phase('A', 'present', [[14], [28]])]), 'A').verdict).toBe('target');
  });

  it('notices another phase with peaks of its own', () => {
    expect(sampleVerdict(match([phase('A', 'present', [[14]]), phase('B', 'uncertain', [[8.5]])]), 'A').verdict).toBe('target with extra peaks');
  });

  it('does not count a phase whose every line is shared with the target', () => {
    expect(sampleVerdict(match([phase('A', 'present', [[14]]), phase('A twin', 'present', [[14, true]])]), 'A').verdict).toBe('target');
  });

  it('is "not the target" when the target is judged absent, and "featureless" when nothing shows', () => {
    expect(sampleVerdict(match([phase('A', 'not-seen', [])]), 'A').verdict).toBe('not the target');
    expect(sampleVerdict(match([], { featureless: true }), 'A').verdict).toBe('featureless');
  });

  it('counts peaks of other phases below the target’s first line as low-angle', () => {
    const m = match([phase('A', 'present', [[14], [28]]), phase('hydrate', 'present', [[8.5], [30]])], { unexplained: [{ twoTheta: 6, d: 14.7, height: 50, lowAngle: true, possibleSources: [] }] });
    expect(lowAnglePeaks(m, 'A')).toEqual([
      { twoTheta: 6, d: 14.7, phase: null },
      { twoTheta: 8.5, d: 1, phase: 'hydrate' },
    ]);
  });
});

describe('labels read from file names', () => {
  it('finds the workup variant and the exposure time', () => {
    expect(guessVariant('batch7_Sonicated.xy')).toBe('sonicated');
    expect(guessVariant('batch7.xy')).toBeNull();
    expect(guessHours('air_24h.xy')).toBe(24);
    expect(guessHours('air 1.5 hours.csv')).toBe(1.5);
    expect(guessHours('sample_h2o.xy')).toBeNull();
  });

  it('finds the temperature in °C, and not in a lower-case c or a batch letter', () => {
    expect(guessTemperature('annealed_150C.xy')).toBe(150);
    expect(guessTemperature('dried 80 °C.csv')).toBe(80);
    expect(guessTemperature('anneal-200degC.xy')).toBe(200);
    expect(guessTemperature('batch 3c.xy')).toBeNull();
    expect(guessTemperature('MAPbI3_CsBr.xy')).toBeNull();
    expect(guessTemperature('air_24h.xy')).toBeNull();
  });
});

describe('reports', () => {
  const input: ReportInput = {
    appVersion: '9.9.9', createdAt: '2026-01-02T03:04:05.000Z', projectName: 'Batch "7", <wet>', demo: false, truth: null,
    settings: [['wavelength', 'Cu']], instrument: null, references: [{ name: 'A', version: 3 }],
    samples: [{ name: 'a,b', fileName: 'a.xy', sha256: 'f'.repeat(64), variant: 'washed', hours: null, simulated: false, verdict: 'target', phase: 'A', phaseVerdict: 'present', score: 0.9, lowAngle: [], unexplainedCount: 0, sizeNm: 40, sizeSigmaNm: 2, sizeLimit: null, whSizeNm: null, whStrain: null, wavelength: 'Cu', reasons: ['<b>'], warnings: [] }],
    variants: [], exposure: [], comparisons: [], growth: [], cautions: ['careful'],
  };

  it('quotes CSV cells that hold commas or quotes', () => {
    const csv = renderCsvReport(input);
    expect(csv).toContain('\n"a,b",a.xy,');
    expect(csv).toContain('# references: A v3');
    expect(csv).toContain('# caution: careful');
  });

  it('escapes text in the HTML report and carries no script', () => {
    const html = renderHtmlReport(input);
    expect(html).toContain('Batch &#34;7&#34;, &#60;wet&#62;');
    expect(html).toContain('<li>&#60;b&#62;</li>');
    expect(html).not.toMatch(/<script/i);
  });
});
