import { describe, expect, it } from 'vitest';
import { halderWagner } from '../../src/core/size/halder-wagner.js';
import { hklFamily, williamsonHall } from '../../src/core/size/williamson-hall.js';
import type { SizeStrainPoint } from '../../src/core/size/size-strain-points.js';
import { PHI_GAUSSIAN, PHI_LORENTZIAN, voigtIntegralBreadth } from '../../src/core/size/voigt.js';
import { DEG_TO_RAD } from '../../src/core/model/units.js';
import { CU_KA1 } from './fixtures.js';

const FWHM = { k: 0.9, breadth: 'fwhm' as const, wavelengthAngstrom: CU_KA1 };

/**
 * Exact sample broadening of a size (Lorentzian FWHM Kλ/(D cosθ)) and a strain (Gaussian FWHM 4ε tanθ)
 * (Scherrer 1918; Stokes & Wilson 1944), with the whole integral breadth of their Voigt (exact
 * convolution, de Keijser et al., J. Appl. Cryst. 15, 308 (1982)); 1 % σ on every width.
 */
function exactPoints(sizeNm: number, strain: number, angles: number[], scatter: number[] = []): SizeStrainPoint[] {
  return angles.map((tt, i) => {
    const theta = (tt / 2) * DEG_TO_RAD;
    const l = ((0.9 * CU_KA1) / (sizeNm * 10 * Math.cos(theta)) / DEG_TO_RAD) * (scatter[i] ?? 1);
    const g = (4 * strain * Math.tan(theta)) / DEG_TO_RAD;
    const beta = voigtIntegralBreadth({ lorentzian: l / PHI_LORENTZIAN, gaussian: g / PHI_GAUSSIAN });
    return {
      twoThetaDeg: tt,
      lorentzianDeg: l,
      lorentzianSigmaDeg: 0.01 * l,
      gaussianDeg: g,
      gaussianSigmaDeg: Math.max(0.01 * g, 0.002),
      integralBreadthDeg: beta,
      integralBreadthSigmaDeg: 0.01 * beta,
      hkl: null,
    };
  });
}

const ANGLES = [25, 35, 45, 60, 75, 90];

describe('Williamson–Hall on the Voigt parts', () => {
  it('recovers size and strain exactly from exact Voigt parts (where adding whole widths gives 40 nm as about 56 nm)', () => {
    const r = williamsonHall(exactPoints(40, 0.002, ANGLES), FWHM);
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
    const r = williamsonHall(exactPoints(35, 0, ANGLES), FWHM);
    if ('reason' in r) throw new Error(r.reason);
    expect(r.strainDetected).toBe(false);
    expect(r.strainStatement).toMatch(/^no strain detected \(\|ε\| < 2σ = [0-9.]+e-\d\)$/);
  });

  it('is no result, with the reason, from fewer than 4 reflections or too short a span', () => {
    const few = williamsonHall(exactPoints(35, 0.001, [30, 50, 70]), FWHM);
    expect('reason' in few && few.reason).toMatch(/3 resolved reflection\(s\); a size–strain plot needs at least 4/);
    const narrow = williamsonHall(exactPoints(35, 0.001, [30, 31, 32, 33]), FWHM);
    expect('reason' in narrow && narrow.reason).toMatch(/span only 30\.0–33\.0° 2θ/);
    expect('reason' in halderWagner(exactPoints(35, 0.001, [30, 50, 70]), FWHM)).toBe(true);
  });

  it('gives a lower bound when the size part is not above zero', () => {
    const r = williamsonHall(exactPoints(1e7, 0.002, ANGLES).map((p) => ({ ...p, lorentzianSigmaDeg: 0.01 })), FWHM);
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
      const r = halderWagner(exactPoints(d, e, ANGLES), FWHM);
      if ('reason' in r) throw new Error(r.reason);
      expect(Math.abs(r.sizeNm! / d - 1)).toBeLessThan(0.03);
      expect(Math.abs(r.strain / e - 1)).toBeLessThan(0.05);
      expect(r.method).toBe('halder-wagner');
      expect(r.reflections).toBe(6);
    }
  });

  it('states the integral-breadth convention when asked for it (K = 1: the volume-weighted column length)', () => {
    const fwhm = halderWagner(exactPoints(40, 0.002, ANGLES), FWHM);
    const integral = halderWagner(exactPoints(40, 0.002, ANGLES), { k: 1, breadth: 'integral', wavelengthAngstrom: CU_KA1 });
    if ('reason' in fwhm || 'reason' in integral) throw new Error('no result');
    // The same line read in two conventions: D_FWHM = 0.9·(π/2)·D_β, ε_FWHM = φ_G·ε_β.
    expect(fwhm.sizeNm! / integral.sizeNm!).toBeCloseTo((0.9 * Math.PI) / 2, 9);
    expect(fwhm.strain / integral.strain).toBeCloseTo(PHI_GAUSSIAN, 9);
    expect(integral.convention).toContain('integral breadth');
  });

  it('says no strain detected for a strain-free powder with 3 % scatter', () => {
    const r = halderWagner(exactPoints(35, 0, ANGLES, [1.03, 0.98, 1.01, 0.97, 1.02, 0.99]).map((p) => ({ ...p, integralBreadthSigmaDeg: 0.03 * p.integralBreadthDeg })), FWHM);
    if ('reason' in r) throw new Error(r.reason);
    expect(r.strainDetected).toBe(false);
    expect(r.statement).toContain('no strain detected');
    expect(Math.abs(r.sizeNm! / 35 - 1)).toBeLessThan(0.1);
  });
});
