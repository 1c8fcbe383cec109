/**
 * Could a phase's matched lines be chance? With many references screened, some random d-list will
 * line up with a few measured peaks by luck alone. If the measured peaks' tolerance windows cover a
 * fraction f of the 2θ range, each of a reference's n lines in range falls in a window by chance with
 * probability f, so k or more of them do with the binomial tail P(X ≥ k; n, f); over N screened
 * references about N·P such coincidences are expected (a Bonferroni-style count: common practice
 * for multiple comparisons). A phase is called present only when that expectation is small.
 * Pure and coordinate-free: it sees counts and the covered fraction, nothing of how they were found.
 */

/** Expected chance coincidences over the whole screen above which a phase is not called present. */
export const MAX_EXPECTED_BY_CHANCE = 0.01;

export interface ChanceInput {
  /** The reference's lines inside the measured range. */
  linesInRange: number;
  /** How many of them fell on measured peaks. */
  matchedLines: number;
  /** Share of the measured 2θ range within the matching tolerance of some measured peak (0–1). */
  coveredFraction: number;
  /** How many references were screened for this pattern (the library size). */
  screened: number;
}

export interface ChanceVerdict {
  /** P(at least matchedLines of linesInRange random lines fall on peaks). */
  probability: number;
  /** screened × probability: coincidences this good expected from the whole library by chance. */
  expectedByChance: number;
  /** Whether the match stands out from chance (expectedByChance ≤ MAX_EXPECTED_BY_CHANCE). */
  beyondChance: boolean;
}

/** Binomial upper tail P(X ≥ k) for X ~ Binomial(n, p), summed in log space (stable for n in the hundreds). */
export function binomialTail(n: number, k: number, p: number): number {
  if (k <= 0) return 1;
  if (k > n || p <= 0) return 0;
  if (p >= 1) return 1;
  const logP = Math.log(p);
  const logQ = Math.log1p(-p);
  // log C(n, k) built up term by term; then each next term is the last times (n−i)/(i+1)·p/q.
  let logC = 0;
  for (let i = 0; i < k; i++) logC += Math.log((n - i) / (i + 1));
  let logTerm = logC + k * logP + (n - k) * logQ;
  let sum = 0;
  for (let i = k; i <= n; i++) {
    sum += Math.exp(logTerm);
    logTerm += Math.log((n - i) / (i + 1)) + logP - logQ;
  }
  return Math.min(1, sum);
}

/** How likely the phase's line agreement is by chance across the whole screen (see the module comment). */
export function chanceCoincidence(input: ChanceInput): ChanceVerdict {
  const f = Math.min(1, Math.max(0, input.coveredFraction));
  const probability = binomialTail(input.linesInRange, input.matchedLines, f);
  const expectedByChance = Math.max(1, input.screened) * probability;
  return { probability, expectedByChance, beyondChance: expectedByChance <= MAX_EXPECTED_BY_CHANCE };
}

/**
 * Share of [rangeMin, rangeMax] (degrees 2θ) within ±tolerance of at least one peak (peaks ascending):
 * the chance that one random line lands on a peak.
 */
export function coveredFraction(peaksTwoTheta: ArrayLike<number>, tolerance: number, rangeMin: number, rangeMax: number): number {
  const width = rangeMax - rangeMin;
  if (!(width > 0)) return 1;
  let covered = 0;
  let end = rangeMin;
  for (let i = 0; i < peaksTwoTheta.length; i++) {
    const lo = Math.max(peaksTwoTheta[i]! - tolerance, end);
    const hi = Math.min(peaksTwoTheta[i]! + tolerance, rangeMax);
    if (hi > lo) covered += hi - lo;
    if (hi > end) end = hi;
  }
  return covered / width;
}
