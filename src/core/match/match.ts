/**
 * The phase match: peaks are explained by reference phases taken in turn under one sample shift,
 * the shift and cells are refined, and the explanation is rebuilt until it settles; look-alikes are
 * set aside by the cell change each needs. Verdict rules, peak accounting and wording have modules of their own.
 */
import { InputError } from '../errors.js';
import { checkSettingRange } from '../model/setting-ranges.js';
import { positionsTagged, type StoredReference } from '../model/reference.js';
import type { FittedPeak } from '../model/peak.js';
import { dFromTwoTheta } from '../model/units.js';
import { buildPeakTable } from './peak-table.js';
import { chungQuantification, fitPhaseScales } from './quantify.js';
import { buildReferenceIndex, rangeTotals, screenReferences } from './reference-index.js';
import { evaluatePhase, phaseLines, type Claims, type PhaseEvaluation, type PhaseLines } from './score.js';
import { refineShift, searchCellScale, type ShiftBounds } from './shift.js';
import { searchAnisotropicCell } from './cell-search.js';
import { chanceCoincidence, coveredFraction, MAX_EXPECTED_BY_CHANCE } from './chance-coincidence.js';
import { fitSampleAndCells, type SampleFit } from './sample-fit.js';
import type { UnitCell } from '../model/cell.js';
import { cellMetric, inverseDSquared } from '../crystal/metric.js';
import type { MatchOptions, MatchResult, MatchShift, PhaseMatch } from './types.js';
import {
  acceptedVerdict,
  CELL_CHANGE_SIGNIFICANT,
  choosePhase,
  distinctNewPeaks,
  explainsSignificantPeaks,
  findLookAlike,
  LOOK_ALIKE_SHARED_SHARE,
  notNeededVerdict,
  sharedPeakShare,
  UNCERTAIN_SCORE,
  cellChangeFrom,
  type CellChange,
  type Contender,
  type LookAlike,
  type NewPeakCount,
} from './verdict-rules.js';
import { countClear, firstLineTwoTheta, lowAngleOpenPeaks, linesOnPeaks, groupIntensities, exclusiveAreaShares, unexplainedPeaks } from './peak-accounting.js';
import { cellReport, describePhase, lookAlikeReason, patternReasons, sampleShift } from './reasons.js';
import { round } from './format.js';
import { describeTolerance, windowDeg, type FwhmAt, type MatchTolerance } from './tolerance.js';
import { median } from '../numeric/numeric.js';
import { solidSolutionOf, solidSolutionPartners } from './solid-solution.js';
import type { PeakTable } from './peak-table.js';
import { satelliteMarks } from './satellites.js';
import { BOUNDED_ABSENCE_TAGS, detectionLimitWeightPercent, medianBreadthCos } from './detection-limit.js';

const DEFAULT_TOLERANCE_DEG = 0.1;

/**
 * The explanation takes phases while they explain significant open peaks; this bound only stops a
 * runaway (a reaction mixture holds 6–8 phases; beyond a dozen a lab pattern cannot resolve them).
 */
export const DEFAULT_PHASE_LIMIT = 12;

const DEFAULT_MAX_ZERO_DEG = 0.15;

const DEFAULT_MAX_DISPLACEMENT_DEG = 0.15;

/** Each refined cell parameter stays within ±2 % of the reference's unless the user sets other bounds. */
const DEFAULT_CELL_BOUND = 0.02;

