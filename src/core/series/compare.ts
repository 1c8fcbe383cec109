/**
 * Do the crystallite sizes of a series differ? Each comparison is made on the reflections both sides
 * share (a strained powder gives other Scherrer means over other hkl), with a preparation-to-preparation
 * term beside each sample's fit uncertainty, and reported as a difference with its 95 % interval.
 * Replicate preparations (samples given the same replicate group) are pooled: their spread measures the
 * reproducibility and the groups are compared by Welch's t-test. An ordered series (exposure time) is
 * tested for a trend by a weighted regression slope rather than by all pairs; pairs, where asked for,
 * are held to α together by Holm's method (Holm, Scand. J. Statist. 6, 65 (1979)).
 */
import { incompleteBeta, normalTwoSidedP } from '../numeric/numeric.js';

export interface ReflectionSize {
  /** "h k l" of the reflection; null when the peak is not indexed (then only whole-sample means compare). */
  hkl: string | null;
  sizeNm: number;
  /** Standard uncertainty from this sample's own peak fit (the shared instrument profile cancels). */
  sizeSigmaNm: number;
}

export interface SizeForComparison {
  label: string;
  /** Size in nm, or a lower bound when `lowerBound` is true; null when there is none. */
  sizeNm: number | null;
  sizeSigmaNm: number | null;
  lowerBound: boolean;
  /** The phase the size belongs to; sizes of different phases are not compared. */
  phase?: string | null;
  /** The per-reflection sizes behind the mean, for comparing on shared reflections. */
  reflections?: readonly ReflectionSize[];
  /** Samples with the same group are replicate preparations of one variant. */
  replicateGroup?: string | null;
  /** Exposure time or another ordering variable, for the trend test. */
  order?: number | null;
}

export interface ComparisonOptions {
  alpha?: number;
  /**
   * Relative spread of sizes between preparations of the same material (default 0.02). About 2 % is a
   * typical repeatability of lab Scherrer sizes (from memory); replicates, when given, replace it.
   */
  preparationSpreadRelative?: number;
  /** Test pairs: 'all' (default for variants) or 'none' (default for an ordered series, which gets a trend test). */
  pairs?: 'all' | 'none';
  /** Unit of the ordering variable, named in the trend's statement ("h", "°C"; default "unit"). */
  orderUnit?: string;
}

export interface PairComparison {
  a: string;
  b: string;
  /** b − a, nm (null when not testable). */
  differenceNm: number | null;
  differenceSigmaNm: number | null;
  /** 95 % interval of the difference, nm. */
  intervalNm: [number, number] | null;
  z: number | null;
  pValue: number | null;
  /** p after Holm's adjustment over all testable pairs. */
  pAdjusted: number | null;
  differs: boolean;
  testable: boolean;
  /** The reflections the two sizes were computed over ("all" when the peaks are not indexed). */
  reflections: string[] | 'all';
  statement: string;
}

export interface TrendTest {
  /** Size change per unit of the ordering variable (nm per hour for an exposure series, nm per °C for a temperature series). */
  slopeNmPerUnit: number;
  slopeSigma: number;
  pValue: number;
  differs: boolean;
  statement: string;
}

export interface SizeComparisonResult {
  test: string;
  alpha: number;
  /** The preparation-to-preparation spread used, and where it came from. */
  reproducibility: { relative: number; source: 'default' | 'replicates' | 'user'; replicateGroups: number };
  pairs: PairComparison[];
  trend: TrendTest | null;
}

export const DEFAULT_ALPHA = 0.05;
const DEFAULT_PREPARATION_SPREAD = 0.02;
/** Two-sided 95 % quantile of the normal distribution. */
const Z95 = 1.959964;

function fmt(value: number): string {
  return value.toPrecision(3);
}

/** A size over a set of reflections: the weighted mean of the per-reflection sizes, with the fit σ of that mean. */
interface SizeOnSet {
  sizeNm: number;
  fitSigmaNm: number;
  reflections: string[] | 'all';
}

function sizeOn(sample: SizeForComparison, shared: ReadonlySet<string> | null): SizeOnSet | null {
  if (shared === null || !sample.reflections) {
    if (sample.sizeNm === null || sample.sizeSigmaNm === null) return null;
    return { sizeNm: sample.sizeNm, fitSigmaNm: sample.sizeSigmaNm, reflections: 'all' };
  }
  let sw = 0;
  let swx = 0;
  const used: string[] = [];
  for (const r of sample.reflections) {
    if (r.hkl === null || !shared.has(r.hkl) || !(r.sizeSigmaNm > 0)) continue;
    const w = 1 / (r.sizeSigmaNm * r.sizeSigmaNm);
    sw += w;
    swx += w * r.sizeNm;
    used.push(r.hkl);
  }
  if (sw === 0) return null;
  const mean = swx / sw;
  // Reflections that scatter beyond their own σ (strain, shape, an optimistic fit) widen the mean's σ by the
  // Birge ratio √(χ²/ν) (Birge, Phys. Rev. 40, 207 (1932)), as the sample's own Scherrer mean does with τ².
  let chi2 = 0;
  for (const r of sample.reflections) {
    if (r.hkl === null || !shared.has(r.hkl) || !(r.sizeSigmaNm > 0)) continue;
    chi2 += ((r.sizeNm - mean) / r.sizeSigmaNm) ** 2;
  }
  const birge = used.length > 1 ? Math.max(1, Math.sqrt(chi2 / (used.length - 1))) : 1;
  return { sizeNm: mean, fitSigmaNm: birge / Math.sqrt(sw), reflections: used };
}

