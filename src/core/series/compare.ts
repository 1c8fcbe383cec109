/**
 * Are two samples' crystallite sizes different, given their uncertainties? Every pair is tested
 * with a two-sided z-test on the difference and the family of pairs is held to α by Holm's method.
 */
import { normalTwoSidedP } from '../numeric/numeric.js';

export interface SizeForComparison {
  label: string;
  /** Size in nm, or a lower bound when `lowerBound` is true; null when there is none. */
  sizeNm: number | null;
  sizeSigmaNm: number | null;
  lowerBound: boolean;
  /** The phase the size belongs to; sizes of different phases are not compared. */
  phase?: string | null;
}

export interface PairComparison {
  a: string;
  b: string;
  /** b − a, nm (null when not testable). */
  differenceNm: number | null;
  differenceSigmaNm: number | null;
  z: number | null;
  pValue: number | null;
  /** p after Holm's adjustment over all testable pairs. */
  pAdjusted: number | null;
  differs: boolean;
  testable: boolean;
  statement: string;
}

export interface SizeComparisonResult {
  test: string;
  alpha: number;
  pairs: PairComparison[];
}

export const DEFAULT_ALPHA = 0.05;

export const SIZE_TEST_DESCRIPTION =
  'two-sided z-test on the difference of Scherrer sizes with the combined standard uncertainty √(σa² + σb²) of each sample\'s own peak fits (the shared instrument profile cancels), ' +
  'Holm–Bonferroni adjustment over all pairs (Holm, Scand. J. Statist. 6, 65 (1979))';

function fmt(value: number): string {
  return value.toPrecision(3);
}

/** All pairwise comparisons of sizes, in the samples' order. */
export function compareSizes(samples: readonly SizeForComparison[], alpha = DEFAULT_ALPHA): SizeComparisonResult {
  const pairs: PairComparison[] = [];
  for (let i = 0; i < samples.length; i++) {
    for (let j = i + 1; j < samples.length; j++) pairs.push(comparePair(samples[i], samples[j]));
  }
  holmAdjust(pairs);
  for (const pair of pairs) {
    if (!pair.testable || pair.pAdjusted === null) continue;
    pair.differs = pair.pAdjusted < alpha;
    pair.statement = pair.differs
      ? `sizes differ: ${fmt(pair.differenceNm as number)} ± ${fmt(pair.differenceSigmaNm as number)} nm (p = ${pair.pAdjusted.toPrecision(2)} after Holm, α = ${alpha})`
      : `no difference beyond the uncertainty: ${fmt(pair.differenceNm as number)} ± ${fmt(pair.differenceSigmaNm as number)} nm (p = ${pair.pAdjusted.toPrecision(2)} after Holm, α = ${alpha})`;
  }
  return { test: SIZE_TEST_DESCRIPTION, alpha, pairs };
}

function comparePair(a: SizeForComparison, b: SizeForComparison): PairComparison {
  const base = { a: a.label, b: b.label, differenceNm: null, differenceSigmaNm: null, z: null, pValue: null, pAdjusted: null, differs: false };
  if (a.sizeNm === null || b.sizeNm === null) {
    return { ...base, testable: false, statement: 'not testable: a sample has no size' };
  }
  if ((a.phase ?? null) !== (b.phase ?? null)) {
    return { ...base, testable: false, statement: `not testable: the sizes belong to different phases (${a.phase ?? 'none'}, ${b.phase ?? 'none'})` };
  }
  if (a.lowerBound || b.lowerBound) {
    const which = a.lowerBound && b.lowerBound ? 'both sizes are' : `the size of ${a.lowerBound ? a.label : b.label} is`;
    return { ...base, testable: false, statement: `not testable: ${which} only a lower bound (beyond the resolvable range)` };
  }
  const sa = a.sizeSigmaNm ?? 0;
  const sb = b.sizeSigmaNm ?? 0;
  const sigma = Math.hypot(sa, sb);
  if (!(sigma > 0)) return { ...base, testable: false, statement: 'not testable: the sizes carry no uncertainty' };
  const difference = b.sizeNm - a.sizeNm;
  const z = difference / sigma;
  return { ...base, differenceNm: difference, differenceSigmaNm: sigma, z, pValue: normalTwoSidedP(z), testable: true, statement: '' };
}

/** Holm's step-down adjustment: p(i) → max over j ≤ i of min(1, (m − j + 1)·p(j)), p sorted ascending. */
function holmAdjust(pairs: PairComparison[]): void {
  const testable = pairs.filter((p) => p.testable && p.pValue !== null).sort((x, y) => (x.pValue as number) - (y.pValue as number));
  const m = testable.length;
  let running = 0;
  testable.forEach((pair, i) => {
    running = Math.max(running, Math.min(1, (m - i) * (pair.pValue as number)));
    pair.pAdjusted = running;
  });
}
