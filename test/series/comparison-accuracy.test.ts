/**
 * The series statistics checked against a simulator of its own (not the code under test): per-reflection
 * Scherrer sizes of a powder whose apparent size follows Williamson & Hall (Acta Metall. 1, 22 (1953)),
 * β cosθ = Kλ/D + 4ε sinθ, with fit noise per reflection and a preparation-to-preparation spread of 2 %
 * (a typical spread, from memory). Targets are those of the issue; the rates are printed.
 */
import { describe, expect, it } from 'vitest';
import { compareSizes, type SizeForComparison } from '../../src/core/series/compare.js';

const LAMBDA = 1.5405929; // Cu Kα1, Å (CHECK-VALUES.md)
const K = 0.9;

/** A small seeded generator (mulberry32) and Box–Muller normals, written here so the check is independent. */
function rng(seed: number): () => number {
  let a = seed >>> 0;
  const uniform = () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  return () => Math.sqrt(-2 * Math.log(uniform() + 1e-300)) * Math.cos(2 * Math.PI * uniform());
}

/** Cubic reflections (a = 6.3 Å) inside a scan range, as "h k l" with 2θ. */
function reflections(maxTwoThetaDeg: number): Array<{ hkl: string; twoTheta: number }> {
  const out: Array<{ hkl: string; twoTheta: number }> = [];
  for (const [h, k, l] of [[1, 0, 0], [1, 1, 0], [1, 1, 1], [2, 0, 0], [2, 1, 0], [2, 1, 1], [2, 2, 0], [3, 1, 0], [2, 2, 2], [3, 2, 1], [4, 0, 0], [4, 2, 0], [4, 2, 2], [5, 1, 0], [4, 4, 0], [6, 0, 0]]) {
    const d = 6.3 / Math.hypot(h!, k!, l!);
    const s = LAMBDA / (2 * d);
    if (s >= 1) continue;
    const twoTheta = (2 * Math.asin(s) * 180) / Math.PI;
    if (twoTheta <= maxTwoThetaDeg && twoTheta >= 10) out.push({ hkl: `${h} ${k} ${l}`, twoTheta });
  }
  return out;
}

/** One preparation: per-reflection apparent sizes with 1 % fit noise, its mean and the σ of the mean. */
function preparation(label: string, sizeNm: number, strain: number, maxTwoTheta: number, normal: () => number, group: string | null = null): SizeForComparison {
  const refl = reflections(maxTwoTheta).map(({ hkl, twoTheta }) => {
    const theta = (twoTheta * Math.PI) / 360;
    const betaCos = (K * LAMBDA) / (10 * sizeNm) + 4 * strain * Math.sin(theta); // rad, λ in Å and D in nm → ×10
    const apparent = (K * LAMBDA) / (10 * betaCos);
    const sigma = 0.01 * apparent;
    return { hkl, sizeNm: apparent + sigma * normal(), sizeSigmaNm: sigma };
  });
  let sw = 0;
  let swx = 0;
  for (const r of refl) {
    sw += 1 / r.sizeSigmaNm ** 2;
    swx += r.sizeNm / r.sizeSigmaNm ** 2;
  }
  return { label, sizeNm: swx / sw, sizeSigmaNm: 1 / Math.sqrt(sw), lowerBound: false, phase: 'p', reflections: refl, replicateGroup: group };
}

describe('series statistics on a simulator of their own', () => {
  it('the same strained powder scanned to 62° and to 135° is never called different', () => {
    const normal = rng(11);
    let differs = 0;
    const trials = 200;
    for (let t = 0; t < trials; t++) {
      const r = compareSizes([preparation('to 62°', 40, 0.002, 62, normal), preparation('to 135°', 40, 0.002, 135, normal)]);
      if (r.pairs[0]!.differs) differs++;
    }
    // Without shared reflections the two means differ by the strain's share alone (about 10 % here).
    const naive = compareSizes([{ ...preparation('to 62°', 40, 0.002, 62, normal), reflections: undefined }, { ...preparation('to 135°', 40, 0.002, 135, normal), reflections: undefined }]);
    console.log(`same powder, two scan ranges: called different in ${differs}/${trials} (target 0); whole-pattern means would say: ${naive.pairs[0]!.statement}`);
    expect(differs).toBe(0);
    expect(naive.pairs[0]!.differs).toBe(true);
  });

  it('20 identical preparations: no pair called different after Holm in at least 95 % of series', () => {
    const normal = rng(12);
    const series = 100;
    let clean = 0;
    for (let t = 0; t < series; t++) {
      const preps = Array.from({ length: 20 }, (_, i) => preparation(`prep ${i + 1}`, 40 * (1 + 0.02 * normal()), 0, 90, normal));
      if (!compareSizes(preps).pairs.some((p) => p.differs)) clean++;
    }
    console.log(`20 identical preparations (2 % spread, default term): series with no pair different ${clean}/${series} (target ≥ 95 %)`);
    expect(clean / series).toBeGreaterThanOrEqual(0.95);
  });

  it('a true 5 % difference with 5 replicates each is detected in at least 80 %', () => {
    const normal = rng(13);
    const trials = 200;
    let detected = 0;
    let falseAlarms = 0;
    for (let t = 0; t < trials; t++) {
      const a = Array.from({ length: 5 }, (_, i) => preparation(`a${i}`, 40 * (1 + 0.02 * normal()), 0, 90, normal, 'as made'));
      const b = Array.from({ length: 5 }, (_, i) => preparation(`b${i}`, 42 * (1 + 0.02 * normal()), 0, 90, normal, 'annealed'));
      const same = Array.from({ length: 5 }, (_, i) => preparation(`c${i}`, 40 * (1 + 0.02 * normal()), 0, 90, normal, 'ground'));
      const r = compareSizes([...a, ...b]);
      expect(r.reproducibility.source).toBe('replicates');
      if (r.pairs[0]!.differs) detected++;
      if (compareSizes([...a, ...same]).pairs[0]!.differs) falseAlarms++;
    }
    console.log(`5 % true difference, 5 replicates each: detected ${detected}/${trials} (target ≥ 80 %); equal groups called different ${falseAlarms}/${trials} (α = 5 %)`);
    expect(detected / trials).toBeGreaterThanOrEqual(0.8);
    expect(falseAlarms / trials).toBeLessThanOrEqual(0.1);
  });

  it('an exposure series gets a trend test instead of all pairs', () => {
    const normal = rng(14);
    const steady = [0, 2, 6, 24, 48].map((h) => ({ ...preparation(`${h} h`, 48 * (1 + 0.02 * normal()), 0, 60, normal), order: h }));
    const r = compareSizes(steady);
    expect(r.pairs).toHaveLength(0);
    expect(r.trend).not.toBeNull();
    const shrinking = [0, 2, 6, 24, 48].map((h) => ({ ...preparation(`${h} h`, 48 - 0.4 * h, 0, 60, normal), order: h }));
    expect(compareSizes(shrinking).trend!.differs).toBe(true);
    console.log(`exposure series: steady ${r.trend!.statement}; shrinking ${compareSizes(shrinking).trend!.statement}`);
  });
});