/** The reflections every sample sized; null when one has no indexed reflections (then whole means compare). */
function reflectionsAllSized(samples: readonly SizeForComparison[]): Set<string> | null {
  let shared: Set<string> | null = null;
  for (const s of samples) {
    const keys = new Set((s.reflections ?? []).filter((r) => r.hkl !== null && r.sizeSigmaNm > 0).map((r) => r.hkl as string));
    if (keys.size === 0) return null;
    shared = shared === null ? keys : new Set([...(shared as Set<string>)].filter((k) => keys.has(k)));
  }
  return shared;
}

/** Two-sided p of Student's t with ν degrees of freedom. */
function studentTwoSidedP(t: number, dof: number): number {
  return incompleteBeta(dof / (dof + t * t), dof / 2, 0.5);
}

/**
 * The relative preparation spread from replicate groups: the pooled relative standard deviation of
 * the sizes within each group (ν = Σ(nᵢ − 1)), or null without replicates.
 */
function pooledReplicateSpread(samples: readonly SizeForComparison[]): { relative: number; dof: number; groups: number } | null {
  const groups = new Map<string, number[]>();
  for (const s of samples) {
    if (!s.replicateGroup || s.sizeNm === null || s.lowerBound) continue;
    const list = groups.get(s.replicateGroup) ?? [];
    list.push(s.sizeNm);
    groups.set(s.replicateGroup, list);
  }
  let ss = 0;
  let dof = 0;
  let counted = 0;
  for (const sizes of groups.values()) {
    if (sizes.length < 2) continue;
    const mean = sizes.reduce((t, v) => t + v, 0) / sizes.length;
    for (const v of sizes) ss += ((v - mean) / mean) ** 2;
    dof += sizes.length - 1;
    counted++;
  }
  return dof > 0 ? { relative: Math.sqrt(ss / dof), dof, groups: counted } : null;
}

/** One side of a comparison: a single sample, or the mean of a replicate group. */
interface Side {
  label: string;
  members: SizeForComparison[];
}

function sidesOf(samples: readonly SizeForComparison[]): Side[] {
  const sides: Side[] = [];
  const byGroup = new Map<string, Side>();
  for (const s of samples) {
    const group = s.replicateGroup ?? null;
    if (group === null) {
      sides.push({ label: s.label, members: [s] });
      continue;
    }
    let side = byGroup.get(group);
    if (!side) {
      side = { label: group, members: [] };
      byGroup.set(group, side);
      sides.push(side);
    }
    side.members.push(s);
  }
  return sides;
}

/** The comparisons of a series: pairs of samples (or of replicate groups), and the trend of an ordered series. */
export function compareSizes(samples: readonly SizeForComparison[], options: ComparisonOptions | number = {}): SizeComparisonResult {
  const opts: ComparisonOptions = typeof options === 'number' ? { alpha: options } : options;
  const alpha = opts.alpha ?? DEFAULT_ALPHA;
  const pooled = pooledReplicateSpread(samples);
  const reproducibility = pooled
    ? { relative: pooled.relative, source: 'replicates' as const, replicateGroups: pooled.groups }
    : { relative: opts.preparationSpreadRelative ?? DEFAULT_PREPARATION_SPREAD, source: opts.preparationSpreadRelative !== undefined ? ('user' as const) : ('default' as const), replicateGroups: 0 };
  const ordered = samples.length > 2 && samples.every((s) => typeof s.order === 'number' && Number.isFinite(s.order));
  const wantPairs = opts.pairs ?? (ordered ? 'none' : 'all');

  const sides = sidesOf(samples);
  const pairs: PairComparison[] = [];
  if (wantPairs === 'all') {
    for (let i = 0; i < sides.length; i++) {
      for (let j = i + 1; j < sides.length; j++) pairs.push(comparePair(sides[i]!, sides[j]!, reproducibility.relative, pooled?.dof ?? null));
    }
  }
  holmAdjust(pairs);
  for (const pair of pairs) {
    if (!pair.testable || pair.pAdjusted === null) continue;
    pair.differs = pair.pAdjusted < alpha;
    const [lo, hi] = pair.intervalNm as [number, number];
    const where = pair.reflections === 'all' ? '' : ` on the ${pair.reflections.length} reflection${pair.reflections.length === 1 ? '' : 's'} both share`;
    const what = `${fmt(pair.differenceNm as number)} ± ${fmt(pair.differenceSigmaNm as number)} nm (95 % interval ${fmt(lo)} to ${fmt(hi)} nm${where}; p = ${pair.pAdjusted.toPrecision(2)} after Holm, α = ${alpha})`;
    pair.statement = pair.differs ? `sizes differ: ${what}` : `no difference beyond the uncertainty: ${what}`;
  }
  const trend = ordered ? trendTest(samples, reproducibility.relative, alpha, opts.orderUnit ?? 'unit') : null;
  const test =
    `${pooled ? "replicate groups compared by Welch's t-test" : 'two-sided z-test'} on the difference of Scherrer sizes over the reflections both samples share, ` +
    `with each sample's fit uncertainty and a preparation spread of ${(100 * reproducibility.relative).toPrecision(2)} % (${reproducibility.source === 'replicates' ? 'measured from the replicates' : reproducibility.source === 'user' ? 'as set' : 'default, from memory: set it or mark replicates'})` +
    (pairs.length ? '; Holm–Bonferroni adjustment over all pairs (Holm, Scand. J. Statist. 6, 65 (1979))' : '') +
    (trend ? '; ordered series: weighted regression slope of size against the ordering variable' : '');
  return { test, alpha, reproducibility, pairs, trend };
}

