import { InputError } from '../errors.js';
import type { StoredReference } from '../model/reference.js';
import type { FittedPeak } from '../model/peak.js';
import { dFromTwoTheta } from '../model/units.js';
import { buildPeakTable, nearestPeak, type PeakTable } from './peak-table.js';
import { chungWeightFractions, fitPhaseScales, type GroupIntensities } from './quantify.js';
import { buildReferenceIndex, rangeTotals, screenReferences } from './reference-index.js';
import { evaluatePhase, phaseLines, type Claims, type PhaseEvaluation, type PhaseLines } from './score.js';
import { refineShift, searchCellScale, type ShiftBounds } from './shift.js';
import { displacementMillimetres, fitSampleAndCells, type CellFit, type SampleFit } from './sample-fit.js';
import type { UnitCell } from '../model/cell.js';
import { cellMetric, inverseDSquared } from '../crystal/metric.js';
import type { MatchOptions, MatchResult, MatchShift, MatchedLine, PhaseMatch, SampleShift, UnexplainedPeak, Verdict } from './types.js';

export const DEFAULT_TOLERANCE_DEG = 0.1;
export const DEFAULT_MAX_ZERO_DEG = 0.15;
export const DEFAULT_MAX_DISPLACEMENT_DEG = 0.15;
/** Each refined cell parameter stays within ±2 % of the reference's unless the user sets other bounds. */
export const DEFAULT_CELL_BOUND = 0.02;
/** Goniometer radius for the displacement in mm (a common lab value; the user sets theirs). */
export const DEFAULT_GONIOMETER_RADIUS_MM = 240;
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
/** Lines weaker than this share of the strongest do not define a phase's "first line" for the low-angle flag. */
const FIRST_LINE_SHARE = 0.01;
/** A candidate with at least this share of its matched peaks already explained is treated as a look-alike of an accepted phase. */
const LOOK_ALIKE_SHARED_SHARE = 0.8;
const DECOMPOSITION_TAG = 'decomposition product';

const fmt = (value: number, digits: number): string => value.toFixed(digits);
const pct = (value: number): string => `${Math.round(100 * value)} %`;

/** Explain → refine the sample shift and cells → explain again, at most this many times. */
const SAMPLE_PASSES = 4;
/** The passes stop when the same phases explain the pattern and the shift moved less than this, degrees 2θ. */
const SHIFT_SETTLED_DEG = 1e-4;

/** One pass of the explanation: which phases, taken in turn, explain the peaks under one sample shift. */
interface Explanation {
  accepted: Array<{ ref: number; evaluation: PhaseEvaluation }>;
  firstEvaluation: Map<number, PhaseEvaluation>;
  latest: Map<number, PhaseEvaluation>;
  claims: Claims;
  shift: MatchShift;
}

/**
 * Which reference phases explain the measured peaks: the target (or the best phase) first, then
 * what is left with other references, until no reference explains significant peaks. One shift
 * (zero offset and specimen displacement) belongs to the pattern: it is refined jointly with the
 * cells of the phases taken into the explanation (sample-fit.ts), and the explanation is built
 * again with them until it settles. Returns verdicts with readable reasons, the shift with σ,
 * refined cells, unexplained peaks and Chung weight fractions.
 */
