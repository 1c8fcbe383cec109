/**
 * Sizes in patterns like the demo project's (simulated): methylammonium lead iodide, whose tetragonal
 * cell puts many lines close together (doublets such as 002/110, 004/220, 114/310 and weak lines beside
 * strong ones), with the instrument profile from a simulated LaB6 standard.
 */
import { describe, expect, it } from 'vitest';
import { analyzePattern } from '../../src/core/analysis/analyse.js';
import { crystalliteSizes } from '../../src/core/size/sizes.js';
import { createAnalysisContext } from '../../src/core/analysis/analyse.js';
import { CU, exposureSample, LEAD_IODIDE, perovskiteContext, reference, references, simulate, STANDARD, standardProfile, TARGET } from '../series/perovskite-fixtures.js';

const instrument = standardProfile();
const context = perovskiteContext(instrument);
const sizeOf = (sizeNm: number, seed: number) => analyzePattern(simulate([{ lines: reference(TARGET).lines, scale: 1, sizeNm }], seed), context).size;

describe('crystallite sizes of a phase with many close lines', () => {
  // The target (10–80 nm within 5 %) is taken over eight noise draws: one pattern's size scatters by
  // ±1.5–3 % with its counting noise, so a single draw may pass or miss by luck. The mean error must be within
  // 5 % and no draw off by more than 8 % (measured on these seeds: 48 nm mean −1.6 %, 75 nm mean −3.4 %, worst
  // −5.8 %; the bias grows with size, as the instrument's share of the breadth does, and is about −2 % at 75 nm
  // on silicon's isolated lines too).
  for (const sizeNm of [48, 75]) {
    it(`recovers ${sizeNm} nm within 5 % on average over eight noise draws (issue target for 10–80 nm)`, () => {
      const errors = [101, 102, 103, 104, 105, 106, 107, 108].map((seed) => {
        const r = sizeOf(sizeNm, seed);
        expect(r.scherrer.limit).toBeNull();
        return r.scherrer.sizeNm! / sizeNm - 1;
      });
      const mean = errors.reduce((a, b) => a + b, 0) / errors.length;
      console.log(`${sizeNm} nm: size errors ${errors.map((e) => (100 * e).toFixed(1)).join(', ')} %; mean ${(100 * mean).toFixed(1)} %`);
      expect(Math.abs(mean)).toBeLessThan(0.05);
      expect(Math.max(...errors.map(Math.abs))).toBeLessThan(0.08);
    });
  }

  it('leaves out peaks blended with lines of another phase present, even lines it did not match (a broad hydrate line under 404)', () => {
    for (const seed of [205, 206, 207]) {
      // 45 % monohydrate (30 nm, broad lines) and 7 % lead iodide beside the target (48 nm), as after two days in humid air.
      const r = exposureSample(0.45, 0.07, seed, context).size;
      const at = (hkl: string) => r.peaks.find((p) => p.hkl?.join('') === hkl);
      // 404 (50.18°) has the monohydrate's 49.84° and 49.97° lines within its reach.
      expect(at('404')?.limit ?? 'overlap').toBe('overlap');
      // Whatever is left gives the size it was simulated with, or no size with the reason.
      for (const p of r.peaks.filter((q) => q.limit === null)) expect(Math.abs(p.sizeNm! / 48 - 1)).toBeLessThan(0.2);
      // Where no peak stands alone, the constrained group fit gives the size (or says why it cannot).
      if (r.scherrer.sizeNm === null) {
        if (r.groupFit) expect(Math.abs(r.groupFit.sizeNm / 48 - 1)).toBeLessThan(0.1);
        else expect(r.groupFitReason).toMatch(/constrained group fit/);
        expect(r.warnings.join(' ')).toMatch(/every line of methylammonium lead iodide overlaps another phase's: its size, [\d.]+ ± [\d.]+ nm from a constrained group fit|constrained group fit/);
      }
    }
  });

  it('with no target set, sizes the phase that explains most of the peak area, not a minor one that scores a hair higher', () => {
    const noTarget = createAnalysisContext(references, instrument, { wavelength: CU });
    for (const seed of [301, 302]) {
      // 85 wt % target (48 nm) with 15 wt % lead iodide (40 nm).
      const r = exposureSample(0, 0.15, seed, noTarget);
      const present = r.match.phases.filter((p) => p.verdict !== 'not-seen');
      expect(present.map((p) => p.name)).toEqual(expect.arrayContaining([TARGET, LEAD_IODIDE]));
      const major = present.reduce((a, b) => (b.explainedAreaShare > a.explainedAreaShare ? b : a));
      expect(major.name).toBe(TARGET);
      expect(r.settings.sizePhase).toBe(TARGET);
    }
  });

  it('leaves out peaks blended with a neighbouring line the fit did not resolve (e.g. 213 beside the 114/310 doublet)', () => {
    const r = sizeOf(48, 101);
    const at = (hkl: string) => r.peaks.find((p) => p.hkl?.join('') === hkl);
    expect(at('213')?.limit ?? 'overlap').toBe('overlap');
    expect(at('211')?.limit).toBeNull();
    expect(at('404')?.limit).toBeNull();
  });
});

describe('the LaB6 standard analysed as a sample', () => {
  const pattern = simulate([{ lines: reference(STANDARD).lines, scale: 1 }], 301, { twoThetaMinDeg: 10, twoThetaMaxDeg: 100 });

  it('is reported beyond the resolvable range with the instrument profile, never as a number', () => {
    const r = analyzePattern(pattern, context).size;
    expect(r.scherrer.limit).toBe('instrument');
    expect(r.scherrer.statement).toMatch(/^larger than \d+ nm/);
  });

  it('gets no size when it is the very pattern the instrument profile was fitted to', () => {
    const own = { ...instrument, standard: { ...instrument.standard, sha256: pattern.source.sha256 } };
    const r = analyzePattern(pattern, perovskiteContext(own)).size;
    expect(r.scherrer.sizeNm).toBeNull();
    expect(r.scherrer.statement).toMatch(/^instrument standard: /);
  });

  // Issue 13: never a size for a line-profile standard (this test said "larger than N nm" before).
  it('gets no size without an instrument profile, since its breadths are the instrument\'s', () => {
    const analysis = analyzePattern(pattern, perovskiteContext(null));
    const std = reference(STANDARD);
    const r = crystalliteSizes(analysis.peaks, { wavelength: CU, phase: { name: std.name, lines: std.lines, tags: std.tags } });
    expect(r.scherrer.limit).toBe('instrument');
    expect(r.scherrer.sizeNm).toBeNull();
    expect(r.scherrer.sizeSigmaNm).toBeNull();
    expect(r.scherrer.statement).toMatch(/^instrument standard: the widths of .* are the instrument's, so no crystallite size is given for it$/);
    expect(r.williamsonHall).toBeNull();
  });
});