function comparePair(a: Side, b: Side, spread: number, replicateDof: number | null): PairComparison {
  const base = { a: a.label, b: b.label, differenceNm: null, differenceSigmaNm: null, intervalNm: null, z: null, pValue: null, pAdjusted: null, differs: false, reflections: 'all' as const };
  const all = [...a.members, ...b.members];
  if (all.some((s) => s.sizeNm === null)) return { ...base, testable: false, statement: 'not testable: a sample has no size' };
  const phases = new Set(all.map((s) => s.phase ?? null));
  if (phases.size > 1) return { ...base, testable: false, statement: `not testable: the sizes belong to different phases (${[...phases].map((p) => p ?? 'none').join(', ')})` };
  const bounded = all.filter((s) => s.lowerBound);
  if (bounded.length) {
    return { ...base, testable: false, statement: `not testable: the size of ${bounded.map((s) => s.label).join(', ')} is only a lower bound (beyond the resolvable range)` };
  }
  const shared = reflectionsAllSized(all);
  if (shared !== null && shared.size === 0) return { ...base, testable: false, statement: 'not testable: the samples share no sized reflection' };
  const sizesA = a.members.map((s) => sizeOn(s, shared));
  const sizesB = b.members.map((s) => sizeOn(s, shared));
  if ([...sizesA, ...sizesB].some((s) => s === null)) return { ...base, testable: false, statement: 'not testable: the sizes carry no uncertainty' };
  const side = (sizes: SizeOnSet[]) => {
    const n = sizes.length;
    const mean = sizes.reduce((t, s) => t + s.sizeNm, 0) / n;
    const fitVar = sizes.reduce((t, s) => t + s.fitSigmaNm ** 2, 0) / (n * n);
    return { mean, variance: fitVar + (spread * mean) ** 2 / n };
  };
  const sa = side(sizesA as SizeOnSet[]);
  const sb = side(sizesB as SizeOnSet[]);
  const sigma = Math.sqrt(sa.variance + sb.variance);
  if (!(sigma > 0)) return { ...base, testable: false, statement: 'not testable: the sizes carry no uncertainty' };
  const difference = sb.mean - sa.mean;
  const z = difference / sigma;
  const grouped = a.members.length > 1 || b.members.length > 1;
  const dof = grouped && replicateDof !== null ? replicateDof : null;
  const pValue = dof !== null ? studentTwoSidedP(z, dof) : normalTwoSidedP(z);
  const reflections = shared === null ? ('all' as const) : [...shared].sort();
  return { ...base, differenceNm: difference, differenceSigmaNm: sigma, intervalNm: [difference - Z95 * sigma, difference + Z95 * sigma], z, pValue, testable: true, reflections, statement: '' };
}

/** Weighted least-squares slope of size against the ordering variable, with σ and a two-sided z p-value. */
function trendTest(samples: readonly SizeForComparison[], spread: number, alpha: number, unit: string): TrendTest | null {
  const points = samples.filter((s) => s.sizeNm !== null && !s.lowerBound && s.sizeSigmaNm !== null);
  if (points.length < 3) return null;
  let sw = 0;
  let sx = 0;
  let sy = 0;
  let sxx = 0;
  let sxy = 0;
  for (const s of points) {
    const size = s.sizeNm as number;
    const w = 1 / ((s.sizeSigmaNm as number) ** 2 + (spread * size) ** 2);
    const x = s.order as number;
    sw += w;
    sx += w * x;
    sy += w * size;
    sxx += w * x * x;
    sxy += w * x * size;
  }
  const det = sw * sxx - sx * sx;
  if (!(det > 0)) return null;
  const slope = (sw * sxy - sx * sy) / det;
  const slopeSigma = Math.sqrt(sw / det);
  const pValue = normalTwoSidedP(slope / slopeSigma);
  const differs = pValue < alpha;
  const what = `${fmt(slope)} ± ${fmt(slopeSigma)} nm per ${unit} (p = ${pValue.toPrecision(2)}, α = ${alpha})`;
  return { slopeNmPerUnit: slope, slopeSigma, pValue, differs, statement: differs ? `the size changes along the series: ${what}` : `no trend beyond the uncertainty: ${what}` };
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
