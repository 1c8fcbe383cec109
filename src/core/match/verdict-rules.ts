/**
 * The rules that turn scores into verdicts: the thresholds for present and uncertain, which candidate
 * the explanation takes next, and how look-alikes (two references on the same peaks) are told apart.
 */
import type { StoredReference } from '../model/reference.js';
import type { UnitCell } from '../model/cell.js';
import { cellMetric } from '../crystal/metric.js';
import type { CellParameterName } from './cell-parameters.js';
import { type PeakTable } from './peak-table.js';
import { type Claims, type PhaseEvaluation } from './score.js';
import type { Verdict } from './types.js';

/** Score from which a phase that explains new clear peaks is taken into the explanation (and called uncertain). */
export const UNCERTAIN_SCORE = 0.4;

/** Score from which a phase with enough clear lines is called present. */
export const PRESENT_SCORE = 0.55;

/** Clear matched lines needed to call a phase present (a phase with fewer lines in range is at most uncertain). */
export const CONFIRMING_LINES = 3;

/** A look-alike goes before the target only when it scores more than this above it. */
const TARGET_MARGIN = 0.05;

/** A phase not needed for the explanation stays "uncertain" when its first score was this close to the phase that took its peaks. */
const LOOK_ALIKE_MARGIN = 0.03;

/** A candidate with at least this share of its matched peaks already explained is treated as a look-alike of an accepted phase. */
export const LOOK_ALIKE_SHARED_SHARE = 0.8;

export const DECOMPOSITION_TAG = 'decomposition product';

/**
 * How far a cell refined alone moved from its reference: the rms of the relative changes of the
 * crystal system's free parameters, %, with σ (the parameters' σ propagated, their correlations
 * left out), and the volume change, %. An edge-by-edge measure, since two look-alikes can share a
 * volume while their edges differ by a per cent each way.
 */
export interface CellChange {
  percent: number;
  sigma: number;
  volumePercent: number;
}

export function cellChangeFrom(reference: UnitCell, refined: { cell: UnitCell; sigma: Record<CellParameterName, number>; free: readonly CellParameterName[]; volume: number }): CellChange {
  const n = refined.free.length;
  const relative = refined.free.map((name) => (refined.cell[name] - reference[name]) / reference[name]);
  const relativeSigma = refined.free.map((name) => refined.sigma[name] / reference[name]);
  const rms = Math.sqrt(relative.reduce((s, r) => s + r * r, 0) / n);
  // ∂rms/∂r_i = r_i/(n·rms); at rms ≈ 0 the σ of the rms is that of one parameter, √(Σσ²/n).
  const sigma = rms > 1e-12
    ? Math.sqrt(relative.reduce((s, r, i) => s + ((r / (n * rms)) * relativeSigma[i]!) ** 2, 0))
    : Math.sqrt(relativeSigma.reduce((s, v) => s + v * v, 0) / n);
  const v0 = cellMetric(reference).volume;
  return { percent: 100 * rms, sigma: 100 * sigma, volumePercent: (100 * (refined.volume - v0)) / v0 };
}

export interface LookAlike {
  ref: number;
  verdict: Verdict;
  /** The cell change exceeds the rival's by more than CELL_CHANGE_SIGNIFICANT σ. */
  significant: boolean;
  rivalName: string;
  mine: CellChange;
  theirs: CellChange;
  /** Lines matched by it and by the rival, where both were judged in the explanation. */
  lines?: { mine: number; theirs: number };
}
/**
 * Two phases of the explanation on the same peaks (at least LOOK_ALIKE_SHARED_SHARE of one's
 * matched peaks matched by the other): the one whose refined cell moved further from its reference
 * (volume change), while it matches no more lines and scores no better, is set aside. It is
 * `not-seen` when its change exceeds the other's significantly (CELL_CHANGE_SIGNIFICANT σ), else
 * `uncertain` (indistinguishable at this resolution).
 */
export interface Contender {
  ref: number;
  evaluation: PhaseEvaluation;
  /** Taken into the explanation (only such a phase can be set aside). */
  inExplanation: boolean;
}