export function matchPhases(peaks: readonly FittedPeak[], references: readonly StoredReference[], options: MatchOptions): MatchResult {
  const tol = options.toleranceDeg ?? DEFAULT_TOLERANCE_DEG;
  if (!(tol > 0 && tol <= 2)) throw new InputError(`tolerance ${tol}° 2θ is not usable; give a value between 0.01 and 2 degrees (typical 0.05–0.2)`);
  const bounds: ShiftBounds = {
    toleranceDeg: tol,
    maxZeroDeg: nonNegative(options.maxZeroDeg ?? DEFAULT_MAX_ZERO_DEG, 'maximum zero offset'),
    maxDisplacementDeg: nonNegative(options.maxDisplacementDeg ?? DEFAULT_MAX_DISPLACEMENT_DEG, 'maximum displacement'),
  };
  const cellBound = options.cellBoundFraction ?? DEFAULT_CELL_BOUND;
  if (!(cellBound >= 0 && cellBound <= 0.2)) throw new InputError(`cell bound ${cellBound} is not usable; give a fraction between 0 and 0.2 (0.02 lets each edge move ±2 %)`);
  const radiusMm = options.goniometerRadiusMm ?? DEFAULT_GONIOMETER_RADIUS_MM;
  if (!(radiusMm > 0 && radiusMm <= 2000)) throw new InputError(`goniometer radius ${radiusMm} mm is not usable; give the radius in mm (lab instruments: about 150–300)`);
  const index = options.index ?? buildReferenceIndex(references);
  const refs = index.references;
  const lambda = options.wavelength.lambda1;
  const table = buildPeakTable([...peaks], options.background, options.twoThetaRangeDeg, tol);
  const targetIndex = findTarget(refs, options.target);

  // Lines of each reference, from its refined cell once it has one (matching uses the refined cell).
  const refinedCells = new Map<number, UnitCell>();
  const lineCache = new Map<number, PhaseLines>();
  const linesOf = (r: number): PhaseLines => {
    let lines = lineCache.get(r);
    if (!lines) {
      const cell = refinedCells.get(r);
      lines = phaseLines(cell ? withCell(refs[r], cell) : refs[r], lambda, table.rangeMin, table.rangeMax);
      lineCache.set(r, lines);
    }
    return lines;
  };

  const clearPeaks = countClear(table, null);
  const featureless = clearPeaks === 0;
  const maxPhases = options.maxPhases ?? 5;
  const candidateCount = options.candidates ?? 40;
  const dMin = dFromTwoTheta(Math.min(table.rangeMax, 179), lambda);
  const dMax = table.rangeMin > 0 ? dFromTwoTheta(table.rangeMin, lambda) : Infinity;
  const totals = featureless ? new Float64Array(0) : rangeTotals(index, dMin, dMax);

  // Starting isotropic cell scale of a candidate whose reference cell does not fit (see searchCellScale); refined cells replace it.
  const startScale = new Map<number, number>();
  const evaluateCandidate = (r: number, lines: PhaseLines, shift: MatchShift | null, claims: Claims): PhaseEvaluation => {
    if (!refinedCells.has(r) && usableCell(refs[r].cell)) {
      const { scale } = searchCellScale(lines, table, bounds, cellBound, shift);
      if (scale !== 1) {
        startScale.set(r, scale);
        const scaled = phaseLines(scaledReference(refs[r], scale), lambda, table.rangeMin, table.rangeMax);
        return evaluatePhase(scaled, table, shift ?? refineShift(scaled, table, bounds), claims);
      }
      startScale.delete(r);
    }
    return evaluatePhase(lines, table, shift ?? refineShift(lines, table, bounds), claims);
  };

  /**
   * With no sample shift known yet (the first pass), the first phase is chosen with a starting
   * offset searched per candidate (refineShift); from then on every candidate is judged with the
   * sample's one shift.
   */
  const explain = (sampleShift: MatchShift | null): Explanation => {
    const claims: Claims = { claimed: new Int32Array(table.count).fill(-1) };
    const accepted: Array<{ ref: number; evaluation: PhaseEvaluation }> = [];
    const firstEvaluation = new Map<number, PhaseEvaluation>();
    const latest = new Map<number, PhaseEvaluation>();
    let shift = sampleShift;
    for (let round = 0; round < maxPhases && !featureless; round++) {
      const open: number[] = [];
      for (let k = 0; k < table.count; k++) if (claims.claimed[k] < 0) open.push(k);
      if (!explainsSignificantPeaks({ clear: countClear(table, claims), all: open.length })) break;
      const candidates = screenReferences(index, {
        twoTheta: Float64Array.from(open, (k) => table.twoTheta[k]),
        lambda,
        windowDeg: 2 * tol + bounds.maxZeroDeg + bounds.maxDisplacementDeg,
        dMin,
        dMax,
        // After the first phase the open peaks are few and screen sharply: half the candidates suffice.
        count: round === 0 ? candidateCount : Math.max(1, candidateCount >> 1),
      }, totals);
      if (round === 0 && targetIndex >= 0 && !candidates.includes(targetIndex)) candidates.push(targetIndex);
      // Phases of the last pass's explanation are screened again whatever the screen says (their cells may have moved).
      for (const r of refinedCells.keys()) if (!candidates.includes(r)) candidates.push(r);

      const evaluations: Array<{ ref: number; evaluation: PhaseEvaluation }> = [];
      for (const r of candidates) {
        if (accepted.some((a) => a.ref === r)) continue;
        if (setAside.has(r)) {
          // Judged (for the listing) but never taken into the explanation.
          if (!latest.has(r)) latest.set(r, evaluatePhase(linesOf(r), table, shift ?? refineShift(linesOf(r), table, bounds), claims));
          continue;
        }
        const lines = linesOf(r);
        if (lines.count === 0) continue;
        const evaluation = evaluateCandidate(r, lines, shift, claims);
        if (!firstEvaluation.has(r)) firstEvaluation.set(r, evaluation);
        latest.set(r, evaluation);
        evaluations.push({ ref: r, evaluation });
      }
      const distinct = (e: PhaseEvaluation): NewPeakCount => distinctNewPeaks(e, accepted, table);
      const choice = choosePhase(evaluations, round === 0 ? targetIndex : -1, lowAngleOpenPeaks(table, claims, firstLineTwoTheta(accepted[0]?.evaluation, tol)), distinct);
      if (!choice) break;
      for (let j = 0; j < choice.evaluation.lines.count; j++) {
        const k = choice.evaluation.peakOf[j];
        if (k >= 0 && claims.claimed[k] < 0) claims.claimed[k] = accepted.length;
      }
      accepted.push(choice);
      shift ??= choice.evaluation.shift;
    }
    return { accepted, firstEvaluation, latest, claims, shift: shift ?? { zeroDeg: 0, displacementCosDeg: 0 } };
  };

  const fitOf = (explanation: Explanation): SampleFit =>
    fitSampleAndCells(
      explanation.accepted.map((a) => ({
        lines: a.evaluation.lines,
        peakOf: a.evaluation.peakOf,
        referenceCell: usableCell(refs[a.ref].cell),
        currentCell: refinedCells.get(a.ref) ?? scaledCell(usableCell(refs[a.ref].cell), startScale.get(a.ref) ?? 1),
      })),
      table,
      { lambda, start: explanation.shift, maxZeroDeg: bounds.maxZeroDeg, maxDisplacementDeg: bounds.maxDisplacementDeg, cellBound },
    );

  /** Volume change a candidate's cell needs when refined alone on its matched peaks under a fixed sample shift. */
  const cellChangeAlone = (c: { ref: number; evaluation: PhaseEvaluation }, shift: MatchShift): CellChange | null => {
    const reference = usableCell(refs[c.ref].cell);
    if (!reference) return null;
    const alone = fitSampleAndCells(
      [{ lines: c.evaluation.lines, peakOf: c.evaluation.peakOf, referenceCell: reference, currentCell: refinedCells.get(c.ref) ?? scaledCell(reference, startScale.get(c.ref) ?? 1) }],
      table,
      { lambda, start: shift, maxZeroDeg: bounds.maxZeroDeg, maxDisplacementDeg: bounds.maxDisplacementDeg, cellBound, fixedShift: true },
    );
    const cell = alone.cells[0];
    if (typeof cell === 'string') return null;
    const v0 = cellMetric(reference).volume;
    return { percent: (100 * (cell.volume - v0)) / v0, sigma: (100 * cell.volumeSigma) / v0 };
  };
  // Look-alikes set aside: the reference, the rival that explains the same peaks, and both cell changes.
  const setAside = new Map<number, LookAlike>();
  const runPasses = (): { explanation: Explanation; fit: SampleFit } => {
    refinedCells.clear();
    lineCache.clear();
    let explanation = explain(null);
    let fit = fitOf(explanation);
    for (let pass = 1; pass < SAMPLE_PASSES && explanation.accepted.length > 0; pass++) {
      const previous = explanation;
      refinedCells.clear();
      lineCache.clear();
      explanation.accepted.forEach((a, i) => {
        const cell = fit.cells[i];
        if (typeof cell !== 'string') refinedCells.set(a.ref, cell.cell);
      });
      explanation = explain(fit.shift);
      fit = fitOf(explanation);
      const sameSet = previous.accepted.length === explanation.accepted.length && previous.accepted.every((a, i) => a.ref === explanation.accepted[i].ref);
      const moved = Math.abs(fit.shift.zeroDeg - explanation.shift.zeroDeg) + Math.abs(fit.shift.displacementCosDeg - explanation.shift.displacementCosDeg);
      if (sameSet && moved < SHIFT_SETTLED_DEG) break;
    }
    return { explanation, fit };
  };
  let { explanation, fit } = runPasses();
  // Two references explaining the same peaks: the one needing the larger cell change is set aside and the explanation rebuilt without it.
  for (let attempt = 0; attempt < MAX_LOOK_ALIKE_ROUNDS; attempt++) {
    const shiftNow = fit.shift;
    const noClaims: Claims = { claimed: new Int32Array(table.count).fill(-1) };
    const contenders: Contender[] = explanation.accepted.map((a) => ({ ...a, inExplanation: true }));
    // Candidates left out that share the peaks of a phase of the explanation, judged afresh under the sample's shift.
    for (const r of explanation.latest.keys()) {
      if (setAside.has(r) || explanation.accepted.some((a) => a.ref === r)) continue;
      const evaluation = evaluateCandidate(r, linesOf(r), shiftNow, noClaims);
      if (evaluation.score >= UNCERTAIN_SCORE && contenders.some((c) => c.inExplanation && sharedPeakShare(evaluation, c.evaluation) >= LOOK_ALIKE_SHARED_SHARE)) {
        contenders.push({ ref: r, evaluation, inExplanation: false });
      }
    }
    const found = findLookAlike(contenders, refs, (c) => cellChangeAlone(c, shiftNow));
    if (!found) break;
    setAside.set(found.ref, found);
    ({ explanation, fit } = runPasses());
  }
  const { accepted, firstEvaluation, latest, claims } = explanation;
  const finalShift = explanation.shift;

  // Phases not taken into the explanation are judged against the final state (one shift for the sample).
  if (targetIndex >= 0 && !firstEvaluation.has(targetIndex)) firstEvaluation.set(targetIndex, evaluatePhase(linesOf(targetIndex), table, finalShift, claims));
  // Re-judge the most promising of them (by their latest score) against the final state.
  const listAbsent = options.listAbsent ?? 5;
  const promising = [...latest.entries()]
    .filter(([r]) => !accepted.some((a) => a.ref === r))
    .sort((a, b) => b[1].score - a[1].score)
    .filter(([r], i) => i < 2 * listAbsent || r === targetIndex || setAside.has(r));
  if (targetIndex >= 0 && !promising.some(([r]) => r === targetIndex) && !accepted.some((a) => a.ref === targetIndex)) promising.push([targetIndex, firstEvaluation.get(targetIndex)!]);
  const others = promising.map(([r]) => ({ ref: r, evaluation: evaluatePhase(linesOf(r), table, finalShift, claims) }));
  others.sort((a, b) => b.evaluation.score - a.evaluation.score);
  const listed = others.filter((o, i) => i < listAbsent || o.ref === targetIndex || setAside.has(o.ref));

  // Scales fitted jointly to the peak areas (shared peaks split between the phases); a phase the fit gives nothing keeps its own peaks' scale.
  const gi = groupIntensities(accepted.map((a) => a.evaluation), table);
  const joint = fitPhaseScales(gi);
  const scales = accepted.map((a, i) => (joint[i] > 0 ? joint[i] : a.evaluation.scale));
  const exclusive = exclusiveAreaShares(linesOnPeaks(accepted.map((a) => a.evaluation), table), table);
  const fractions = chungWeightFractions(accepted.map((a, i) => ({ scale: scales[i], rir: refs[a.ref].rir })));
  const unquantified = accepted.filter((_, i) => fractions[i] === null).map((a) => refs[a.ref].name);
  const phases: PhaseMatch[] = [];
  accepted.forEach((a, i) => {
    const verdict = acceptedVerdict(a.evaluation);
    const described = describePhase(a.evaluation, verdict, claims, accepted, table, fractions[i], unquantified, null, exclusive[i]);
    phases.push({ ...described, scale: scales[i], ...cellReport(fit.cells[i], usableCell(refs[a.ref].cell), cellBound, described.reasons) });
  });
  /**
   * A phase left out as uncertain beside the phase that took its peaks: when its peaks are nearly all
   * that phase's, compare the cell change each needs alone under the sample's shift (the look-alike rule).
   */
  const judgeLookAlike = (ref: number, rival: PhaseEvaluation): { verdict: Verdict; reason: string } | null => {
    const rivalEntry = accepted.find((a) => a.evaluation === rival);
    if (!rivalEntry) return null;
    const fresh = evaluateCandidate(ref, linesOf(ref), finalShift, { claimed: new Int32Array(table.count).fill(-1) });
    if (sharedPeakShare(fresh, rival) < LOOK_ALIKE_SHARED_SHARE) return null;
    const mine = cellChangeAlone({ ref, evaluation: fresh }, finalShift);
    const theirs = cellChangeAlone(rivalEntry, finalShift);
    if (!mine || !theirs || Math.abs(mine.percent) <= Math.abs(theirs.percent)) return null;
    const significant = Math.abs(mine.percent) - Math.abs(theirs.percent) > CELL_CHANGE_SIGNIFICANT * Math.hypot(mine.sigma, theirs.sigma);
    const rivalName = refs[rivalEntry.ref].name;
    return {
      verdict: significant ? 'not-seen' : 'uncertain',
      reason:
        `${significant ? 'not seen' : 'uncertain'}: the same peaks as ${rivalName}, needing a ${Math.abs(mine.percent).toFixed(2)} % ${mine.percent >= 0 ? 'larger' : 'smaller'} cell (volume) than its reference ` +
        `where ${rivalName} needs ${signed(theirs.percent, 2)} % (each refined alone under the sample's shift)` + (significant ? '' : '; indistinguishable at this resolution'),
    };
  };
  for (const o of listed) {
    const lookAlike = setAside.get(o.ref);
    if (lookAlike) {
      const described = describePhase(o.evaluation, lookAlike.verdict, claims, accepted, table, null, unquantified, null, 0);
      // The last reason of a phase outside the explanation is its verdict's: say why it was set aside instead.
      described.reasons[described.reasons.length - 1] = `${lookAlike.reason} (absence holds only above the detection limit)`;
      phases.push(described);
      continue;
    }
    const { verdict, rival } = notNeededVerdict(o.evaluation, firstEvaluation.get(o.ref), claims, accepted);
    const lookAlikeVerdict = verdict === 'uncertain' && rival ? judgeLookAlike(o.ref, rival) : null;
    const described = describePhase(o.evaluation, lookAlikeVerdict?.verdict ?? verdict, claims, accepted, table, null, unquantified, rival, 0);
    if (lookAlikeVerdict) described.reasons[described.reasons.length - 1] = `${lookAlikeVerdict.reason} (absence holds only above the detection limit)`;
    phases.push(described);
  }
  phases.sort((a, b) => b.score - a.score);

  const firstLineEvaluation = targetIndex >= 0 ? accepted.find((a) => a.ref === targetIndex)?.evaluation ?? evaluatePhase(linesOf(targetIndex), table, finalShift, claims) : accepted[0]?.evaluation;
  const lowAngleLimit = firstLineTwoTheta(firstLineEvaluation, tol);
  const unexplained = unexplainedPeaks(table, claims, lowAngleLimit, refs, lambda, finalShift, tol);
  let unexplainedArea = 0;
  for (let k = 0; k < table.count; k++) if (claims.claimed[k] < 0) unexplainedArea += table.area[k];
  const unexplainedAreaShare = table.totalArea > 0 ? unexplainedArea / table.totalArea : 0;
  const shift = sampleShift(fit, accepted.length > 0, radiusMm);

  return {
    shift,
    phases,
    unexplained,
    unexplainedAreaShare,
    featureless,
    toleranceDeg: tol,
    reasons: patternReasons(table, featureless, clearPeaks, accepted, refs, shift, fit, bounds, unexplained, unexplainedAreaShare, firstLineEvaluation),
  };
}

