/**
 * Growth fit checked over seeded noise draws: shares generated from the exact model
 * share = A(1 − e^{−(k(t−t0))^n}) (Avrami, J. Chem. Phys. 7, 1103 (1939)) plus Gaussian noise of a
 * known σ, written here independently of src/core/series/kinetics.ts.
 */
import { describe, expect, it } from 'vitest';
import { fitGrowth } from '../../src/core/series/kinetics.js';
import { seededUniform, normalDeviate } from '../../src/core/numeric/random.js';

const DRAWS = 24;
const SIGMA = 0.008;
const times = [0, 0.5, 1, 1.5, 2, 3, 4, 5, 6, 8, 10, 12];

function truth(t: number, A: number, k: number, n: number, t0: number): number {
  return t <= t0 ? 0 : A * (1 - Math.exp(-Math.pow(k * (t - t0), n)));
}

function draws(seed: number, A: number, k: number, n: number, t0: number, trueModel: 'first-order' | 'jmak') {
  const trueHalf = t0 + Math.pow(Math.LN2, 1 / n) / k;
  const trueCross = t0 + Math.pow(-Math.log(1 - 0.05 / A), 1 / n) / k;
  const uniform = seededUniform(seed);
  let within2 = 0, within5pct = 0, rightModel = 0, crossWithin2 = 0, fitted = 0;
  const ratios: number[] = [];
  for (let d = 0; d < DRAWS; d++) {
    const points = times.map((t) => ({ timeHours: t, share: truth(t, A, k, n, t0) + SIGMA * normalDeviate(uniform), shareSigma: SIGMA }));
    const r = fitGrowth(points);
    if (!r.fit) continue;
    fitted++;
    const f = r.fit;
    if (Math.abs(f.halfTimeHours - trueHalf) <= 2 * f.halfTimeSigmaHours) within2++;
    if (Math.abs(f.halfTimeHours - trueHalf) <= 0.05 * trueHalf) within5pct++;
    if (f.model === trueModel) rightModel++;
    if (f.thresholdTimeHours !== null && Math.abs(f.thresholdTimeHours - trueCross) <= 2 * (f.thresholdTimeSigmaHours ?? 0)) crossWithin2++;
    ratios.push(f.halfTimeHours / trueHalf);
  }
  const meanRatio = ratios.reduce((s, v) => s + v, 0) / ratios.length;
  return { fitted, within2: within2 / DRAWS, within5pct: within5pct / DRAWS, rightModel: rightModel / DRAWS, crossWithin2: crossWithin2 / DRAWS, meanRatio };
}

describe('growth fit over noise draws (σ of shares known)', () => {
  it('first order, t½ = 2.00 h: half-time within 5 % and within 2σ', () => {
    const r = draws(101, 0.4, Math.LN2 / 2, 1, 0, 'first-order');
    console.log(`first order t½ 2 h: mean t½/true ${r.meanRatio.toFixed(4)} (target within 5 %), within 2σ ${(100 * r.within2).toFixed(0)} % (target ≥ 90 %), within 5 % ${(100 * r.within5pct).toFixed(0)} %, first order chosen ${(100 * r.rightModel).toFixed(0)} %, 5 % crossing within 2σ ${(100 * r.crossWithin2).toFixed(0)} %`);
    expect(r.fitted).toBe(DRAWS);
    expect(Math.abs(r.meanRatio - 1)).toBeLessThan(0.05);
    expect(r.within2).toBeGreaterThanOrEqual(0.9);
    expect(r.rightModel).toBeGreaterThan(0.5);
  });

  it('JMAK n = 3 with induction 1 h: half-time within 5 % and within 2σ', () => {
    const r = draws(202, 0.5, 1 / 4, 3, 1, 'jmak');
    console.log(`JMAK n 3, t0 1 h: mean t½/true ${r.meanRatio.toFixed(4)} (target within 5 %), within 2σ ${(100 * r.within2).toFixed(0)} % (target ≥ 90 %), within 5 % ${(100 * r.within5pct).toFixed(0)} %, JMAK chosen ${(100 * r.rightModel).toFixed(0)} %, 5 % crossing within 2σ ${(100 * r.crossWithin2).toFixed(0)} %`);
    expect(r.fitted).toBe(DRAWS);
    expect(Math.abs(r.meanRatio - 1)).toBeLessThan(0.05);
    expect(r.within2).toBeGreaterThanOrEqual(0.9);
    expect(r.rightModel).toBeGreaterThan(0.5);
  });
});
