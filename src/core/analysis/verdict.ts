import type { MatchResult, PhaseMatch } from '../match/types.js';

/** The sample's one-line answer to "is this the target phase?". */
export type SampleVerdict = 'target' | 'target with extra peaks' | 'not the target' | 'featureless' | 'no target set' | 'instrument standard' | 'not analysed';
/** Share of the measured peak area left unexplained above which a sample is said to carry extra peaks. */
const EXTRA_AREA_SHARE = 0.02;

/**
 * One sample's verdict at a glance, from the match: is the target there, and is anything else?
 * Extra = another phase judged present with peaks of its own, an unexplained low-angle peak, or more
 * than 2 % of the peak area unexplained.
 */
export function sampleVerdict(match: MatchResult, target: string | null): { verdict: SampleVerdict; phase: PhaseMatch | null } {
  const present = match.phases.filter((p) => p.verdict !== 'not-seen');
  if (match.featureless) return { verdict: 'featureless', phase: null };
  if (!target) return { verdict: 'no target set', phase: present[0] ?? match.phases[0] ?? null };
  const key = target.toLowerCase();
  const phase = match.phases.find((p) => p.name.toLowerCase() === key) ?? null;
  if (!phase || phase.verdict === 'not-seen') return { verdict: 'not the target', phase: phase ?? present[0] ?? null };
  // Another phase counts as extra only when it explains a peak of its own (not only lines shared with the target).
  const extra =
    present.some((p) => p !== phase && p.lines.some((l) => !l.shared)) || match.unexplained.some((u) => u.lowAngle) || match.unexplainedAreaShare > EXTRA_AREA_SHARE;
  return { verdict: extra ? 'target with extra peaks' : 'target', phase };
}

export interface LowAnglePeak {
  /** Index of the peak in the analysis's peak list. */
  peakIndex: number;
  twoTheta: number;
  d: number;
  /** The phase that explains it (an impurity or product judged present), or null when nothing does. */
  phase: string | null;
}

/**
 * Peaks below the first line of the target (or, with no target, of the best present phase): the
 * unexplained ones the match flags, and those of other phases judged present — a hydration or
 * hydrolysis product usually shows up there first.
 */
export function lowAnglePeaks(match: MatchResult, target: string | null): LowAnglePeak[] {
  const present = match.phases.filter((p) => p.verdict !== 'not-seen');
  const key = target?.toLowerCase();
  const main = (key ? present.find((p) => p.name.toLowerCase() === key) : undefined) ?? present[0];
  const out: LowAnglePeak[] = match.unexplained.filter((u) => u.lowAngle).map((u) => ({ peakIndex: u.peakIndex, twoTheta: u.twoTheta, d: u.d, phase: null }));
  if (main && main.lines.length) {
    // One mark per peak.
    const seen = new Set<number>();
    const first = Math.min(...main.lines.map((l) => l.twoThetaExpected)) - match.toleranceDeg;
    for (const phase of present) {
      if (phase === main) continue;
      for (const line of phase.lines) {
        if (line.twoThetaMeasured < first && !line.shared && !seen.has(line.peakIndex)) {
          seen.add(line.peakIndex);
          out.push({ peakIndex: line.peakIndex, twoTheta: line.twoThetaMeasured, d: line.d, phase: phase.name });
        }
      }
    }
  }
  return out.sort((a, b) => a.twoTheta - b.twoTheta);
}
