/**
 * Which phase explains which measured peak, as the pattern shows it: every phase judged present or
 * uncertain gets a colour of its own and a mark on each peak one of its lines is matched to (a peak two
 * phases share carries both marks); a peak no phase explains is marked unexplained, one the analysis
 * took for a tube satellite (Kβ, W Lα: core/match/satellites.ts sets `satelliteOf`) as a satellite, and
 * the low-angle extra peaks keep a mark of their own whatever explains them. Pure: no DOM, no chart.
 */

export type PhaseVerdict = 'present' | 'uncertain' | 'not-seen';

/** What the marking reads of a match (the shapes of the API's SampleDetail, reduced to what it needs). */
export interface PhaseMarkInput {
  phases: ReadonlyArray<{
    name: string;
    verdict: PhaseVerdict;
    lines: ReadonlyArray<{ peakIndex: number; twoThetaMeasured: number; hkl?: readonly number[] | undefined }>;
  }>;
  unexplained: ReadonlyArray<{ peakIndex: number; twoTheta: number; d: number; lowAngle: boolean; possibleSources: readonly string[]; satelliteOf?: string | null | undefined }>;
  /** Peaks below the target's first line, with the phase that explains each (null: none). */
  lowAnglePeaks: ReadonlyArray<{ peakIndex: number; twoTheta: number; phase: string | null }>;
}

/** A phase in the legend: its colour and how many measured peaks it explains. */
export interface PhaseKey {
  name: string;
  verdict: 'present' | 'uncertain';
  color: string;
  peakCount: number;
}

export type MeasuredMarkKind = 'phase' | 'unexplained' | 'satellite' | 'low-angle';

/** One mark on one measured peak. */
export interface MeasuredPeakMark {
  peakIndex: number;
  twoTheta: number;
  kind: MeasuredMarkKind;
  /** The phase whose colour the mark takes (kind 'phase'; for 'low-angle', the phase that explains it or null). */
  phase: string | null;
  /** Marks already on the same peak below this one (0 for the first): a shared peak stacks its phases' marks. */
  stackIndex: number;
  hkl: readonly number[] | null;
  /** What the tooltip says. */
  text: string;
}

export interface PhaseMarking {
  phases: PhaseKey[];
  marks: MeasuredPeakMark[];
}

const hklWords = (hkl: readonly number[] | null | undefined): string => (hkl ? ` (${hkl.join(' ')})` : '');

/**
 * Marks for every measured peak the match speaks of. Phases take the palette's colours in the match's
 * order, the target phase (when named and found) first, so the target keeps the first colour on every sample.
 */
export function phaseMarking(input: PhaseMarkInput, palette: readonly string[], target: string | null = null): PhaseMarking {
  if (palette.length === 0) throw new Error('phaseMarking needs at least one colour');
  const key = target?.toLowerCase();
  const ordered = [...input.phases].sort((a, b) => Number(b.name.toLowerCase() === key) - Number(a.name.toLowerCase() === key));
  const phases: PhaseKey[] = [];
  const marks: MeasuredPeakMark[] = [];
  const onPeak = new Map<number, number>();
  const stack = (peakIndex: number): number => {
    const n = onPeak.get(peakIndex) ?? 0;
    onPeak.set(peakIndex, n + 1);
    return n;
  };
  for (const phase of ordered) {
    if (phase.verdict === 'not-seen') continue;
    const key: PhaseKey = { name: phase.name, verdict: phase.verdict, color: palette[phases.length % palette.length]!, peakCount: 0 };
    phases.push(key);
    const seen = new Set<number>();
    for (const line of phase.lines) {
      // Two lines of one phase on one peak (overlapping reflections) give the peak one mark of that phase.
      if (seen.has(line.peakIndex)) continue;
      seen.add(line.peakIndex);
      key.peakCount++;
      marks.push({
        peakIndex: line.peakIndex,
        twoTheta: line.twoThetaMeasured,
        kind: 'phase',
        phase: phase.name,
        stackIndex: stack(line.peakIndex),
        hkl: line.hkl ?? null,
        text: `${phase.name} (${phase.verdict})${hklWords(line.hkl)} at ${line.twoThetaMeasured.toFixed(3)}°`,
      });
    }
  }
  const shown = new Set(phases.map((p) => p.name));
  for (const peak of input.unexplained) {
    if (peak.satelliteOf) {
      marks.push({ peakIndex: peak.peakIndex, twoTheta: peak.twoTheta, kind: 'satellite', phase: null, stackIndex: stack(peak.peakIndex), hkl: null, text: `Possible satellite at ${peak.twoTheta.toFixed(3)}°: ${peak.satelliteOf}` });
    } else if (!peak.lowAngle) {
      const could = peak.possibleSources.length ? `; could be ${peak.possibleSources.join(', ')}` : '';
      marks.push({ peakIndex: peak.peakIndex, twoTheta: peak.twoTheta, kind: 'unexplained', phase: null, stackIndex: stack(peak.peakIndex), hkl: null, text: `Unexplained peak at ${peak.twoTheta.toFixed(3)}° (d ${peak.d.toFixed(3)} Å)${could}` });
    }
  }
  const sources = new Map(input.unexplained.map((u) => [u.peakIndex, u.possibleSources]));
  for (const low of input.lowAnglePeaks) {
    const phase = low.phase !== null && shown.has(low.phase) ? low.phase : null;
    const could = sources.get(low.peakIndex) ?? [];
    const why = phase ? `explained by ${phase}` : `unexplained${could.length ? `, could be ${could.join(', ')}` : ''}`;
    marks.push({ peakIndex: low.peakIndex, twoTheta: low.twoTheta, kind: 'low-angle', phase, stackIndex: stack(low.peakIndex), hkl: null, text: `Low-angle extra peak at ${low.twoTheta.toFixed(3)}°, ${why}` });
  }
  return { phases, marks };
}

/** The short name a satellite mark is labelled with on the plot ("Cu Kβ", "W Lα"), from the analysis's phrase. */
export function satelliteLabel(text: string): string {
  const m = /([A-Z][a-z]? Kβ|W Lα)/.exec(text);
  return m ? m[1]! : 'satellite';
}
