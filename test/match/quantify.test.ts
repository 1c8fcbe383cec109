/**
 * Chung's matrix flushing and internal standard (Chung, J. Appl. Cryst. 7, 519 (1974)) checked with an
 * independent simulator: scales built from known weight fractions and RIRs as I ∝ RIR·w, with seeded
 * Gaussian noise of a known relative σ on each scale.
 */
import { describe, expect, it } from 'vitest';
import { chungQuantification, chungWeightFractions } from '../../src/core/match/quantify.js';
import { seededUniform, normalDeviate } from '../../src/core/numeric/random.js';

const DRAWS = 30;

describe('weight fractions with σ and an internal standard', () => {
  it.each([0.01, 0.03])('amorphous content from a spiked standard, relative scale σ %s: σ cover the truth (within 3 wt % asserted at 1 %)', (RELATIVE_SCALE_SIGMA) => {
    // Unspiked sample: 60 % target, 15 % hydrate, 25 % amorphous; spiked with 20 wt % corundum-like standard (RIR 1).
    const sample = [0.6, 0.15];
    const rirs = [3.2, 1.8, 1.0];
    const spike = 0.2;
    const mix = [...sample.map((w) => w * (1 - spike)), spike];
    const uniform = seededUniform(7);
    let amorphousWithin3 = 0, amorphousWithin2Sigma = 0, fractionWithin2Sigma = 0, fractionChecks = 0;
    let worst = 0;
    for (let d = 0; d < DRAWS; d++) {
      const phases = mix.map((w, i) => {
        const scale = rirs[i] * w * (1 + RELATIVE_SCALE_SIGMA * normalDeviate(uniform));
        return { scale, scaleSigma: RELATIVE_SCALE_SIGMA * rirs[i] * w, rir: rirs[i] };
      });
      const q = chungQuantification(phases, { index: 2, weightFraction: spike });
      const a = q.amorphous!;
      worst = Math.max(worst, Math.abs(a.fraction - 0.25));
      if (Math.abs(a.fraction - 0.25) <= 0.03) amorphousWithin3++;
      if (Math.abs(a.fraction - 0.25) <= 2 * a.sigma) amorphousWithin2Sigma++;
      // Without the standard the flushing fractions are among the crystalline phases only: 0.8 and 0.2.
      [0.8, 0.2].forEach((truth, i) => {
        fractionChecks++;
        if (Math.abs(q.weightFraction[i]! - truth) <= 2 * q.weightFractionSigma[i]!) fractionWithin2Sigma++;
      });
    }
    console.log(`internal standard, scale σ ${100 * RELATIVE_SCALE_SIGMA} %: amorphous within 3 wt % in ${amorphousWithin3}/${DRAWS} (target all), worst ${(100 * worst).toFixed(2)} wt %; amorphous within 2σ ${amorphousWithin2Sigma}/${DRAWS}, fractions within 2σ ${fractionWithin2Sigma}/${fractionChecks} (target ≥ 90 %)`);
    if (RELATIVE_SCALE_SIGMA <= 0.01) expect(amorphousWithin3).toBe(DRAWS);
    expect(amorphousWithin2Sigma / DRAWS).toBeGreaterThanOrEqual(0.9);
    expect(fractionWithin2Sigma / fractionChecks).toBeGreaterThanOrEqual(0.9);
  });

  it('says the fractions assume a fully crystalline sample without a standard, and agrees with chungWeightFractions', () => {
    const phases = [{ scale: 3, rir: 3 }, { scale: 1, rir: 1 }, { scale: 2, rir: null }];
    const q = chungQuantification(phases);
    expect(q.statement).toMatch(/fully crystalline/);
    expect(q.amorphous).toBeNull();
    expect(q.weightFraction).toEqual(chungWeightFractions(phases));
    expect(q.weightFraction[0]).toBeCloseTo(0.5, 12);
    // No σ given: σ 0, not invented.
    expect(q.weightFractionSigma[0]).toBe(0);
  });
});
