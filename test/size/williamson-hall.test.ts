import { describe, expect, it } from 'vitest';
import { scherrerBreadthDeg } from '../../src/core/size/scherrer.js';
import { hklFamily, williamsonHall, type BreadthPoint } from '../../src/core/size/williamson-hall.js';
import { DEG_TO_RAD } from '../../src/core/model/units.js';
import { CU_KA1 } from './fixtures.js';

/** Breadths that follow β cosθ = Kλ/D + 4ε sinθ exactly (Williamson & Hall 1953). */
function linePoints(sizeNm: number, strain: number, angles: number[]): BreadthPoint[] {
  return angles.map((tt) => {
    const theta = (tt / 2) * DEG_TO_RAD;
    const breadthDeg = scherrerBreadthDeg(sizeNm, tt, CU_KA1, 0.9) + (4 * strain * Math.tan(theta)) / DEG_TO_RAD;
    return { twoThetaDeg: tt, breadthDeg, breadthSigmaDeg: 0.01 * breadthDeg, hkl: null };
  });
}

describe('Williamson–Hall uniform deformation', () => {
  it('recovers size and strain from breadths on the W–H line', () => {
    const r = williamsonHall(linePoints(35, 0.0015, [25, 35, 45, 60, 75, 90]), { wavelengthAngstrom: CU_KA1, k: 0.9 })!;
    expect(r.sizeNm!).toBeCloseTo(35, 6);
    expect(r.strain).toBeCloseTo(0.0015, 9);
    expect(r.r2).toBeCloseTo(1, 9);
    expect(r.sizeSigmaNm!).toBeGreaterThan(0);
    expect(r.warnings).toEqual([]);
  });

  it('reports a strain only when it stands above 2σ', () => {
    const strained = williamsonHall(linePoints(35, 0.0015, [25, 35, 45, 60, 75, 90]), { wavelengthAngstrom: CU_KA1, k: 0.9 })!;
    expect(strained.strainDetected).toBe(true);
    expect(strained.strainStatement).toMatch(/^microstrain 1\.50e-3 ± /);
    // Strain-free breadths with 5 % scatter: the fitted slope is noise.
    const scatter = [1.04, 0.97, 1.02, 0.96, 1.05, 0.98];
    const free = williamsonHall(linePoints(35, 0, [25, 35, 45, 60, 75, 90]).map((p, i) => ({ ...p, breadthDeg: p.breadthDeg * scatter[i]!, breadthSigmaDeg: 0.05 * p.breadthDeg })), { wavelengthAngstrom: CU_KA1, k: 0.9 })!;
    expect(Math.abs(free.strain)).toBeLessThan(2 * free.strainSigma);
    expect(free.strainDetected).toBe(false);
    expect(free.strainStatement).toMatch(/^no strain detected \(\|ε\| < 2σ = [0-9.]+e-\d\)$/);
    expect(free.statement).toContain('no strain detected');
  });

  it('warns when fewer than 4 peaks remain', () => {
    const r = williamsonHall(linePoints(35, 0.001, [30, 50, 70]), { wavelengthAngstrom: CU_KA1, k: 0.9 })!;
    expect(r.warnings.some((w) => w.startsWith('only 3 usable peaks'))).toBe(true);
    expect(williamsonHall(linePoints(35, 0.001, [30]), { wavelengthAngstrom: CU_KA1, k: 0.9 })).toBeNull();
  });

  it('warns when the slope is clearly negative', () => {
    const points = linePoints(20, 0, [25, 35, 45, 60, 75, 90]).map((p, i) => ({ ...p, breadthDeg: p.breadthDeg * (1.3 - 0.06 * i) }));
    const r = williamsonHall(points, { wavelengthAngstrom: CU_KA1, k: 0.9 })!;
    expect(r.strain).toBeLessThan(0);
    expect(r.warnings.some((w) => w.startsWith('negative Williamson–Hall slope'))).toBe(true);
  });

  it('gives a lower bound when the intercept is not above zero', () => {
    const r = williamsonHall(linePoints(1e6, 0.002, [25, 35, 45, 60, 75, 90]), { wavelengthAngstrom: CU_KA1, k: 0.9 })!;
    expect(r.limit).toBe('instrument');
    expect(r.statement).toMatch(/^larger than|beyond/);
  });

  it('groups reflections into direction families', () => {
    expect(hklFamily([2, 0, 0])).toEqual([1, 0, 0]);
    expect(hklFamily([-2, 2, 0])).toEqual([1, 1, 0]);
    expect(hklFamily([3, 1, 1])).toEqual([3, 1, 1]);
  });
});