export function findLookAlike(contenders: readonly Contender[], refs: readonly StoredReference[], changeAlone: (c: Contender) => CellChange | null): LookAlike | null {
  const changes = new Map<Contender, CellChange | null>();
  const change = (c: Contender): CellChange | null => {
    if (!changes.has(c)) changes.set(c, changeAlone(c));
    return changes.get(c)!;
  };
  for (const l of contenders) {
    if (!l.inExplanation) continue;
    for (const w of contenders) {
      if (w === l) continue;
      const loser = l.evaluation;
      const winner = w.evaluation;
      // Phases on the same peaks: most of the loser's matched peaks are the other's (and, for a phase left out, most of its peaks the loser's).
      const overlap = w.inExplanation ? sharedPeakShare(loser, winner) : Math.min(sharedPeakShare(winner, loser), sharedPeakShare(loser, winner));
      if (overlap < LOOK_ALIKE_SHARED_SHARE) continue;
      const cl = change(l);
      const cw = change(w);
      if (!cl || !cw || Math.abs(cl.percent) <= Math.abs(cw.percent)) continue;
      const excess = Math.abs(cl.percent) - Math.abs(cw.percent);
      const significant = excess > CELL_CHANGE_SIGNIFICANT * Math.hypot(cl.sigma, cw.sigma);
      const fewer = loser.matchedCount <= winner.matchedCount;
      const worse = w.inExplanation ? loser.score < winner.score : loser.parts.relativeIntensity <= winner.parts.relativeIntensity;
      // A significantly larger change with fewer lines or worse intensities sets it aside; an insignificant one only when both hold, for two phases of the explanation.
      const setAside = significant ? fewer || worse : w.inExplanation && overlap >= LOOK_ALIKE_SHARED_SHARE && fewer && worse;
      if (!setAside) continue;
      return {
        ref: l.ref,
        verdict: significant ? 'not-seen' : 'uncertain',
        significant,
        rivalName: refs[w.ref].name,
        mine: cl,
        theirs: cw,
        lines: { mine: loser.matchedCount, theirs: winner.matchedCount },
      };
    }
  }
  return null;
}

/** Changes smaller than this many σ are reported as agreeing with the reference (common practice: 2σ). */
export const CELL_CHANGE_SIGNIFICANT = 2;

/**
 * The next phase of the explanation: the target when it explains significant new peaks (unless a
 * look-alike claiming the same peaks scores more than TARGET_MARGIN above it); else, while low-angle peaks are open, the best decomposition product that
 * explains one of them; else the best-scoring candidate that explains new clear peaks.
 */
export function choosePhase(
  evaluations: Array<{ ref: number; evaluation: PhaseEvaluation }>,
  targetIndex: number,
  lowAngleOpen: Set<number>,
  distinctNew: (evaluation: PhaseEvaluation) => NewPeakCount,
): { ref: number; evaluation: PhaseEvaluation } | null {
  const eligible = evaluations.filter((e) => e.evaluation.score >= UNCERTAIN_SCORE && explainsSignificantPeaks(distinctNew(e.evaluation)));
  if (eligible.length === 0) return null;
  eligible.sort((a, b) => b.evaluation.score - a.evaluation.score);
  const target = eligible.find((e) => e.ref === targetIndex);
  if (target) {
    // The target goes first unless a phase claiming mostly the same peaks fits clearly better (a look-alike).
    const rival = eligible.find((e) => e !== target && e.evaluation.score > target.evaluation.score + TARGET_MARGIN && sharedPeakShare(target.evaluation, e.evaluation) >= 0.5);
    return rival ?? target;
  }
  if (lowAngleOpen.size > 0) {
    const decomposition = eligible.find(
      (e) => e.evaluation.lines.reference.tags.includes(DECOMPOSITION_TAG) && e.evaluation.newPeaks.some((k) => lowAngleOpen.has(k)),
    );
    if (decomposition) return decomposition;
  }
  return eligible[0];
}

export interface NewPeakCount {
  clear: number;
  all: number;
}