/** Goniometer radius for the displacement in mm (a common lab value; the user sets theirs). */
const DEFAULT_GONIOMETER_RADIUS_MM = 240;

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
  /** The phase limit stopped the explanation while significant peaks were still open. */
  limitReached: boolean;
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
  const tolerance = toleranceOf(options);
  const fwhmAt: FwhmAt = options.instrumentFwhmAt ?? null;
  const lambda = options.wavelength.lambda1;
  const table = buildPeakTable([...peaks], options.background, options.twoThetaRangeDeg, (p) => windowDeg(tolerance, p.twoTheta, lambda, p.fwhm, fwhmAt));
  // One typical half-window (the median over the peaks) steers the shift search's grid and the low-angle and satellite tests; matching uses each peak's own.
  const tol = typicalToleranceDeg(table, tolerance, lambda, fwhmAt);
  let widestWindow = tol;
  for (let k = 0; k < table.count; k++) widestWindow = Math.max(widestWindow, table.window[k]);
  const fixedZero = options.fixedZeroDeg;
  if (fixedZero !== undefined && !(Number.isFinite(fixedZero) && Math.abs(fixedZero) <= 2)) throw new InputError(`zero offset ${fixedZero}° 2θ from the instrument profile is not usable; it must lie within ±2°`);
  const bounds: ShiftBounds = {
    toleranceDeg: tol,
    maxZeroDeg: nonNegative(options.maxZeroDeg ?? DEFAULT_MAX_ZERO_DEG, 'maximum zero offset'),
    maxDisplacementDeg: nonNegative(options.maxDisplacementDeg ?? DEFAULT_MAX_DISPLACEMENT_DEG, 'maximum displacement'),
    ...(fixedZero !== undefined ? { fixedZeroDeg: fixedZero } : {}),
  };
  const cellBound = options.cellBoundFraction ?? DEFAULT_CELL_BOUND;
  if (!(cellBound >= 0 && cellBound <= 0.2)) throw new InputError(`cell bound ${cellBound} is not usable; give a fraction between 0 and 0.2 (0.02 lets each edge move ±2 %)`);
  const radiusMm = options.goniometerRadiusMm ?? DEFAULT_GONIOMETER_RADIUS_MM;
  if (!(radiusMm > 0 && radiusMm <= 2000)) throw new InputError(`goniometer radius ${radiusMm} mm is not usable; give the radius in mm (lab instruments: about 150–300)`);
  const index = options.index ?? buildReferenceIndex(references);
  const refs = index.references;
  const targetIndex = findTarget(refs, options.target);

  // Solid-solution end members of one structure type: a cell may be refined from one towards the other.
  const partners = solidSolutionPartners(refs);
  const spanOf = (r: number): UnitCell[] => (partners.get(r) ?? []).map((j) => usableCell(refs[j].cell)).filter((c): c is UnitCell => c !== null);
  const partnerScales = (r: number): number[] => {
    const own = usableCell(refs[r].cell);
    return own ? spanOf(r).map((c) => Math.cbrt(cellMetric(c).volume / cellMetric(own).volume)) : [];
  };

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
  const maxPhases = options.maxPhases ?? DEFAULT_PHASE_LIMIT;
  if (!(Number.isInteger(maxPhases) && maxPhases >= 1 && maxPhases <= 50)) throw new InputError(`phase limit ${maxPhases} is not usable; give a whole number of phases between 1 and 50`);
  const candidateCount = options.candidates ?? 40;
  const dMin = dFromTwoTheta(Math.min(table.rangeMax, 179), lambda);
  const dMax = table.rangeMin > 0 ? dFromTwoTheta(table.rangeMin, lambda) : Infinity;
  const totals = featureless ? new Float64Array(0) : rangeTotals(index, dMin, dMax);

  // Starting cell of a candidate whose reference cell does not fit: an isotropic scaling (searchCellScale) or, failing that, an anisotropic one (searchAnisotropicCell); refined cells replace it.
  const startCell = new Map<number, UnitCell>();
  // The start cell and its lines depend only on the reference and the shift (not on what is claimed): found once per pair.
  const startFound = new Map<string, { cell: UnitCell; lines: PhaseLines } | null>();
  const startOf = (r: number, lines: PhaseLines, own: UnitCell, shift: MatchShift | null): { cell: UnitCell; lines: PhaseLines } | null => {
    const key = shift ? `${r} ${shift.zeroDeg} ${shift.displacementCosDeg}` : `${r}`;
    if (startFound.has(key)) return startFound.get(key)!;
    const search = searchCellScale(lines, table, bounds, cellBound, shift, partnerScales(r));
    const anisotropic = search.anisotropicAbove === null ? null : searchAnisotropicCell(lines, table, own, lambda, cellBound, bounds, shift, search.best, search.anisotropicAbove);
    // An isotropic scale moves every line (indexed or not); an anisotropic cell moves the indexed ones.
    const moved = anisotropic ? withCell(refs[r], anisotropic.cell) : search.scale !== 1 ? scaledReference(refs[r], search.scale) : null;
    const found = moved ? { cell: anisotropic ? anisotropic.cell : scaledCell(own, search.scale)!, lines: phaseLines(moved, lambda, table.rangeMin, table.rangeMax) } : null;
    startFound.set(key, found);
    return found;
  };
  const evaluateCandidate = (r: number, lines: PhaseLines, shift: MatchShift | null, claims: Claims): PhaseEvaluation => {
    const own = usableCell(refs[r].cell);
    if (!refinedCells.has(r) && own) {
      const start = startOf(r, lines, own, shift);
      if (start) {
        startCell.set(r, start.cell);
        return evaluatePhase(start.lines, table, shift ?? refineShift(start.lines, table, bounds), claims);
      }
      startCell.delete(r);
    }
    return evaluatePhase(lines, table, shift ?? refineShift(lines, table, bounds), claims);
  };

  /**
   * With no sample shift known yet (the first pass), the first phase is chosen with a starting
   * offset searched per candidate (refineShift); from then on every candidate is judged with the
   * sample's one shift.
   */
  // The screen depends only on the open peaks and how many to keep; each pass of the explanation asks again for the same sets.
  const screened = new Map<string, readonly number[]>();
  const screen = (open: readonly number[], count: number): readonly number[] => {
    const key = `${count}:${open.join(',')}`;
    let found = screened.get(key);
    if (!found) {
      found = screenReferences(index, {
        twoTheta: Float64Array.from(open, (k) => table.twoTheta[k]),
        lambda,
        windowDeg: 2 * widestWindow + bounds.maxZeroDeg + bounds.maxDisplacementDeg,
        dMin,
        dMax,
        count,
      }, totals);
      screened.set(key, found);
    }
    return found;
  };

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
      // After the first phase the open peaks are few and screen sharply: half the candidates suffice.
      const candidates = [...screen(open, round === 0 ? candidateCount : Math.max(1, candidateCount >> 1))];
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
    // The bound was what stopped it when significant open peaks remain after its last phase.
    let openLeft = 0;
    for (let k = 0; k < table.count; k++) if (claims.claimed[k] < 0) openLeft++;
    const limitReached = accepted.length >= maxPhases && explainsSignificantPeaks({ clear: countClear(table, claims), all: openLeft });
    return { accepted, firstEvaluation, latest, claims, shift: shift ?? { zeroDeg: bounds.fixedZeroDeg ?? 0, displacementCosDeg: 0 }, limitReached };
  };

  const fitOf = (explanation: Explanation): SampleFit =>
    fitSampleAndCells(
      explanation.accepted.map((a) => ({
        lines: a.evaluation.lines,
        peakOf: a.evaluation.peakOf,
        referenceCell: usableCell(refs[a.ref].cell),
        currentCell: refinedCells.get(a.ref) ?? startCell.get(a.ref) ?? usableCell(refs[a.ref].cell),
        span: spanOf(a.ref),
      })),
      table,
      { lambda, start: explanation.shift, maxZeroDeg: bounds.maxZeroDeg, maxDisplacementDeg: bounds.maxDisplacementDeg, cellBound, ...(fixedZero !== undefined ? { fixedZeroDeg: fixedZero } : {}) },
    );

  /** Volume change a candidate's cell needs when refined alone on its matched peaks under a fixed sample shift. */
  const cellChangeAlone = (c: { ref: number; evaluation: PhaseEvaluation }, shift: MatchShift): CellChange | null => {
    const reference = usableCell(refs[c.ref].cell);
    if (!reference) return null;
    const alone = fitSampleAndCells(
      [{ lines: c.evaluation.lines, peakOf: c.evaluation.peakOf, referenceCell: reference, currentCell: refinedCells.get(c.ref) ?? startCell.get(c.ref) ?? reference, span: spanOf(c.ref) }],
      table,
      { lambda, start: shift, maxZeroDeg: bounds.maxZeroDeg, maxDisplacementDeg: bounds.maxDisplacementDeg, cellBound, fixedShift: true },
    );
    const cell = alone.cells[0];
    if (typeof cell === 'string') return null;
    return cellChangeFrom(reference, cell);
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
  // References whose absence the chemist wants bounded (decomposition products, impurities) are always listed.
  const boundedRefs = boundedReferences(refs);
  const bounded = (r: number): boolean => boundedRefs.includes(r);
  for (const r of boundedRefs) {
    if (accepted.some((a) => a.ref === r) || others.some((o) => o.ref === r) || linesOf(r).count === 0) continue;
    others.push({ ref: r, evaluation: evaluatePhase(linesOf(r), table, finalShift, claims) });
  }
  others.sort((a, b) => b.evaluation.score - a.evaluation.score);
  const listed = others.filter((o, i) => i < listAbsent || o.ref === targetIndex || setAside.has(o.ref) || bounded(o.ref));

  // Scales fitted jointly to the peak areas (shared peaks split between the phases); a phase the fit gives nothing keeps its own peaks' scale.
  const gi = groupIntensities(accepted.map((a) => a.evaluation), table);
  const joint = fitPhaseScales(gi);
  const scales = accepted.map((a, i) => (joint.scales[i] > 0 ? joint.scales[i] : a.evaluation.scale));
  const scaleSigmas = accepted.map((_, i) => (joint.scales[i] > 0 && Number.isFinite(joint.sigmas[i]) ? joint.sigmas[i] : 0));
  const exclusive = exclusiveAreaShares(linesOnPeaks(accepted.map((a) => a.evaluation), table), table);
  const spiked = options.internalStandard;
  const standard = spiked ? { index: accepted.findIndex((a) => refs[a.ref].name.toLowerCase() === spiked.name.toLowerCase()), weightFraction: spiked.weightFraction } : undefined;
  const quantification = chungQuantification(accepted.map((a, i) => ({ scale: scales[i], scaleSigma: scaleSigmas[i], rir: refs[a.ref].rir })), standard);
  const fractions = quantification.weightFraction;
  // A fraction's σ only when every quantified phase's scale σ could be measured (its groups left a degree of freedom).
  const everyScaleHasSigma = fractions.every((f, j) => f === null || scaleSigmas[j] > 0);
  const fractionSigmas = quantification.weightFractionSigma.map((sigma) => (everyScaleHasSigma ? sigma : null));
  const unquantified = accepted.filter((_, i) => fractions[i] === null).map((a) => refs[a.ref].name);
  const phases: PhaseMatch[] = [];
  // A phase is present only when its agreement stands out from what chance gives over the whole library screened (chance-coincidence.ts).
  const covered = coveredFraction(table.twoTheta, tol, table.rangeMin, table.rangeMax);
  accepted.forEach((a, i) => {
    let verdict = acceptedVerdict(a.evaluation);
    const chance = chanceCoincidence({ linesInRange: a.evaluation.visibleCount, matchedLines: Math.min(a.evaluation.matchedCount, a.evaluation.visibleCount), coveredFraction: covered, screened: refs.length });
    if (verdict === 'present' && !chance.beyondChance) verdict = 'uncertain';
    const described = describePhase(a.evaluation, verdict, claims, accepted, table, fractions[i], unquantified, null, exclusive[i]);
    if (!chance.beyondChance) {
      described.reasons.push(
        `its ${a.evaluation.matchedCount} matched lines of ${a.evaluation.visibleCount} could be chance: the peaks' windows cover ${(100 * covered).toFixed(0)} % of the scan, and about ${chance.expectedByChance.toPrecision(2)} of the ${refs.length} references screened would agree as well by luck (at most ${MAX_EXPECTED_BY_CHANCE} allowed for present)`,
      );
    }
    const absolute = quantification.absoluteFraction[i];
    const absoluteSigma = quantification.absoluteFractionSigma[i];
    const phase: PhaseMatch = {
      ...described,
      scale: scales[i],
      weightFractionSigma: fractionSigmas[i] === null ? null : round(fractionSigmas[i]!, 4),
      ...(standard ? { absoluteWeightFraction: absolute === null ? null : round(absolute, 4), absoluteWeightFractionSigma: absoluteSigma === null ? null : round(absoluteSigma, 4) } : {}),
      ...cellReport(fit.cells[i], usableCell(refs[a.ref].cell), cellBound, described.reasons) };
    const cellFit = fit.cells[i];
    const ends = partners.get(a.ref);
    if (typeof cellFit !== 'string' && ends && phase.cellChangeSigmas !== null && Math.abs(phase.cellChangeSigmas ?? 0) >= CELL_CHANGE_SIGNIFICANT) {
      const solution = solidSolutionOf(refs[a.ref], ends.map((j) => refs[j]), cellFit.cell, cellFit.sigma, cellFit.free);
      if (solution) {
        phase.solidSolution = { ...solution, fraction: round(solution.fraction, 4), fractionSigma: round(solution.fractionSigma, 4) };
        phase.reasons.push(solution.statement);
      }
    }
    phases.push(phase);
  });
  // An end member whose peaks are those of a solid solution reported on its partner says so.
  const solutionOf = (name: string): PhaseMatch | undefined => phases.find((p) => p.solidSolution?.between.includes(name) && p.name !== name);
  /**
   * A phase left out as uncertain beside the phase that took its peaks: when its peaks are nearly all
   * that phase's, compare the cell change each needs alone under the sample's shift (the look-alike rule).
   */
  const judgeLookAlike = (ref: number, rival: PhaseEvaluation): LookAlike | null => {
    const rivalEntry = accepted.find((a) => a.evaluation === rival);
    if (!rivalEntry) return null;
    const fresh = evaluateCandidate(ref, linesOf(ref), finalShift, { claimed: new Int32Array(table.count).fill(-1) });
    if (sharedPeakShare(fresh, rival) < LOOK_ALIKE_SHARED_SHARE) return null;
    const mine = cellChangeAlone({ ref, evaluation: fresh }, finalShift);
    const theirs = cellChangeAlone(rivalEntry, finalShift);
    if (!mine || !theirs || Math.abs(mine.percent) <= Math.abs(theirs.percent)) return null;
    const significant = Math.abs(mine.percent) - Math.abs(theirs.percent) > CELL_CHANGE_SIGNIFICANT * Math.hypot(mine.sigma, theirs.sigma);
    return { ref, verdict: significant ? 'not-seen' : 'uncertain', significant, rivalName: refs[rivalEntry.ref].name, mine, theirs };
  };
  for (const o of listed) {
    const lookAlike = setAside.get(o.ref);
    if (lookAlike) {
      const described = describePhase(o.evaluation, lookAlike.verdict, claims, accepted, table, null, unquantified, null, 0);
      // The last reason of a phase outside the explanation is its verdict's: say why it was set aside instead.
      described.reasons[described.reasons.length - 1] = `${lookAlikeReason(lookAlike)} (absence holds only above the detection limit)`;
      phases.push(described);
      continue;
    }
    const { verdict, rival } = notNeededVerdict(o.evaluation, firstEvaluation.get(o.ref), claims, accepted);
    const lookAlikeVerdict = verdict === 'uncertain' && rival ? judgeLookAlike(o.ref, rival) : null;
    const described = describePhase(o.evaluation, lookAlikeVerdict?.verdict ?? verdict, claims, accepted, table, null, unquantified, rival, 0);
    if (lookAlikeVerdict) described.reasons[described.reasons.length - 1] = `${lookAlikeReason(lookAlikeVerdict)} (absence holds only above the detection limit)`;
    phases.push(described);
  }
  for (const p of phases) {
    const solution = p.inExplanation ? undefined : solutionOf(p.name);
    if (!solution || p.verdict === 'present') continue;
    const s = solution.solidSolution!;
    p.reasons.push(`its peaks are those of the solid solution between ${s.between[0]} and ${s.between[1]} reported with ${solution.name} (x = ${s.fraction.toFixed(3)} ± ${s.fractionSigma.toFixed(3)}): present only as an end member of it, not as itself`);
  }
  // How much of each bounded phase could hide below the detection level of this pattern.
  const breadthCos = medianBreadthCos(table);
  const presentForLimits = accepted.map((a, i) => ({ scale: scales[i], rir: refs[a.ref].rir }));
  for (const o of listed) {
    if (!bounded(o.ref)) continue;
    const phase = phases.find((p) => p.name === refs[o.ref].name);
    if (!phase || phase.verdict !== 'not-seen') continue;
    const limit = detectionLimitWeightPercent(linesOf(o.ref), refs[o.ref].rir, presentForLimits, table, finalShift, breadthCos);
    phase.detectionLimitWeightPercent = limit === null ? null : round(limit, 2);
    phase.reasons.push(
      limit === null
        ? 'no detection limit can be given (no RIR for it or for a phase present, or none of its lines lies clear of the measured peaks)'
        : `it would be seen above about ${limit < 0.1 ? limit.toPrecision(1) : limit.toPrecision(2)} wt % in this pattern (its most visible line reaching 3σ of the local noise; Chung's flushing with the RIRs)`,
    );
  }
  phases.sort((a, b) => b.score - a.score);

  const firstLineEvaluation = targetIndex >= 0 ? accepted.find((a) => a.ref === targetIndex)?.evaluation ?? evaluatePhase(linesOf(targetIndex), table, finalShift, claims) : accepted[0]?.evaluation;
  const lowAngleLimit = firstLineTwoTheta(firstLineEvaluation, tol);
  const unexplained = unexplainedPeaks(table, claims, lowAngleLimit, refs, lambda, finalShift);
  // A weak peak where a strong peak's Kβ or W Lα falls may be a satellite: no low-angle alarm, no unexplained area.
  const satellites = satelliteMarks(table, options.wavelength, options.source ?? 'ni-filter', tol);
  const tableIndexOf = new Map<number, number>();
  for (let k = 0; k < table.count; k++) tableIndexOf.set(table.inputIndex[k], k);
  for (const u of unexplained) {
    u.satelliteOf = satellites[tableIndexOf.get(u.peakIndex)!] ?? null;
    if (u.satelliteOf) u.lowAngle = false;
  }
  let unexplainedArea = 0;
  for (let k = 0; k < table.count; k++) if (claims.claimed[k] < 0 && satellites[k] === null) unexplainedArea += table.area[k];
  const unexplainedAreaShare = table.totalArea > 0 ? unexplainedArea / table.totalArea : 0;
  const shift = sampleShift(fit, accepted.length > 0, radiusMm, fixedZero);

  return {
    shift,
    phases,
    unexplained,
    unexplainedAreaShare,
    featureless,
    toleranceDeg: round(tol, 5),
    tolerance: { ...tolerance, description: describeTolerance(tolerance, fwhmAt), medianWindowDeg: round(tol, 5) },
    amorphous: quantification.amorphous ? { fraction: round(quantification.amorphous.fraction, 4), sigma: round(quantification.amorphous.sigma, 4) } : null,
    quantificationStatement: quantification.statement,
    phaseLimit: {
      limit: maxPhases,
      reached: explanation.limitReached,
      reason: explanation.limitReached
        ? `the explanation stopped at the phase limit of ${maxPhases} while significant peaks were still unexplained; raise the limit to explain them`
        : `phases were taken while they explained significant open peaks (limit ${maxPhases}, not reached)`,
    },
    reasons: patternReasons(table, featureless, clearPeaks, accepted, refs, shift, fit, bounds, unexplained, unexplainedAreaShare, firstLineEvaluation),
  };
}

