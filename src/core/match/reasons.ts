/**
 * The wording of the match: each phase's reasons and reported numbers, the refined cell's sentence,
 * the pattern's reasons, and the sample shift as reported.
 */
import type { StoredReference } from '../model/reference.js';
import { type PeakTable } from './peak-table.js';
import { type Claims, type PhaseEvaluation } from './score.js';
import { type ShiftBounds } from './shift.js';
import { displacementMillimetres, type CellFit, type SampleFit } from './sample-fit.js';
import type { UnitCell } from '../model/cell.js';
import { cellMetric } from '../crystal/metric.js';
import type { MatchedLine, PhaseMatch, SampleShift, ShiftTermStatus, UnexplainedPeak, Verdict } from './types.js';
import { UNCERTAIN_SCORE, PRESENT_SCORE, CONFIRMING_LINES, CELL_CHANGE_SIGNIFICANT, requiredLines, type LookAlike } from './verdict-rules.js';
import { fmt, pct, round, signed } from './format.js';

/**
 * A shift term whose σ, with the bounds taken as prior knowledge, is still this share of the σ the
 * bound alone gives (bound/√3) is not determined by the lines: the data narrowed it by less than 30 %.
 */
const SHIFT_DETERMINED_SHARE = 0.7;

/** The pattern's shift with σ, and the displacement in mm for the goniometer radius; each term says how it is known. */
export function sampleShift(fit: SampleFit, fitted: boolean, radiusMm: number, fixedZeroDeg?: number): SampleShift {
  const zero = fitted ? fit.shift.zeroDeg : (fixedZeroDeg ?? 0);
  const displacement = fitted ? fit.shift.displacementCosDeg : 0;
  const dSigma = fitted ? fit.displacementSigmaDeg : null;
  const status = (sigma: number | null, prior: number): ShiftTermStatus => (sigma !== null && sigma >= SHIFT_DETERMINED_SHARE * prior ? 'bounded' : 'refined');
  return {
    zeroDeg: round(zero, 5),
    zeroSigmaDeg: fitted && fit.zeroSigmaDeg !== null ? round(fit.zeroSigmaDeg, 5) : null,
    displacementCosDeg: round(displacement, 5),
    displacementSigmaDeg: dSigma === null ? null : round(dSigma, 5),
    displacementMm: round(displacementMillimetres(displacement, radiusMm), 4),
    displacementMmSigma: dSigma === null ? null : round(Math.abs(displacementMillimetres(dSigma, radiusMm)), 4),
    goniometerRadiusMm: radiusMm,
    linesUsed: fitted ? fit.linesUsed : 0,
    zeroStatus: fixedZeroDeg !== undefined ? 'instrument-profile' : status(fitted ? fit.zeroSigmaDeg : null, fit.zeroPriorSigmaDeg),
    displacementStatus: dSigma === null ? 'not-refined' : status(dSigma, fit.displacementPriorSigmaDeg),
  };
}

/**
 * The refined cell of a phase taken into the explanation, its volume change from the reference in %
 * (`cellChangePercent` is the volume change: it covers every crystal system in one number) and in σ,
 * with a sentence added to the reasons.
 */
export function cellReport(fit: CellFit | string, reference: UnitCell | null, bound: number, reasons: string[]): Pick<PhaseMatch, 'cell' | 'cellChangePercent' | 'cellChangeSigmas'> {
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

export function describePhase(
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

export function patternReasons(
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
    const zero =
      shift.zeroStatus === 'instrument-profile'
        ? `zero offset ${signed(shift.zeroDeg)}° taken from the instrument profile (measured on its standard; held, not refined)`
        : shift.zeroStatus === 'bounded'
          ? `zero offset not determined by these lines: it is known only to lie within ±${bounds.maxZeroDeg}° (best value ${signed(shift.zeroDeg)}°, σ ${shift.zeroSigmaDeg?.toFixed(3)}° is that of the bound)`
          : `zero offset ${signed(shift.zeroDeg)}${sigma(shift.zeroSigmaDeg)}°`;
    const displacement =
      shift.displacementStatus === 'bounded'
        ? `specimen displacement not determined by these lines: only within ±${bounds.maxDisplacementDeg}°·cosθ (best value ${signed(shift.displacementCosDeg)}°·cosθ, ${signed(shift.displacementMm, 3)} mm)`
        : shift.displacementSigmaDeg === null
        ? 'no specimen displacement (too few lines to refine one)'
        : `specimen displacement ${signed(shift.displacementCosDeg)}${sigma(shift.displacementSigmaDeg)}°·cosθ (${signed(shift.displacementMm, 3)} mm on a ${shift.goniometerRadiusMm} mm goniometer)`;
    reasons.push(
      `One shift for the sample, refined with the cells on ${fit.linesUsed} resolved lines of ${accepted.map((a) => refs[a.ref].name).join(', ')}: ` +
        `${zero}, ${displacement} (bounds ±${bounds.maxZeroDeg}° and ±${bounds.maxDisplacementDeg}°; σ take the bounds as known` +
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

/** Why a look-alike is set aside: the cell change it needs beside the rival's, each refined alone under the sample's shift. */
export function lookAlikeReason(lookAlike: LookAlike): string {
  const { significant, mine, theirs, rivalName, lines } = lookAlike;
  return (
    `${significant ? 'not seen' : 'uncertain'}: the same peaks as ${rivalName}, needing its cell changed by ${mine.percent.toFixed(2)} % per edge (rms; volume ${signed(mine.volumePercent, 2)} %) from its reference ` +
    `where ${rivalName} needs ${theirs.percent.toFixed(2)} % (volume ${signed(theirs.volumePercent, 2)} %; each refined alone under the sample's shift)` +
    (lines ? `, with ${lines.mine} lines matched against ${lines.theirs}` : '') +
    (significant ? '' : '; indistinguishable at this resolution')
  );
}