/** At most this many look-alikes are set aside per pattern (each costs a rebuilt explanation). */
const MAX_LOOK_ALIKE_ROUNDS = 3;

/** Volume change of a cell refined alone, % of the reference's, with σ. */
interface CellChange {
  percent: number;
  sigma: number;
}

interface LookAlike {
  ref: number;
  verdict: Verdict;
  reason: string;
}

/**
 * Two phases of the explanation on the same peaks (at least LOOK_ALIKE_SHARED_SHARE of one's
 * matched peaks matched by the other): the one whose refined cell moved further from its reference
 * (volume change), while it matches no more lines and scores no better, is set aside. It is
 * `not-seen` when its change exceeds the other's significantly (CELL_CHANGE_SIGNIFICANT σ), else
 * `uncertain` (indistinguishable at this resolution).
 */
interface Contender {
  ref: number;
  evaluation: PhaseEvaluation;
  /** Taken into the explanation (only such a phase can be set aside). */
  inExplanation: boolean;
}

function findLookAlike(contenders: readonly Contender[], refs: readonly StoredReference[], changeAlone: (c: Contender) => CellChange | null): LookAlike | null {
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
      const direction = cl.percent >= 0 ? 'larger' : 'smaller';
      const rivalName = refs[w.ref].name;
      return {
        ref: l.ref,
        verdict: significant ? 'not-seen' : 'uncertain',
        reason:
          `${significant ? 'not seen' : 'uncertain'}: the same peaks as ${rivalName}, needing a ${Math.abs(cl.percent).toFixed(2)} % ${direction} cell (volume) than its reference ` +
          `where ${rivalName} needs ${signed(cw.percent, 2)} % (each refined alone under the sample's shift), with ${loser.matchedCount} lines matched against ${winner.matchedCount}` +
          (significant ? '' : '; indistinguishable at this resolution'),
      };
    }
  }
  return null;
}