/** Significant new peaks: one clear peak, or three peaks the peak search found (three coincidences are unlikely). */
export function explainsSignificantPeaks(count: NewPeakCount): boolean {
  return count.clear >= 1 || count.all >= CONFIRMING_LINES;
}

/**
 * New peaks that count as evidence for a candidate. For a candidate whose matched peaks are mostly
 * (LOOK_ALIKE_SHARED_SHARE) explained already (a look-alike of an accepted phase), a new peak within twice its window of an
 * accepted phase's line is more likely that phase's line measured a little off, and does not count.
 */
export function distinctNewPeaks(evaluation: PhaseEvaluation, accepted: Array<{ evaluation: PhaseEvaluation }>, table: PeakTable): NewPeakCount {
  const matchedPeaks = new Set<number>();
  for (const k of evaluation.peakOf) if (k >= 0) matchedPeaks.add(k);
  const lookAlike = accepted.length > 0 && evaluation.sharedPeaks >= LOOK_ALIKE_SHARED_SHARE * matchedPeaks.size;
  const count: NewPeakCount = { clear: 0, all: 0 };
  for (const k of evaluation.newPeaks) {
    const near =
      lookAlike &&
      accepted.some(({ evaluation: a }) => {
        for (let j = 0; j < a.lines.count; j++) {
          const tt = a.lines.twoTheta[j] + a.shift.zeroDeg + a.shift.displacementCosDeg * a.lines.cosTheta[j];
          if (Math.abs(tt - table.twoTheta[k]) <= 2 * table.window[k]) return true;
        }
        return false;
      });
    if (near) continue;
    count.all++;
    if (table.clear[k]) count.clear++;
  }
  return count;
}

/** Share of a's matched peaks that b matches too. */
export function sharedPeakShare(a: PhaseEvaluation, b: PhaseEvaluation): number {
  const mine = new Set<number>();
  for (const k of a.peakOf) if (k >= 0) mine.add(k);
  if (mine.size === 0) return 0;
  let both = 0;
  const seen = new Set<number>();
  for (const k of b.peakOf) if (k >= 0 && mine.has(k) && !seen.has(k)) {
    seen.add(k);
    both++;
  }
  return both / mine.size;
}

/** Present always needs CONFIRMING_LINES clear lines: a phase with fewer lines in range is at most uncertain. */
export function requiredLines(): number {
  return CONFIRMING_LINES;
}

export function acceptedVerdict(evaluation: PhaseEvaluation): Verdict {
  return evaluation.score >= PRESENT_SCORE && evaluation.clearMatchedCount >= requiredLines() ? 'present' : 'uncertain';
}

/** A phase left out of the explanation: uncertain when it cannot be told from the phase that took its peaks, else not seen. */
export function notNeededVerdict(
  final: PhaseEvaluation,
  first: PhaseEvaluation | undefined,
  claims: Claims,
  accepted: Array<{ ref: number; evaluation: PhaseEvaluation }>,
): { verdict: Verdict; rival: PhaseEvaluation | null } {
  const rivalNumber = mostSharedPhase(final, claims);
  const rival = rivalNumber >= 0 ? accepted[rivalNumber].evaluation : null;
  if (rival && first && final.score >= UNCERTAIN_SCORE && first.score >= rival.score - LOOK_ALIKE_MARGIN && final.newClearPeaks === 0) return { verdict: 'uncertain', rival };
  return { verdict: 'not-seen', rival };
}

/** The accepted phase that explains most of this phase's matched peaks, or -1. */
function mostSharedPhase(evaluation: PhaseEvaluation, claims: Claims): number {
  const counts = new Map<number, number>();
  for (let j = 0; j < evaluation.lines.count; j++) {
    const k = evaluation.peakOf[j];
    if (k >= 0 && claims.claimed[k] >= 0) counts.set(claims.claimed[k], (counts.get(claims.claimed[k]) ?? 0) + 1);
  }
  let best = -1;
  let bestCount = 0;
  for (const [phase, count] of counts) if (count > bestCount) [best, bestCount] = [phase, count];
  return best;
}
