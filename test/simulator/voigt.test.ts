import { describe, expect, it } from 'vitest';
import golden from '../golden/voigt/voigt-profile.json' with { type: 'json' };
import { scaledErfc, voigtIntegralBreadth, voigtProfile } from './voigt.js';

describe('simulator Voigt profile (independent of src/core)', () => {
  it('matches scipy.special.voigt_profile golden values to 1e-6 relative', () => {
    let worst = 0;
    for (const c of golden.voigt) worst = Math.max(worst, Math.abs(voigtProfile(c.x, c.sigma, c.gamma) / c.value - 1));
    console.log(`simulator Voigt vs scipy (${golden.source}): worst relative error ${worst.toExponential(2)} over ${golden.voigt.length} points (target ≤ 1e-6)`);
    expect(worst).toBeLessThanOrEqual(1e-6);
  });

  it('erfcx via w(iy) matches scipy.special.erfcx to 1e-6', () => {
    for (const c of golden.erfcx) expect(Math.abs(scaledErfc(c.y) / c.value - 1)).toBeLessThan(1e-6);
  });

  it('integral breadth (area / peak height) matches Langford 1978 βG/erfcx(k), erfcx from scipy', () => {
    const sigma = 0.05;
    const gamma = 0.03;
    const betaG = sigma * Math.sqrt(2 * Math.PI); // Gaussian integral breadth
    const betaL = Math.PI * gamma; // Lorentzian integral breadth
    const k = betaL / (Math.sqrt(Math.PI) * betaG);
    const step = 1e-4;
    let area = 0;
    for (let x = -200; x <= 200; x += step) area += voigtProfile(x, sigma, gamma) * step;
    // The Lorentzian tail beyond ±200 carries 2γ/(π·200) of the area.
    area += (2 * gamma) / (Math.PI * 200);
    const numeric = area / voigtProfile(0, sigma, gamma);
    const scipyErfcx = (y: number): number => {
      const hit = golden.erfcx.find((c) => Math.abs(c.y - y) < 1e-12);
      if (!hit) throw new Error(`no scipy erfcx golden value at ${y}`);
      return hit.value;
    };
    const formula = voigtIntegralBreadth(betaG, betaL, scipyErfcx);
    expect(k).toBeGreaterThan(0);
    expect(Math.abs(numeric / formula - 1)).toBeLessThan(1e-4);
  });
});
