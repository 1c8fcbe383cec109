import { describe, expect, it } from 'vitest';
import { seededUniform } from '../../src/core/numeric/random.js';
import { buildReferenceIndex, screenReferences, sortLineIndex, type PackedLineIndex } from '../../src/core/match/reference-index.js';
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

describe('sorting gathered lines by d', () => {
  /** The plain way: a stable comparison sort of the lines with a positive d. */
  function plainSort(lines: PackedLineIndex): PackedLineIndex {
    const order = Array.from(lines.d.keys()).filter((i) => lines.d[i]! > 0);
    order.sort((a, b) => lines.d[a]! - lines.d[b]! || a - b);
    return { d: Float64Array.from(order, (i) => lines.d[i]!), referenceOf: Int32Array.from(order, (i) => lines.referenceOf[i]!), intensity: Float32Array.from(order, (i) => lines.intensity[i]!) };
  }

  function gathered(d: number[]): PackedLineIndex {
    return { d: Float64Array.from(d), referenceOf: Int32Array.from(d, (_, i) => i % 7), intensity: Float32Array.from(d, (_, i) => i) };
  }

  const uniform = seededUniform(15);
  const cases: Record<string, number[]> = {
    // Each reference's lines by decreasing d, as a library stores them, with d shared by several lines.
    'runs by decreasing d with ties': Array.from({ length: 400 }, (_, r) => Array.from({ length: 25 }, () => Math.round(100 * (0.8 + 12 * uniform())) / 100).sort((a, b) => b - a)).flat(),
    'a range of many binary orders (three passes)': Array.from({ length: 5000 }, () => 10 ** (-200 + 400 * uniform())),
    'a narrow range (one pass)': Array.from({ length: 3000 }, () => 2 + 1e-9 * Math.floor(1000 * uniform())),
    'values equal in their high 32 bits': Array.from({ length: 2000 }, () => 1 + 2 ** -40 * Math.floor(4096 * uniform())),
    'zero, negative and missing d dropped': Array.from({ length: 1000 }, (_, i) => (i % 5 === 0 ? [0, -1, Number.NaN, -0, 3][i % 25 / 5]! : 1 + uniform())),
    'one line': [1.5],
    'no lines': [],
  };
  for (const [name, d] of Object.entries(cases)) {
    it(`gives a stable sort by d: ${name}`, () => {
      const sorted = sortLineIndex(gathered(d));
      const expected = plainSort(gathered(d));
      expect(Array.from(sorted.d)).toEqual(Array.from(expected.d));
      expect(Array.from(sorted.referenceOf)).toEqual(Array.from(expected.referenceOf));
      expect(Array.from(sorted.intensity)).toEqual(Array.from(expected.intensity));
    });
  }
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