/** The pattern's shift with σ, and the displacement in mm for the goniometer radius. */
function sampleShift(fit: SampleFit, fitted: boolean, radiusMm: number): SampleShift {
  const zero = fitted ? fit.shift.zeroDeg : 0;
  const displacement = fitted ? fit.shift.displacementCosDeg : 0;
  const dSigma = fitted ? fit.displacementSigmaDeg : null;
  return {
    zeroDeg: round(zero, 5),
    zeroSigmaDeg: fitted && fit.zeroSigmaDeg !== null ? round(fit.zeroSigmaDeg, 5) : null,
    displacementCosDeg: round(displacement, 5),
    displacementSigmaDeg: dSigma === null ? null : round(dSigma, 5),
    displacementMm: round(displacementMillimetres(displacement, radiusMm), 4),
    displacementMmSigma: dSigma === null ? null : round(Math.abs(displacementMillimetres(dSigma, radiusMm)), 4),
    goniometerRadiusMm: radiusMm,
    linesUsed: fitted ? fit.linesUsed : 0,
  };
}

/** A reference cell that can be refined, or null. */
function usableCell(cell: UnitCell | null | undefined): UnitCell | null {
  if (!cell) return null;
  try {
    cellMetric(cell);
    return cell;
  } catch {
    return null;
  }
}

