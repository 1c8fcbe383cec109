import { describe, expect, it } from 'vitest';
import { analyzePattern, createAnalysisContext } from '../../src/core/analysis/analyse.js';
import { simulatePattern } from '../../src/core/crystal/simulate.js';
import { InputError } from '../../src/core/errors.js';
import type { StoredReference } from '../../src/core/model/reference.js';
import { dFromTwoTheta } from '../../src/core/model/units.js';
import { findPeaks } from '../../src/core/process/peaks.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';

const cu = anodeWavelength('Cu');

function stored(name: string, id: number, lines: Array<[number, number]>): StoredReference {
  return {
    name, formula: 'X', tags: [], source: 'simulated for this test', id, version: 3, createdAt: '2000-01-01T00:00:00.000Z',
    lines: lines.map(([tt, intensity]) => ({ d: dFromTwoTheta(tt, cu.lambda1), intensity })),
  };
}

const product = stored('product', 1, [[18.2, 100], [27.5, 45], [33.1, 70], [41.6, 30], [49.3, 55], [55.0, 40]]);
const hydrate = stored('hydrate', 2, [[9.1, 100], [21.7, 50], [38.4, 60], [52.1, 45]]);
const unrelated = stored('unrelated', 3, [[15.4, 100], [30.3, 60], [37.8, 40], [45.1, 35]]);
const references = [product, hydrate, unrelated];

const pattern = simulatePattern({
  phases: [{ lines: product.lines, scale: 1, sizeNm: 40 }, { lines: hydrate.lines, scale: 0.4, sizeNm: 40 }],
  wavelength: cu,
  twoThetaMinDeg: 5,
  twoThetaMaxDeg: 60,
  stepDeg: 0.02,
  peakCounts: 5000,
  noiseSeed: 42,
});

describe('analyzePattern', () => {
  it('finds the target and the extra phase, sizes the target, and records the settings and reference versions', () => {
    const result = analyzePattern(pattern, createAnalysisContext(references, null, { target: 'product' }));
    const verdict = (name: string) => result.match.phases.find((p) => p.name === name)?.verdict ?? 'not-seen';
    expect(verdict('product')).toBe('present');
    expect(verdict('hydrate')).not.toBe('not-seen');
    expect(verdict('unrelated')).toBe('not-seen');
    expect(result.points).toBe(pattern.x.length);
    expect(result.settings).toMatchObject({ target: 'product', sizePhase: 'product', toleranceDeg: 0.1, k: 0.9, breadth: 'fwhm', instrument: null });
    expect(result.size.settings.phase).toEqual({ name: 'product', version: 3 });
    expect(result.references.used).toContainEqual({ name: 'product', version: 3 });
    expect(result.references.count).toBe(3);
    // Without an instrument profile the breadths are not corrected: the size module says so.
    expect(result.warnings.some((w) => /instrument profile/.test(w))).toBe(true);
  });

  it('gives the same JSON twice for the same pattern and context', () => {
    const context = createAnalysisContext(references, null, {});
    expect(JSON.stringify(analyzePattern(pattern, context))).toBe(JSON.stringify(analyzePattern(pattern, context)));
  });

  it('searches peaks with the background width asked for, automatic unless set, and records which', () => {
    const automatic = analyzePattern(pattern, createAnalysisContext(references, null, {}));
    const narrow = analyzePattern(pattern, createAnalysisContext(references, null, { backgroundHalfWidthDeg: 0.3 }));
    expect(automatic.settings.backgroundHalfWidthDeg).toBeNull();
    expect(narrow.settings.backgroundHalfWidthDeg).toBe(0.3);
    // The same peaks as a search with that width: the setting reaches the search, not only a drawn curve.
    const byHand = (width?: number) => findPeaks(pattern, { wavelength: cu, backgroundHalfWidthDeg: width }).peaks;
    expect(narrow.peaks).toEqual(byHand(0.3));
    expect(automatic.peaks).toEqual(byHand(undefined));
    // A 0.3° window clips into the tails of 40 nm peaks (FWHM ≈ 0.2°): the areas come out smaller.
    const area = (peaks: typeof narrow.peaks) => peaks.reduce((sum, p) => sum + p.area, 0);
    expect(area(narrow.peaks)).toBeLessThan(0.95 * area(automatic.peaks));
  });

  it('refuses a target missing from the library', () => {
    expect(() => createAnalysisContext(references, null, { target: 'nothing-like-it' })).toThrow(InputError);
  });
});
