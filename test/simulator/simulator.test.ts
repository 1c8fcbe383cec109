/** The accuracy-test pattern simulator checked against outside values (its Voigt: voigt.test.ts). */
import { describe, expect, it } from 'vitest';
import { CU_KALPHA1, faceCentredClasses, simulateCubicPattern } from './pattern.js';

describe('test simulator', () => {
  it('puts silicon 111 at 28.441° 2θ for a = 5.43123 Å (NIST SRM 640d certificate) at Cu Kα1 (Bragg\'s law; 28.44° is the usual tabulated position, from memory)', () => {
    const p = simulateCubicPattern({
      phases: [{ a: 5.43123, intensities: new Map([[3, 100]]) }],
      twoThetaMinDeg: 28,
      twoThetaMaxDeg: 29,
      stepDeg: 0.0005,
      peakCounts: 1e9,
      backgroundCounts: 0,
      seed: 1,
      instrument: { u: 0, v: 0, w: 1e-6, x: 0, y: 0.001 },
    });
    let best = 0;
    for (let i = 1; i < p.x.length; i++) if (p.y[i] > p.y[best]) best = i;
    expect(Math.abs(p.x[best] - 28.441)).toBeLessThan(0.001);
    expect(CU_KALPHA1).toBe(1.5405929);
    expect(p.source.file).toContain('(simulated)');
  });

  it('lists the face-centred cubic classes 111, 200, 220, 311, 222, 400', () => {
    expect(faceCentredClasses(16)).toEqual([3, 4, 8, 11, 12, 16]);
  });
});
