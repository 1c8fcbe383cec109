import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { binomialTail, chanceCoincidence, coveredFraction } from '../../src/core/match/chance-coincidence.js';
import { matchPhases } from '../../src/core/match/match.js';
import { singleWavelength } from '../../src/core/model/wavelengths.js';
import { seededUniform } from '../../src/core/numeric/random.js';
import { flatBackground, linesAt, peak, peaksOf, stored } from './synthetic.js';

// Golden tails from scipy.stats.binom.sf (test/match/golden/binomial_tail.py).
const golden = JSON.parse(readFileSync(new URL('./golden/binomial-tail.json', import.meta.url), 'utf8')) as Array<{ n: number; k: number; p: number; tail: number }>;

describe('chance coincidence of matched lines', () => {
  it('gives the binomial upper tail as scipy does', () => {
    for (const { n, k, p, tail } of golden) expect(binomialTail(n, k, p) / tail).toBeCloseTo(1, 9);
  });

  it('measures the share of the range within tolerance of a peak, overlaps counted once', () => {
    // Windows [9.9, 10.1] and [10.05, 10.25] overlap: 0.35° of a 100° range.
    expect(coveredFraction([10, 10.15], 0.1, 0, 100)).toBeCloseTo(0.0035, 12);
    expect(coveredFraction([0.05], 0.1, 0, 10)).toBeCloseTo(0.015, 12); // clipped at the range start
  });

  it('calls a match chance when the library is large enough to produce it, and keeps a strong one', () => {
    // 30 lines, 10 on peaks covering 8 % of the range (tail ≈ 1e-4): luck to expect among 100 000 references, not among 10.
    const weak = { linesInRange: 30, matchedLines: 10, coveredFraction: 0.08 };
    expect(chanceCoincidence({ ...weak, screened: 100_000 }).beyondChance).toBe(false);
    expect(chanceCoincidence({ ...weak, screened: 10 }).beyondChance).toBe(true);
    expect(chanceCoincidence({ linesInRange: 30, matchedLines: 20, coveredFraction: 0.08, screened: 100_000 }).beyondChance).toBe(true);
  });

  it('expects about as many coincidences as random references actually produce', () => {
    // Random references of 30 lines against 40 random peaks: the count with ≥ 6 lines on peaks
    // should agree with screened × tail (Poisson spread), which is what the threshold relies on.
    const uniform = seededUniform(77);
    const peaks = Array.from({ length: 40 }, () => 10 + 70 * uniform()).sort((a, b) => a - b);
    const f = coveredFraction(peaks, 0.1, 10, 80);
    const screened = 20_000;
    let atLeastSix = 0;
    for (let r = 0; r < screened; r++) {
      let hits = 0;
      for (let j = 0; j < 30; j++) {
        const x = 10 + 70 * uniform();
        if (peaks.some((p) => Math.abs(p - x) <= 0.1)) hits++;
      }
      if (hits >= 6) atLeastSix++;
    }
    const expected = chanceCoincidence({ linesInRange: 30, matchedLines: 6, coveredFraction: f, screened }).expectedByChance;
    expect(expected).toBeGreaterThan(20);
    expect(Math.abs(atLeastSix - expected)).toBeLessThan(5 * Math.sqrt(expected));
  });
});

describe('the chance check in the verdict', () => {
  // A four-line phase on four strong peaks, among 40 weaker peaks of something unknown (random, seeded).
  const lambda = 1.5405929;
  const wavelength = singleWavelength(lambda);
  const phase = stored('four-line phase', linesAt(lambda, [[21.3, 100], [37.9, 60], [52.4, 45], [66.8, 30]]));
  const uniform = seededUniform(5);
  const unknown = Array.from({ length: 40 }, () => peak(10 + 78 * uniform(), 20 + 20 * uniform(), lambda));
  const peaks = [...peaksOf([{ lines: phase.lines, scale: 10 }], lambda), ...unknown].sort((a, b) => a.twoTheta - b.twoTheta);
  const background = flatBackground(100);
  // References whose lines all lie outside the scan: they are screened but match nothing.
  const elsewhere = (count: number) => Array.from({ length: count }, (_, i) => stored(`elsewhere ${i}`, [{ d: 40 + i * 1e-4, intensity: 100 }]));

  it('keeps a four-line phase present in a small library, and calls it uncertain, saying why, where 20 000 references were screened', () => {
    const small = matchPhases(peaks, [phase, ...elsewhere(10)], { wavelength, background });
    expect(small.phases.find((p) => p.name === phase.name)?.verdict).toBe('present');
    const large = matchPhases(peaks, [phase, ...elsewhere(20_000)], { wavelength, background });
    const judged = large.phases.find((p) => p.name === phase.name)!;
    expect(judged.verdict).toBe('uncertain');
    expect(judged.reasons.some((r) => /could be chance: .* of the 20001 references screened would agree as well by luck/.test(r))).toBe(true);
  });
});