function scaledCell(cell: UnitCell | null, scale: number): UnitCell | null {
  return cell && scale !== 1 ? { ...cell, a: cell.a * scale, b: cell.b * scale, c: cell.c * scale } : cell;
}

/** The reference with every d (and its cell's edges) scaled by one factor. */
function scaledReference(reference: StoredReference, scale: number): StoredReference {
  return { ...reference, cell: scaledCell(reference.cell ?? null, scale), lines: reference.lines.map((line) => ({ ...line, d: line.d * scale })) };
}

/** The reference with its indexed lines' d recomputed from another cell (lines without indices keep theirs). */
function withCell(reference: StoredReference, cell: UnitCell): StoredReference {
  const { gStar } = cellMetric(cell);
  return {
    ...reference,
    lines: reference.lines.map((line) => (line.hkl ? { ...line, d: 1 / Math.sqrt(inverseDSquared(gStar, line.hkl[0], line.hkl[1], line.hkl[2])) } : line)),
  };
}

/** Changes smaller than this many σ are reported as agreeing with the reference (common practice: 2σ). */
const CELL_CHANGE_SIGNIFICANT = 2;

/**
 * The refined cell of a phase taken into the explanation, its volume change from the reference in %
 * (`cellChangePercent` is the volume change: it covers every crystal system in one number) and in σ,
 * with a sentence added to the reasons.
 */
function cellReport(fit: CellFit | string, reference: UnitCell | null, bound: number, reasons: string[]): Pick<PhaseMatch, 'cell' | 'cellChangePercent' | 'cellChangeSigmas'> {
  if (typeof fit === 'string' || !reference) {
    reasons.push(typeof fit === 'string' && fit ? fit : 'no cell refined: the reference gives no unit cell');
    return {};
  }
  const { cell, sigma } = fit;
  const v0 = cellMetric(reference).volume;
  const changePercent = (100 * (fit.volume - v0)) / v0;
  const changeSigmas = fit.volumeSigma > 0 ? (fit.volume - v0) / fit.volumeSigma : Infinity;
  const edges = fit.free.map((name) => `${name} = ${cell[name].toFixed(name.length === 1 ? 5 : 3)}(${sigma[name].toExponential(1)})${name.length === 1 ? ' Å' : '°'}`).join(', ');
  const significance =
    Math.abs(changeSigmas) < CELL_CHANGE_SIGNIFICANT
      ? `agrees with the reference (volume ${signed(changePercent, 3)} %, ${Math.abs(changeSigmas).toFixed(1)}σ)`
      : `volume ${signed(changePercent, 3)} % from the reference (${Math.abs(changeSigmas).toFixed(1)}σ)`;
  reasons.push(
    `refined cell from ${fit.linesUsed} resolved lines (${fit.free.length} parameter(s), bounds ±${100 * bound} %): ${edges}; ${significance}` +
      (fit.atBound.length ? `; ${fit.atBound.join(', ')} at the bound: the cell may lie beyond it` : ''),
  );
  return {
    cell: {
      a: round(cell.a, 6), aSigma: round(sigma.a, 6),
      b: round(cell.b, 6), bSigma: round(sigma.b, 6),
      c: round(cell.c, 6), cSigma: round(sigma.c, 6),
      alpha: round(cell.alpha, 4), alphaSigma: round(sigma.alpha, 4),
      beta: round(cell.beta, 4), betaSigma: round(sigma.beta, 4),
      gamma: round(cell.gamma, 4), gammaSigma: round(sigma.gamma, 4),
      volume: round(fit.volume, 4), volumeSigma: round(fit.volumeSigma, 4),
    },
    cellChangePercent: round(changePercent, 4),
    cellChangeSigmas: Number.isFinite(changeSigmas) ? round(changeSigmas, 2) : null,
  };
}

function nonNegative(value: number, what: string): number {
  if (!(value >= 0 && value <= 2)) throw new InputError(`${what} ${value}° 2θ is not usable; give a value between 0 and 2 degrees`);
  return value;
}

function findTarget(refs: readonly StoredReference[], target: string | undefined): number {
  if (target === undefined) return -1;
  let i = refs.findIndex((r) => r.name === target);
  if (i < 0) i = refs.findIndex((r) => r.name.toLowerCase() === target.toLowerCase());
  if (i < 0) throw new InputError(`target phase "${target}" is not in the reference library; list the library's phases and give one of their names`);
  return i;
}

function countClear(table: PeakTable, claims: Claims | null): number {
  let n = 0;
  for (let k = 0; k < table.count; k++) if (table.clear[k] && (!claims || claims.claimed[k] < 0)) n++;
  return n;
}

/** 2θ (shifted) of a phase's first line: the largest d with at least 1 % of the strongest intensity. */
function firstLineTwoTheta(evaluation: PhaseEvaluation | undefined, tol: number): number {
  if (!evaluation) return -Infinity;
  const { lines, shift } = evaluation;
  let first = Infinity;
  for (let j = 0; j < lines.count; j++) {
    if (lines.intensity[j] < FIRST_LINE_SHARE * lines.strongestIntensity) continue;
    first = Math.min(first, lines.twoTheta[j] + shift.zeroDeg + shift.displacementCosDeg * lines.cosTheta[j]);
  }
  return Number.isFinite(first) ? first - tol : -Infinity;
}

function lowAngleOpenPeaks(table: PeakTable, claims: Claims, limit: number): Set<number> {
  const set = new Set<number>();
  for (let k = 0; k < table.count && table.twoTheta[k] < limit; k++) if (claims.claimed[k] < 0 && table.clear[k]) set.add(k);
  return set;
}

/**
 * The next phase of the explanation: the target when it explains significant new peaks (unless a
 * look-alike claiming the same peaks scores more than TARGET_MARGIN above it); else, while low-angle peaks are open, the best decomposition product that
 * explains one of them; else the best-scoring candidate that explains new clear peaks.
 */
