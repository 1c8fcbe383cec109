import { describe, expect, it } from 'vitest';
import { seededUniform } from '../../src/core/numeric/random.js';
import { buildReferenceIndex, screenReferences } from '../../src/core/match/reference-index.js';
import { chungWeightFractions } from '../../src/core/match/quantify.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { linesAt, stored } from './synthetic.js';

const L = anodeWavelength('Cu').lambda1;

function randomLibrary(count: number, seed: number) {
  const uniform = seededUniform(seed);
  return Array.from({ length: count }, (_, i) =>
    stored(`random-${i}`, linesAt(L, Array.from({ length: 30 }, () => [8 + 80 * uniform(), 1 + 99 * uniform()] as [number, number]))),
  );
}

describe('the d index of a library', () => {
  it('holds every line once, sorted by d, with its reference and intensity', () => {
    const refs = randomLibrary(300, 1);
    const index = buildReferenceIndex(refs);
    expect(index.d.length).toBe(300 * 30);
    let sorted = true;
    for (let i = 1; i < index.d.length; i++) if (index.d[i] < index.d[i - 1]) sorted = false;
    expect(sorted).toBe(true);
    const all = refs.flatMap((r, k) => r.lines.map((l) => `${k}:${l.d.toFixed(9)}`)).sort();
    const fromIndex = Array.from(index.d, (d, i) => `${index.referenceOf[i]}:${d.toFixed(9)}`).sort();
    expect(fromIndex).toEqual(all);
  });

  it('screens the phase whose lines lie under the peaks to the top of a large library', () => {
    const refs = randomLibrary(2000, 2);
    const index = buildReferenceIndex(refs);
    const truth = refs[1234];
    const twoTheta = Float64Array.from(truth.lines.map((l) => 2 * Math.asin(L / (2 * l.d)) * (180 / Math.PI)).sort((a, b) => a - b));
    const best = screenReferences(index, { twoTheta, lambda: L, windowDeg: 0.1, dMin: L / (2 * Math.sin((90 * Math.PI) / 360)), dMax: L / (2 * Math.sin((5 * Math.PI) / 360)), count: 10 });
    expect(best[0]).toBe(1234);
    expect(best).toHaveLength(10);
  });
});

describe('Chung matrix flushing', () => {
  it('turns scales and reference intensity ratios into weight fractions that sum to one', () => {
    // Chung, J. Appl. Cryst. 7, 519 (1974): w_i = (I_i/RIR_i) / Σ (I_j/RIR_j).
    const w = chungWeightFractions([{ scale: 6, rir: 3 }, { scale: 2, rir: 1 }, { scale: 5, rir: null }]);
    expect(w[0]).toBeCloseTo(0.5, 12);
    expect(w[1]).toBeCloseTo(0.5, 12);
    expect(w[2]).toBeNull();
  });
});
