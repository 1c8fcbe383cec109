import type { Pattern } from '../../src/core/model/pattern.js';
import type { ReferenceLine } from '../../src/core/model/reference.js';
import { areaForHeight, type GivenLine } from '../simulator/pattern.js';

/** A pattern from plain arrays (σ = √counts unless given), labelled as a test input. */
export function patternOf(x: ArrayLike<number>, y: ArrayLike<number>, sigma?: ArrayLike<number>): Pattern {
  const yy = Float64Array.from(y);
  return {
    x: Float64Array.from(x),
    y: yy,
    sigma: sigma ? Float64Array.from(sigma) : yy.map((v) => Math.sqrt(Math.max(v, 1))),
    wavelength: null,
    source: { file: 'test pattern', sha256: '', byteLength: 0, format: 'simulated' },
    meta: {},
    readerNotes: [],
  };
}

/** Pseudo-Voigt lines (η = 0.5) of given tops, [2θ, counts per point at a 0.02° step], FWHM growing with 2θ from a base. */
export function linesOfHeights(tops: ReadonlyArray<readonly [number, number]>, baseFwhmDeg = 0.07): GivenLine[] {
  return tops.map(([twoThetaDeg, height]) => {
    const shape = { fwhmDeg: baseFwhmDeg + 0.0015 * twoThetaDeg, eta: 0.5 };
    return { twoThetaDeg, shape, area: areaForHeight(height, shape) };
  });
}

/**
 * Silicon (diamond structure, F d -3 m) lines: h, k, l all odd, or all even with h + k + l = 4n
 * (International Tables Vol. A, reflection conditions of Fd-3m, 8a site). Relative intensities from
 * multiplicity and |F|² with a constant form factor (32 f² for all-odd, 64 f² for all-even): positions
 * are what the tests check, intensities only need to be plausible.
 */
export function siliconLines(aAngstrom: number, maxIndex = 8): ReferenceLine[] {
  const bySum = new Map<number, ReferenceLine>();
  for (let h = 0; h <= maxIndex; h++) {
    for (let k = 0; k <= h; k++) {
      for (let l = 0; l <= k; l++) {
        const allOdd = h % 2 === 1 && k % 2 === 1 && l % 2 === 1;
        const allEven = h % 2 === 0 && k % 2 === 0 && l % 2 === 0 && (h + k + l) % 4 === 0;
        if (h + k + l === 0 || !(allOdd || allEven)) continue;
        const s2 = h * h + k * k + l * l;
        const multiplicity = cubicMultiplicity(h, k, l);
        const existing = bySum.get(s2);
        const intensity = (existing?.intensity ?? 0) + multiplicity * (allOdd ? 32 : 64);
        bySum.set(s2, { d: aAngstrom / Math.sqrt(s2), intensity, hkl: existing?.hkl ?? [h, k, l] });
      }
    }
  }
  return [...bySum.values()].sort((p, q) => q.d - p.d);
}

function cubicMultiplicity(h: number, k: number, l: number): number {
  const distinct = new Set([h, k, l]).size;
  const zeros = [h, k, l].filter((v) => v === 0).length;
  const permutations = distinct === 3 ? 6 : distinct === 2 ? 3 : 1;
  return permutations * 2 ** (3 - zeros);
}
