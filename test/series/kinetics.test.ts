import { describe, expect, it } from 'vitest';
import { fitGrowth } from '../../src/core/series/kinetics.js';
import { seededUniform, normalDeviate } from '../../src/core/numeric/random.js';

const times = [0, 0.5, 1, 2, 4, 8, 16, 24];

describe('growth of a share over exposure time', () => {
  it('recovers a first-order half-time from noisy shares', () => {
    const uniform = seededUniform(11);
    const k = Math.LN2 / 3; // t½ = 3 h
    const points = times.map((t) => ({ timeHours: t, share: 0.4 * (1 - Math.exp(-k * t)) + 0.005 * normalDeviate(uniform) }));
    const r = fitGrowth(points);
    expect(r.supported).toBe(true);
    expect(r.fit!.model).toBe('first-order');
    expect(Math.abs(r.fit!.halfTimeHours - 3)).toBeLessThan(3 * r.fit!.halfTimeSigmaHours + 0.3);
    expect(r.fit!.plateau).toBeCloseTo(0.4, 1);
  });

  it('prefers JMAK when the growth is sigmoidal and gives its exponent', () => {
    const uniform = seededUniform(12);
    const k = 1 / 5;
    const points = [0, 1, 2, 3, 4, 5, 6, 8, 10, 14, 20].map((t) => ({ timeHours: t, share: 0.6 * (1 - Math.exp(-Math.pow(k * t, 3))) + 0.004 * normalDeviate(uniform) }));
    const r = fitGrowth(points);
    expect(r.supported).toBe(true);
    expect(r.fit!.model).toBe('jmak');
    expect(r.fit!.exponent).toBeGreaterThan(2.4);
    expect(r.fit!.exponent).toBeLessThan(3.6);
    // t½ = (ln 2)^(1/n)/k (Avrami 1939)
    expect(r.fit!.halfTimeHours).toBeCloseTo(Math.pow(Math.LN2, 1 / 3) * 5, 0);
  });

  it('says when the data do not support a curve', () => {
    expect(fitGrowth([{ timeHours: 0, share: 0 }, { timeHours: 1, share: 0.1 }, { timeHours: 2, share: 0.2 }]).supported).toBe(false);
    const flat = fitGrowth(times.map((t, i) => ({ timeHours: t, share: 0.1 + (i % 2 ? 0.01 : -0.01) })));
    expect(flat.supported).toBe(false);
    const early = fitGrowth([0, 1, 2, 3, 4].map((t) => ({ timeHours: t, share: 0.001 * t })));
    expect(early.supported).toBe(false);
    expect(early.statement).toMatch(/do not support|uncertain|beyond/);
  });
});
