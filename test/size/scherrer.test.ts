import { describe, expect, it } from 'vitest';
import { InputError } from '../../src/core/errors.js';
import { resolveScherrerK, SCHERRER_K_PRESETS, scherrerBreadthDeg, scherrerSizeNm } from '../../src/core/size/scherrer.js';
import { CU_KA1 } from './fixtures.js';

describe('Scherrer equation', () => {
  it('gives about 30 nm for 0.27° of sample breadth near 12° 2θ with Cu Kα and K = 0.9', () => {
    // Common practice (CHECK-VALUES): a 30 nm crystallite broadens a Cu Kα peak near 12° 2θ by about 0.27°.
    const size = scherrerSizeNm(0.27, 12, CU_KA1, 0.9);
    expect(Math.abs(size / 30 - 1)).toBeLessThan(0.02);
  });

  it('inverts: the breadth of a size gives back that size', () => {
    for (const tt of [10, 45, 100]) {
      expect(scherrerSizeNm(scherrerBreadthDeg(42, tt, CU_KA1, 0.94), tt, CU_KA1, 0.94)).toBeCloseTo(42, 10);
    }
  });

  it('offers the usual K presets, each with its source', () => {
    const byId = new Map(SCHERRER_K_PRESETS.map((p) => [p.id, p]));
    expect(byId.get('spheres')?.k).toBe(0.89); // CHECK-VALUES: spheres with FWHM
    expect(byId.get('cubes')?.k).toBe(0.94); // CHECK-VALUES: cubes with FWHM
    expect(byId.get('column-length')?.k).toBe(1.0); // Stokes & Wilson, integral breadth
    expect(byId.get('sphere-integral')?.k).toBe(1.0747); // Langford & Wilson 1978, from memory
    for (const p of SCHERRER_K_PRESETS) expect(p.source.length).toBeGreaterThan(5);
  });

  it('accepts a preset name or a number and refuses nonsense', () => {
    expect(resolveScherrerK('cubes').k).toBe(0.94);
    expect(resolveScherrerK('0,9').k).toBe(0.9);
    expect(resolveScherrerK(undefined).k).toBe(0.9);
    expect(() => resolveScherrerK('huge')).toThrow(InputError);
    expect(() => resolveScherrerK(7)).toThrow(InputError);
  });
});