/** The library's references tagged for a bounded absence, found once per library (a batch matches many patterns against one). */
const boundedByLibrary = new WeakMap<readonly StoredReference[], number[]>();
function boundedReferences(refs: readonly StoredReference[]): number[] {
  let found = boundedByLibrary.get(refs);
  if (!found) {
    found = positionsTagged(refs, BOUNDED_ABSENCE_TAGS);
    boundedByLibrary.set(refs, found);
  }
  return found;
}

/** At most this many look-alikes are set aside per pattern (each costs a rebuilt explanation). */
const MAX_LOOK_ALIKE_ROUNDS = 3;

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

/** The tolerance as the user stated it: in 2θ at Cu Kα (the default), in d, or in FWHM units; one way only. */
function toleranceOf(options: MatchOptions): MatchTolerance {
  const given = [options.toleranceDeg, options.toleranceD, options.toleranceFwhm].filter((v) => v !== undefined).length;
  if (given > 1) throw new InputError('give the matching tolerance one way only: in degrees 2θ at Cu Kα, in Å of d, or in units of the FWHM');
  if (options.toleranceD !== undefined) return { kind: 'd', angstrom: checkSettingRange('toleranceDAngstrom', options.toleranceD) };
  if (options.toleranceFwhm !== undefined) return { kind: 'fwhm', multiple: checkSettingRange('toleranceFwhm', options.toleranceFwhm) };
  return { kind: 'cu-two-theta', deg: checkSettingRange('toleranceDeg', options.toleranceDeg ?? DEFAULT_TOLERANCE_DEG) };
}

/** The median half-window over the peaks (the tolerance at 45° 2θ when there are none), degrees of this pattern's 2θ. */
function typicalToleranceDeg(table: PeakTable, tolerance: MatchTolerance, lambda: number, fwhmAt: FwhmAt): number {
  if (table.count === 0) return windowDeg(tolerance, 45, lambda, 0.1, fwhmAt);
  const base = table.peaks.map((p) => windowDeg(tolerance, p.twoTheta, lambda, p.fwhm, fwhmAt));
  return median(base);
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

