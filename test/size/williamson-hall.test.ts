import { describe, expect, it } from 'vitest';
import { halderWagner } from '../../src/core/size/halder-wagner.js';
import { hklFamily, williamsonHall } from '../../src/core/size/williamson-hall.js';
import { PHI_GAUSSIAN, PHI_LORENTZIAN } from '../../src/core/size/voigt.js';
import { DEG_TO_RAD } from '../../src/core/model/units.js';
import { CU_KA1, exactSizeStrainPoints } from './fixtures.js';

const FWHM = { k: 0.9, breadth: 'fwhm' as const, wavelengthAngstrom: CU_KA1 };

const ANGLES = [25, 35, 45, 60, 75, 90];

describe('Williamson–Hall on the Voigt parts', () => {
  it('recovers size and strain exactly from exact Voigt parts (where adding whole widths gives 40 nm as about 56 nm)', () => {
    const r = williamsonHall(exactSizeStrainPoints(40, 0.002, ANGLES), FWHM);
    if ('reason' in r) throw new Error(r.reason);
    expect(r.sizeNm!).toBeCloseTo(40, 6);
    expect(r.strain).toBeCloseTo(0.002, 9);
    expect(r.strainDetected).toBe(true);
    expect(r.strainStatement).toMatch(/^microstrain 2\.00e-3 ± /);
    expect(r.convention).toContain('K = 0.9');
    expect(r.convention).toContain('FWHM');
    expect(r.plot).toHaveLength(6);
  });

  it('says no strain detected for a strain-free powder', () => {
    const r = williamsonHall(exactSizeStrainPoints(35, 0, ANGLES), FWHM);
    if ('reason' in r) throw new Error(r.reason);
    expect(r.strainDetected).toBe(false);
    expect(r.strainStatement).toMatch(/^no strain detected \(\|ε\| < 2σ = [0-9.]+e-\d\)$/);
  });

  it('is no result, with the reason, from fewer than 4 reflections or too short a span', () => {
    const few = williamsonHall(exactSizeStrainPoints(35, 0.001, [30, 50, 70]), FWHM);
    expect('reason' in few && few.reason).toMatch(/3 resolved reflection\(s\); a size–strain plot needs at least 4/);
    const narrow = williamsonHall(exactSizeStrainPoints(35, 0.001, [30, 31, 32, 33]), FWHM);
    expect('reason' in narrow && narrow.reason).toMatch(/span only 30\.0–33\.0° 2θ/);
    expect('reason' in halderWagner(exactSizeStrainPoints(35, 0.001, [30, 50, 70]), FWHM)).toBe(true);
  });

  it('gives a lower bound when the size part is not above zero', () => {
    const r = williamsonHall(exactSizeStrainPoints(1e7, 0.002, ANGLES).map((p) => ({ ...p, lorentzianSigmaDeg: 0.01 })), FWHM);
    if ('reason' in r) throw new Error(r.reason);
    expect(r.limit).toBe('instrument');
    expect(r.statement).toMatch(/^larger than|beyond/);
  });

  it('groups reflections into direction families', () => {
    expect(hklFamily([2, 0, 0])).toEqual([1, 0, 0]);
    expect(hklFamily([-2, 2, 0])).toEqual([1, 1, 0]);
    expect(hklFamily([3, 1, 1])).toEqual([3, 1, 1]);
  });
});

describe('Halder–Wagner plot', () => {
  it("recovers size within 3 % and strain within 5 % from exact Voigt breadths (the plot's approximation refined with the exact Voigt breadth)", () => {
    for (const [d, e] of [[20, 0.001], [40, 0.002], [100, 0.003]] as const) {
      const r = halderWagner(exactSizeStrainPoints(d, e, ANGLES), FWHM);
      if ('reason' in r) throw new Error(r.reason);
      expect(Math.abs(r.sizeNm! / d - 1)).toBeLessThan(0.03);
      expect(Math.abs(r.strain / e - 1)).toBeLessThan(0.05);
      expect(r.method).toBe('halder-wagner');
      expect(r.reflections).toBe(6);
    }
  });

  it('states the integral-breadth convention when asked for it (K = 1: the volume-weighted column length)', () => {
    const fwhm = halderWagner(exactSizeStrainPoints(40, 0.002, ANGLES), FWHM);
    const integral = halderWagner(exactSizeStrainPoints(40, 0.002, ANGLES), { k: 1, breadth: 'integral', wavelengthAngstrom: CU_KA1 });
    if ('reason' in fwhm || 'reason' in integral) throw new Error('no result');
    // The same line read in two conventions: D_FWHM = 0.9·(π/2)·D_β, ε_FWHM = φ_G·ε_β.
    expect(fwhm.sizeNm! / integral.sizeNm!).toBeCloseTo((0.9 * Math.PI) / 2, 9);
    expect(fwhm.strain / integral.strain).toBeCloseTo(PHI_GAUSSIAN, 9);
    expect(integral.convention).toContain('integral breadth');
  });

  it('says no strain detected for a strain-free powder with 3 % scatter', () => {
    const r = halderWagner(exactSizeStrainPoints(35, 0, ANGLES, [1.03, 0.98, 1.01, 0.97, 1.02, 0.99]).map((p) => ({ ...p, integralBreadthSigmaDeg: 0.03 * p.integralBreadthDeg })), FWHM);
    if ('reason' in r) throw new Error(r.reason);
    expect(r.strainDetected).toBe(false);
    expect(r.statement).toContain('no strain detected');
    expect(Math.abs(r.sizeNm! / 35 - 1)).toBeLessThan(0.1);
  });
});
