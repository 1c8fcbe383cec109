/**
 * Impurity shares over exposure time, end to end on simulated patterns like the demo project's:
 * methylammonium lead iodide with a known weight fraction of its monohydrate (line scales set by
 * Chung's relation I ∝ w·RIR, J. Appl. Cryst. 7, 519 (1974)), analysed by the whole pipeline
 * (peaks → match → sizes) and turned into a series.
 */
import { describe, expect, it } from 'vitest';
import type { AnalysisResult } from '../../src/core/analysis/analyse.js';
import type { PhaseMatch } from '../../src/core/match/types.js';
import { seriesSamplesFromAnalyses } from '../../src/core/analysis/series-from-analysis.js';
import { analyzeSeries } from '../../src/core/series/series.js';
import { exposureSample, HYDRATE, perovskiteContext, standardProfile, TARGET } from './perovskite-fixtures.js';

const context = perovskiteContext(standardProfile());
const TRUE_FRACTIONS = [0, 0.02, 0.05, 0.1, 0.2];
const HOURS = [0, 2, 6, 24, 48];
const results = TRUE_FRACTIONS.map((w, i) => exposureSample(w, 0, 400 + i, context));
const series = analyzeSeries(seriesSamplesFromAnalyses(results, { target: TARGET, exposureHours: HOURS }));
const shareAt = (i: number): number => series.rows[i].otherPhases.find((p) => p.name === HYDRATE)?.share ?? 0;

describe('monohydrate share over exposure time (simulated, known wt %)', () => {
  it('reads 0 in the sample without monohydrate', () => {
    expect(series.rows[0].otherPhases).toEqual([]);
    expect(shareAt(0)).toBe(0);
  });

  it('gives Chung weight fractions, not peak-area shares, since the references carry RIRs', () => {
    const bases = series.rows.flatMap((r) => r.otherPhases.map((p) => p.basis));
    expect(bases.length).toBeGreaterThan(0);
    expect(new Set(bases)).toEqual(new Set(['weight fraction']));
  });

  it('carries each weight fraction\'s σ from the match into the series, where the growth fit weights by it', () => {
    const matched = results.flatMap((r) => r.match.phases.filter((p) => p.name === HYDRATE && p.weightFraction !== null && p.inExplanation !== false));
    const shares = series.rows.flatMap((r) => r.otherPhases.filter((p) => p.name === HYDRATE));
    expect(shares.length).toBeGreaterThan(0);
    for (const share of shares) {
      const from = matched.find((p) => p.weightFraction === share.share)!;
      expect(share.shareSigma).toBe(from.weightFractionSigma ?? null);
    }
    expect(shares.some((p) => typeof p.shareSigma === 'number' && p.shareSigma > 0)).toBe(true);
  });

  it('tracks the true weight fraction where detected, and misses it only below 5 wt %', () => {
    // Semi-quantitative (RIR method): within 5 wt % absolute or 30 % relative, whichever is larger (common practice for lab PXRD).
    // About 1–5 wt % is the usual detection limit of lab PXRD (common practice): below it a miss reads 0.
    TRUE_FRACTIONS.forEach((truth, i) => {
      const share = shareAt(i);
      if (share === 0) expect(truth).toBeLessThanOrEqual(0.05);
      else expect(Math.abs(share - truth)).toBeLessThanOrEqual(Math.max(0.05, 0.3 * truth));
    });
    expect(shareAt(3)).toBeGreaterThan(0);
    expect(shareAt(4)).toBeGreaterThan(0);
  });

  it('never counts lines the monohydrate shares with the target as its own', () => {
    // In the samples where it is not needed to explain the pattern it has no share, whatever its lines overlap.
    for (const r of results) {
      const hydrate = r.match.phases.find((p) => p.name === HYDRATE);
      if (hydrate && !hydrate.inExplanation) expect(hydrate.exclusiveAreaShare).toBe(0);
    }
  });

  it('grows monotonically, so the growth curve sees the real trend', () => {
    const growth = series.growth.find((g) => g.phase === HYDRATE)!;
    expect(growth.basis).toBe('weight fraction');
    const shares = growth.points.map((p) => p.share);
    for (let i = 1; i < shares.length; i++) expect(shares[i]).toBeGreaterThanOrEqual(shares[i - 1]);
  });
});

describe('shares from match results', () => {
  const phase = (name: string, extra: Partial<PhaseMatch>): PhaseMatch => ({
    name, formula: name, tags: [], score: 0.8, verdict: 'present', matchedLines: 5, missingStrongLines: [], weightFraction: null,
    quantification: 'not quantified', parts: { position: 1, intensityFound: 1, missingStrong: 1, relativeIntensity: 1, explained: 1 },
    scale: 1, explainedAreaShare: 0.5, exclusiveAreaShare: 0.1, inExplanation: true, shift: { zeroDeg: 0, displacementCosDeg: 0 },
    meanResidualDeg: 0.01, lines: [], reasons: [], ...extra,
  });
  const analysis = (file: string, phases: PhaseMatch[]): AnalysisResult =>
    ({ ...results[0], file, match: { ...results[0].match, phases } }) as AnalysisResult;

  it('gives a phase only listed as possible (not needed to explain the sample) no share, and keeps weight fractions elsewhere', () => {
    const quantified = { weightFraction: 0.12, weightFractionSigma: 0.015, quantification: 'quantified' as const };
    const samples = seriesSamplesFromAnalyses(
      [
        analysis('a', [phase('target', {}), phase('impurity', { verdict: 'uncertain', inExplanation: false, explainedAreaShare: 0.5, exclusiveAreaShare: 0 })]),
        analysis('b', [phase('target', {}), phase('impurity', quantified)]),
      ],
      { target: 'target' },
    );
    expect(samples[0].otherPhases).toEqual([]);
    expect(samples[1].otherPhases).toEqual([{ name: 'impurity', share: 0.12, basis: 'weight fraction', shareSigma: 0.015 }]);
  });

  it('falls back to the peak area only the phase explains, and says so, when a reference has no RIR', () => {
    const samples = seriesSamplesFromAnalyses([analysis('a', [phase('target', {}), phase('impurity', { explainedAreaShare: 0.5, exclusiveAreaShare: 0.04 })])], { target: 'target' });
    expect(samples[0].otherPhases).toEqual([{ name: 'impurity', share: 0.04, basis: 'peak area share', shareSigma: null }]);
    const r = analyzeSeries(samples.map((s) => ({ ...s, size: results[0].size })));
    expect(r.warnings.join(' ')).toMatch(/impurity is given as a share of the measured peak area on the peaks only that phase explains/);
  });

  it('names such phases in one warning, however many there are', () => {
    const names = ['p1', 'p2', 'p3', 'p4', 'p5', 'p6', 'p7'];
    const samples = seriesSamplesFromAnalyses(
      names.map((n) => analysis(n, [phase('target', {}), phase(n, { explainedAreaShare: 0.5, exclusiveAreaShare: 0.04 })])),
      { target: 'target' },
    );
    const r = analyzeSeries(samples.map((s) => ({ ...s, size: results[0].size })));
    const shares = r.warnings.filter((w) => w.includes('share of the measured peak area'));
    expect(shares).toHaveLength(1);
    expect(shares[0]).toMatch(/^p1, p2, p3, p4, p5 and 2 more phases are given as a share/);
  });
});