function choosePhase(
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

/** Shifted Kα1 position of line j under the evaluation's shift, degrees 2θ. */
function shiftedTwoTheta(evaluation: PhaseEvaluation, j: number): number {
  const { lines, shift } = evaluation;
  return lines.twoTheta[j] + shift.zeroDeg + shift.displacementCosDeg * lines.cosTheta[j];
}

/**
 * Per present phase and measured peak, the summed reference intensity of the phase's lines on the
 * peak: its matched lines, and lines within the peak's breadth that were not resolved from it
 * (hidden under it), since their intensity is part of the measured area too.
 */
function linesOnPeaks(evaluations: readonly PhaseEvaluation[], table: PeakTable): Float64Array[] {
  return evaluations.map((evaluation) => {
    const g = new Float64Array(table.count);
    for (let j = 0; j < evaluation.lines.count; j++) {
      let k = evaluation.peakOf[j];
      if (k < 0) {
        const tt = shiftedTwoTheta(evaluation, j);
        k = nearestPeak(table, tt);
        if (k < 0 || Math.abs(tt - table.twoTheta[k]) > Math.max(table.window[k], table.breadth[k])) continue;
      }
      g[k] += evaluation.lines.intensity[j];
    }
    return g;
  });
}

/** Unmatched lines within this many integral breadths of a fitted group's peaks are part of its area. */
const INSIDE_BREADTHS = 1;
/** Unmatched lines a little further out (up to this many breadths) may or may not be part of it. */
const NEAR_BREADTHS = 2.5;

/**
 * The measured areas and each phase's reference intensity per group of peaks fitted together (the
 * fit's split of an overlapped group between its peaks is arbitrary; their sum is not). A phase's
 * intensity in a group is that of its matched lines plus its unmatched lines within a breadth of the
 * group's peaks (not resolved from them, so in the measured area); unmatched lines a little further
 * out are listed apart (their share of the area is unknown). Peaks no present phase matches are
 * left out of the areas.
 */
function groupIntensities(evaluations: readonly PhaseEvaluation[], table: PeakTable): GroupIntensities {
  // Neighbouring peaks of one fitted group, split where they lie clearly apart (a peak list from elsewhere may put all in one group).
  const groupOf = new Int32Array(table.count);
  let groups = 0;
  for (let k = 0; k < table.count; k++) {
    const apart =
      k === 0 ||
      table.peaks[k].group !== table.peaks[k - 1].group ||
      table.twoTheta[k] - table.twoTheta[k - 1] > NEAR_BREADTHS * Math.max(table.breadth[k], table.breadth[k - 1]);
    if (apart) groups++;
    groupOf[k] = groups - 1;
  }
  const areas = new Float64Array(groups);
  const matchedPeak = new Uint8Array(table.count);
  const reach = (tt: number, breadths: number, g: number): boolean => {
    const k = nearestPeak(table, tt);
    for (let q = Math.max(0, k - 2); q <= Math.min(table.count - 1, k + 2); q++) {
      if (groupOf[q] === g && Math.abs(tt - table.twoTheta[q]) <= breadths * table.breadth[q]) return true;
    }
    return false;
  };
  const matched: Float64Array[] = [];
  const uncertain: Float64Array[] = [];
  for (const evaluation of evaluations) {
    const m = new Float64Array(groups);
    const u = new Float64Array(groups);
    for (let j = 0; j < evaluation.lines.count; j++) {
      const intensity = evaluation.lines.intensity[j];
      const k = evaluation.peakOf[j];
      if (k >= 0) {
        m[groupOf[k]] += intensity;
        matchedPeak[k] = 1;
        continue;
      }
      const tt = shiftedTwoTheta(evaluation, j);
      const nearest = nearestPeak(table, tt);
      if (nearest < 0) continue;
      const g = groupOf[nearest];
      if (reach(tt, INSIDE_BREADTHS, g)) m[g] += intensity;
      else if (reach(tt, NEAR_BREADTHS, g)) u[g] += intensity;
    }
    matched.push(m);
    uncertain.push(u);
  }
  for (let k = 0; k < table.count; k++) if (matchedPeak[k]) areas[groupOf[k]] += table.area[k];
  return { areas, matched, unmatched: uncertain };
}

/** Share of the measured peak area on peaks only this phase (of the present ones) has lines on. */
function exclusiveAreaShares(contributions: readonly Float64Array[], table: PeakTable): number[] {
  return contributions.map((mine) => {
    let area = 0;
    for (let k = 0; k < table.count; k++) if (mine[k] > 0 && contributions.every((other) => other === mine || other[k] === 0)) area += table.area[k];
    return table.totalArea > 0 ? area / table.totalArea : 0;
  });
}

interface NewPeakCount {
  clear: number;
  all: number;
}

/** Significant new peaks: one clear peak, or three peaks the peak search found (three coincidences are unlikely). */
function explainsSignificantPeaks(count: NewPeakCount): boolean {
  return count.clear >= 1 || count.all >= CONFIRMING_LINES;
}

/**
 * New peaks that count as evidence for a candidate. For a candidate whose matched peaks are mostly
 * (LOOK_ALIKE_SHARED_SHARE) explained already (a look-alike of an accepted phase), a new peak within twice its window of an
 * accepted phase's line is more likely that phase's line measured a little off, and does not count.
 */
function distinctNewPeaks(evaluation: PhaseEvaluation, accepted: Array<{ evaluation: PhaseEvaluation }>, table: PeakTable): NewPeakCount {
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
function sharedPeakShare(a: PhaseEvaluation, b: PhaseEvaluation): number {
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
function requiredLines(): number {
  return CONFIRMING_LINES;
}

function acceptedVerdict(evaluation: PhaseEvaluation): Verdict {
  return evaluation.score >= PRESENT_SCORE && evaluation.clearMatchedCount >= requiredLines() ? 'present' : 'uncertain';
}

/** A phase left out of the explanation: uncertain when it cannot be told from the phase that took its peaks, else not seen. */
function notNeededVerdict(
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

function describePhase(
  evaluation: PhaseEvaluation,
  verdict: Verdict,
  claims: Claims,
  accepted: Array<{ ref: number; evaluation: PhaseEvaluation }>,
  table: PeakTable,
  weightFraction: number | null,
  unquantified: string[],
  rival: PhaseEvaluation | null,
  exclusiveAreaShare: number,
): PhaseMatch {
  const { lines, parts } = evaluation;
  const reference = lines.reference;
  const number = accepted.findIndex((a) => a.evaluation === evaluation);
  const matched: MatchedLine[] = [];
  for (let j = 0; j < lines.count; j++) {
    const k = evaluation.peakOf[j];
    if (k < 0) continue;
    const line = reference.lines[lines.lineIndex[j]];
    const owner = claims.claimed[k];
    matched.push({
      d: line.d,
      intensity: line.intensity,
      ...(line.hkl ? { hkl: line.hkl } : {}),
      twoThetaExpected: round(table.twoTheta[k] - evaluation.residual[j], 4),
      twoThetaMeasured: round(table.twoTheta[k], 4),
      peakIndex: table.inputIndex[k],
      shared: owner >= 0 && owner !== number,
    });
  }
  let explainedArea = 0;
  const seen = new Set<number>();
  for (let j = 0; j < lines.count; j++) {
    const k = evaluation.peakOf[j];
    if (k >= 0 && !seen.has(k)) {
      seen.add(k);
      explainedArea += table.area[k];
    }
  }

  const reasons: string[] = [];
  reasons.push(
    `${evaluation.matchedCount} of ${evaluation.visibleCount} lines that should be visible matched within the tolerance ` +
      `(mean |Δ2θ| ${fmt(evaluation.meanResidualDeg, 3)}° after the shift); ${pct(parts.intensityFound)} of their reference intensity found`,
  );
  if (evaluation.missingStrong.length > 0) {
    const listedMissing = evaluation.missingStrong
      .slice(0, 5)
      .map((m) => `d ${fmt(m.d, 3)} Å (${Math.round(m.intensity)} %) at ${fmt(m.twoTheta, 2)}° expected ${fmt(m.visibility, 1)}× the detection level`)
      .join('; ');
    reasons.push(`strong lines missing although they would be visible: ${listedMissing}`);
  } else if (evaluation.matchedCount > 0) reasons.push('no strong line that would be visible is missing');
  if (lines.intensitiesKnown && evaluation.matchedCount > 0) {
    reasons.push(`measured relative intensities differ from the reference by a factor ${fmt(evaluation.meanIntensityFactor, 2)} on average (up to about 3 is tolerated as preferred orientation)`);
  } else if (!lines.intensitiesKnown) reasons.push('the reference gives no intensities: judged on positions only');
  reasons.push(
    `its lines fall on ${pct(table.totalArea > 0 ? explainedArea / table.totalArea : 0)} of the measured peak area` +
      (evaluation.sharedPeaks > 0 ? `; ${evaluation.sharedPeaks} peak(s) shared with a phase accepted before it, counted once` : '') +
      (number >= 0 ? `; ${pct(exclusiveAreaShare)} is on peaks no other present phase has lines on` : ''),
  );

  const required = requiredLines();
  if (verdict === 'present') reasons.push(`present: score ${fmt(evaluation.score, 2)} ≥ ${PRESENT_SCORE} with ${evaluation.clearMatchedCount} lines on clear peaks`);
  else if (verdict === 'uncertain' && number >= 0) {
    const why: string[] = [];
    if (evaluation.score < PRESENT_SCORE) why.push(`score ${fmt(evaluation.score, 2)} below ${PRESENT_SCORE}`);
    if (lines.count < required) why.push(`it has only ${lines.count} line(s) in the measured range, and ${required} clear lines are needed to call a phase present`);
    else if (evaluation.clearMatchedCount < required) why.push(`only ${evaluation.clearMatchedCount} line(s) on clear peaks (${required} needed)`);
    reasons.push(`uncertain: it explains peaks nothing else explains, but ${why.join(' and ')}`);
  } else if (verdict === 'uncertain' && rival) {
    reasons.push(`uncertain: its lines fall on the peaks of ${rival.lines.reference.name}, which fits about as well (mean |Δ2θ| ${fmt(rival.meanResidualDeg, 3)}° against ${fmt(evaluation.meanResidualDeg, 3)}°); the two cannot be told apart here`);
  } else {
    const why: string[] = [];
    if (evaluation.matchedCount === 0) why.push('no line matches a measured peak');
    if (evaluation.missingStrong.length > 0) why.push('strong lines are missing');
    if (rival && evaluation.newClearPeaks === 0) why.push(`every matched peak is explained by ${rival.lines.reference.name}, which fits better (mean |Δ2θ| ${fmt(rival.meanResidualDeg, 3)}°)`);
    else if (evaluation.newClearPeaks === 0 && evaluation.matchedCount > 0) why.push('it explains no clear peak');
    if (evaluation.score < UNCERTAIN_SCORE) why.push(`score ${fmt(evaluation.score, 2)} below ${UNCERTAIN_SCORE}`);
    reasons.push(`not seen: ${why.join('; ') || 'not needed to explain the pattern'} (absence holds only above the detection limit)`);
  }
  const present = number >= 0;
  if (present && weightFraction !== null) {
    reasons.push(`weight fraction ${fmt(weightFraction, 3)} by Chung's matrix flushing with RIR ${reference.rir}` + (unquantified.length ? ` (among quantified phases only; not quantified: ${unquantified.join(', ')})` : ''));
  } else if (present) reasons.push('not quantified: the reference has no reference intensity ratio (RIR)');

  return {
    name: reference.name,
    formula: reference.formula,
    tags: reference.tags,
    score: round(evaluation.score, 4),
    verdict,
    matchedLines: evaluation.matchedCount,
    missingStrongLines: evaluation.missingStrong.map((m) => ({
      d: m.d,
      intensity: m.intensity,
      twoTheta: round(m.twoTheta, 4),
      expectedHeight: round(m.expectedHeight, 1),
      visibility: round(m.visibility, 2),
    })),
    weightFraction: weightFraction === null ? null : round(weightFraction, 4),
    quantification: weightFraction === null ? 'not quantified' : 'quantified',
    parts: {
      position: round(parts.position, 4),
      intensityFound: round(parts.intensityFound, 4),
      missingStrong: round(parts.missingStrong, 4),
      relativeIntensity: round(parts.relativeIntensity, 4),
      explained: round(parts.explained, 4),
    },
    scale: evaluation.scale,
    explainedAreaShare: round(table.totalArea > 0 ? explainedArea / table.totalArea : 0, 4),
    exclusiveAreaShare: round(exclusiveAreaShare, 4),
    inExplanation: number >= 0,
    shift: { zeroDeg: round(evaluation.shift.zeroDeg, 5), displacementCosDeg: round(evaluation.shift.displacementCosDeg, 5) },
    meanResidualDeg: round(evaluation.meanResidualDeg, 5),
    lines: matched,
    reasons,
  };
}

function unexplainedPeaks(
  table: PeakTable,
  claims: Claims,
  lowAngleLimit: number,
  refs: readonly StoredReference[],
  lambda: number,
  shift: MatchShift,
  tol: number,
): UnexplainedPeak[] {
  const decomposition = refs
    .filter((r) => r.tags.includes(DECOMPOSITION_TAG))
    .map((r) => phaseLines(r, lambda, table.rangeMin, table.rangeMax));
  const out: UnexplainedPeak[] = [];
  for (let k = 0; k < table.count; k++) {
    if (claims.claimed[k] >= 0) continue;
    const tt = table.twoTheta[k];
    const possibleSources = decomposition
      .filter((lines) => {
        for (let j = 0; j < lines.count; j++) {
          const expected = lines.twoTheta[j] + shift.zeroDeg + shift.displacementCosDeg * lines.cosTheta[j];
          if (Math.abs(expected - tt) <= tol) return true;
        }
        return false;
      })
      .map((lines) => lines.reference.name);
    out.push({ peakIndex: table.inputIndex[k], twoTheta: round(tt, 4), d: round(table.peaks[k].d, 4), height: round(table.height[k], 1), lowAngle: tt < lowAngleLimit, possibleSources });
  }
  return out;
}

function patternReasons(
  table: PeakTable,
  featureless: boolean,
  clearPeaks: number,
  accepted: Array<{ ref: number; evaluation: PhaseEvaluation }>,
  refs: readonly StoredReference[],
  shift: SampleShift,
  fit: SampleFit,
  bounds: ShiftBounds,
  unexplained: UnexplainedPeak[],
  unexplainedAreaShare: number,
  firstLine: PhaseEvaluation | undefined,
): string[] {
  const reasons: string[] = [];
  if (featureless) {
    reasons.push(
      table.count === 0
        ? 'No peaks were found: the pattern is featureless and supports no phase claim (an attenuating film or tape, amorphous matter, or too little sample can cause this).'
        : `No peak stands clearly above the noise (${table.count} weak peak(s) only): the pattern supports no phase claim (an attenuating film or tape, amorphous matter, or too little sample can cause this).`,
    );
    return reasons;
  }
  if (clearPeaks < CONFIRMING_LINES) reasons.push(`Only ${clearPeaks} clear peak(s): too few to confirm a phase.`);
  if (accepted.length > 0) {
    const sigma = (value: number | null): string => (value === null ? '' : ` ± ${value.toFixed(4)}`);
    const displacement =
      shift.displacementSigmaDeg === null
        ? fit.sigmaIncludesDisplacement
          ? 'no specimen displacement kept (not significant beside the zero offset and the cells; the σ of the zero and the cells allow for one, which cannot be told apart from them on these lines)'
          : 'no specimen displacement (too few lines to refine one)'
        : `specimen displacement ${signed(shift.displacementCosDeg)}${sigma(shift.displacementSigmaDeg)}°·cosθ (${signed(shift.displacementMm, 3)} mm on a ${shift.goniometerRadiusMm} mm goniometer)`;
    reasons.push(
      `One shift for the sample, refined with the cells on ${fit.linesUsed} resolved lines of ${accepted.map((a) => refs[a.ref].name).join(', ')}: ` +
        `zero offset ${signed(shift.zeroDeg)}${sigma(shift.zeroSigmaDeg)}°, ${displacement} (bounds ±${bounds.maxZeroDeg}° and ±${bounds.maxDisplacementDeg}°` +
        `${fit.zeroAtBound || fit.displacementAtBound ? '; at a bound, so the shift may be larger' : ''}).`,
    );
    reasons.push(`Explained with ${accepted.map((a) => refs[a.ref].name).join(', then ')}; overlapping lines are shared, not counted twice.`);
  } else reasons.push('No reference explains the measured peaks.');
  if (unexplained.length > 0) {
    const low = unexplained.filter((u) => u.lowAngle).length;
    reasons.push(
      `${unexplained.length} peak(s) carrying ${pct(unexplainedAreaShare)} of the measured peak area are not explained` +
        (low > 0 && firstLine ? `; ${low} lie below the first line of ${firstLine.lines.reference.name} (low-angle: typical of hydrolysis or hydration products with an expanded layer spacing)` : '') +
        '.',
    );
  } else if (table.count > 0) reasons.push('Every measured peak is explained.');
  reasons.push('A phase not seen may still be there below the detection limit (about 1–5 wt % for lab PXRD), and amorphous matter is not seen.');
  return reasons;
}

function signed(value: number, digits = 4): string {
  return `${value >= 0 ? '+' : ''}${value.toFixed(digits)}`;
}

function round(value: number, digits: number): number {
  const f = 10 ** digits;
  return Math.round(value * f) / f;
}

