/**
 * One sample shift and the refined cells of the phases that explain a pattern, in one weighted
 * least-squares fit of the matched peak positions:
 *
 *   2θ_calc = 2·asin(λ·√Q(hkl; cell_p) / 2) + Z + D·cosθ,   Q = 1/d² = hᵀG*h
 *
 * (Z the zero offset, D the specimen-displacement coefficient; Δ2θ = −2s·cosθ/R for a displacement s
 * on a goniometer of radius R, Klug & Alexander, X-ray Diffraction Procedures, 2nd ed. 1974, from
 * memory). Residuals are taken in 2θ with weights 1/σ²(2θ) from each peak's fitted position σ; to
 * first order this is least squares on 1/d² with σ(Q) = 2 sin2θ/λ² · σ(2θ). Cell parameters are the
 * crystal system's free ones (cell-parameters.ts); lines without indices or a phase without a cell
 * take part with fixed positions (they still define the shift). Gauss–Newton with the bounds applied
 * after each step; σ from the covariance scaled by the reduced χ² where there are degrees of freedom.
 *
 * Zero and displacement are always refined together (where the scan gives lines enough), with the
 * bounds taken as what is known beforehand: a term anywhere within ±bound has σ = bound/√3 (a uniform
 * distribution), entered as a Gaussian prior about 0 (pseudo-observations in the fit itself, so that
 * the values and their σ are those of one posterior; a regularised least squares, common practice).
 * Where the lines fix a term this changes nothing; where zero, displacement and cell are nearly
 * collinear, the term stays within what the bound says and the cells' σ include its uncertainty.
 */
import type { UnitCell } from '../model/cell.js';
import { cellMetric, inverseDSquared } from '../crystal/metric.js';
import { weightedLinearFit } from '../numeric/numeric.js';
import { DEG_TO_RAD } from '../model/units.js';
import { cellParameterisation, type CellParameterisation, type CellParameterName } from './cell-parameters.js';
import type { PeakTable } from './peak-table.js';
import type { PhaseLines } from './score.js';
import type { MatchShift } from './types.js';

const RAD_TO_DEG = 180 / Math.PI;

/** Smallest position σ used as a weight, degrees 2θ (a fit's σ below this is not believed). */
const SIGMA_FLOOR_DEG = 1e-4;
/** Lines of one phase on one peak count as one line when their d agree this closely (relative). */
const SAME_D = 1e-4;
const ITERATIONS = 20;

export interface SampleFitPhase {
  lines: PhaseLines;
  /** Per line: matched peak or -1 (from evaluatePhase). */
  peakOf: Int32Array;
  /** The reference's own cell (bounds and changes are relative to it), or null. */
  referenceCell: UnitCell | null;
  /** The cell the lines were computed from (the reference's, or last round's refined one). */
  currentCell: UnitCell | null;
  /**
   * Cells of other references of the same structure type (solid-solution end members): the bounds
   * reach from the smallest to the largest of these and the reference's, widened by the cell bound.
   */
  span?: readonly UnitCell[];
}

export interface SampleFitOptions {
  lambda: number;
  start: MatchShift;
  maxZeroDeg: number;
  maxDisplacementDeg: number;
  /** Each refined cell edge (and angle) stays within this fraction of the reference's (0.02: ±2 %). */
  cellBound: number;
  /** Keep the start shift fixed and refine the cells only (to compare look-alikes under the sample's shift). */
  fixedShift?: boolean;
  /** A zero offset measured on a standard: held there, and only the displacement (and the cells) refined. */
  fixedZeroDeg?: number;
}

export interface CellFit {
  cell: UnitCell;
  /** σ per cell parameter (0 for one fixed by symmetry). */
  sigma: Record<CellParameterName, number>;
  volume: number;
  volumeSigma: number;
  free: CellParameterName[];
  /** Resolved, indexed lines the cell was refined from. */
  linesUsed: number;
  /** Parameters that ended at their bound. */
  atBound: CellParameterName[];
}

export interface SampleFit {
  shift: MatchShift;
  zeroSigmaDeg: number | null;
  displacementSigmaDeg: number | null;
  /** Peaks used (one line of one phase on each). */
  linesUsed: number;
  /** Per phase: its refined cell, or a sentence saying why none was refined. */
  cells: Array<CellFit | string>;
  zeroAtBound: boolean;
  displacementAtBound: boolean;
  /** True when the zero was held at a value measured on a standard (then zeroSigmaDeg is null). */
  zeroFixed: boolean;
  /**
   * The σ the bounds alone give each shift term (a value anywhere within ±bound: bound/√3), degrees;
   * a refined σ near it means the lines do not determine that term (see SHIFT_DETERMINED_SHARE).
   */
  zeroPriorSigmaDeg: number;
  displacementPriorSigmaDeg: number;
}

interface Observation {
  phase: number;
  /** hkl for a refinable line, else null (fixed position). */
  hkl: [number, number, number] | null;
  fixedTwoTheta: number;
  observed: number;
  cosTheta: number;
  weight: number;
}

interface Layout {
  withDisplacement: boolean;
  /** False when the shift is fixed (then neither zero nor displacement is a parameter). */
  withZero: boolean;
  /** Per phase: offset of its cell parameters in the vector, or -1 when its cell is fixed. */
  cellOffset: number[];
  size: number;
}

export function fitSampleAndCells(phases: readonly SampleFitPhase[], table: PeakTable, given: SampleFitOptions): SampleFit {
  const observations = collectObservations(phases, table);
  // A fixed shift is taken off the observations and is no parameter: the cells' σ are then those of a comparison under one shift.
  if (given.fixedShift) for (const o of observations) o.observed -= given.start.zeroDeg + given.start.displacementCosDeg * o.cosTheta;
  else if (given.fixedZeroDeg !== undefined) for (const o of observations) o.observed -= given.fixedZeroDeg;
  const options: SampleFitOptions = given.fixedShift
    ? { ...given, start: { zeroDeg: 0, displacementCosDeg: 0 }, maxZeroDeg: 0, maxDisplacementDeg: 0 }
    : given.fixedZeroDeg !== undefined
      ? { ...given, start: { zeroDeg: 0, displacementCosDeg: given.start.displacementCosDeg }, maxZeroDeg: 0 }
      : given;
  const param: Array<CellParameterisation | null> = phases.map((p) => (p.referenceCell && p.currentCell ? cellParameterisation(p.referenceCell) : null));
  const cells: Array<CellFit | string> = phases.map((p) => (p.referenceCell ? '' : 'no cell refined: the reference gives no unit cell'));
  // A cell is refined only from more resolved indexed lines than it has free parameters (plus the shift's two).
  const refinable = phases.map((p, i) => {
    const par = param[i];
    if (!par) return false;
    const indexed = observations.filter((o) => o.phase === i && o.hkl).length;
    if (indexed < par.names.length + 2) {
      cells[i] = `no cell refined: ${indexed} resolved line(s) with indices, ${par.names.length + 2} needed for ${par.names.length} cell parameter(s) beside the shift`;
      return false;
    }
    return true;
  });
  for (const o of observations) if (!refinable[o.phase]) o.hkl = null;

  const layoutOf = (withDisplacement: boolean): Layout => {
    const withZero = !given.fixedShift && given.fixedZeroDeg === undefined;
    let size = (withZero ? 1 : 0) + (withDisplacement ? 1 : 0);
    const cellOffset = phases.map((_, i) => {
      if (!refinable[i]) return -1;
      const offset = size;
      size += param[i]!.names.length;
      return offset;
    });
    return { withDisplacement, withZero, cellOffset, size };
  };
  const canDisplace = options.maxDisplacementDeg > 0 && observations.length >= 4;
  const zeroPrior = options.maxZeroDeg / Math.sqrt(3);
  const displacementPrior = options.maxDisplacementDeg / Math.sqrt(3);
  const priors = { zeroDeg: zeroPrior, displacementDeg: displacementPrior };
  const layout = layoutOf(canDisplace);
  // A line matched to the wrong peak would pull the whole fit: one robust rejection pass (see rejectOutliers).
  const first = runFit(observations, phases, param, layout, options, priors);
  if (first) rejectOutliers(observations, first);
  const chosen = runFit(observations, phases, param, layout, options, priors);
  const linesUsed = observations.length;
  if (!chosen || observations.length === 0) {
    for (let i = 0; i < phases.length; i++) if (refinable[i]) cells[i] = 'no cell refined: the position fit failed';
    return {
      shift: given.fixedShift ? given.start : { zeroDeg: given.fixedZeroDeg ?? options.start.zeroDeg, displacementCosDeg: options.start.displacementCosDeg },
      zeroSigmaDeg: null, displacementSigmaDeg: null, linesUsed, cells, zeroAtBound: false, displacementAtBound: false,
      zeroFixed: given.fixedZeroDeg !== undefined && !given.fixedShift,
      zeroPriorSigmaDeg: zeroPrior,
      displacementPriorSigmaDeg: displacementPrior,
    };
  }
  const { x, covariance } = chosen;
  const sigmaOf = (i: number): number => Math.sqrt(Math.max(covariance[i * layout.size + i], 0));
  phases.forEach((phase, i) => {
    const offset = layout.cellOffset[i];
    if (offset < 0) return;
    const par = param[i]!;
    const values = Array.from(x.subarray(offset, offset + par.names.length));
    const cell = par.toCell(values);
    const block = new Float64Array(par.names.length ** 2);
    for (let r = 0; r < par.names.length; r++) for (let c = 0; c < par.names.length; c++) block[r * par.names.length + c] = covariance[(offset + r) * layout.size + offset + c];
    cells[i] = describeCell(cell, par, values, block, parameterRange(par, phase, options.cellBound), observations.filter((o) => o.phase === i && o.hkl).length);
  });
  const zero = layout.withZero ? x[0] : 0;
  const displacement = layout.withDisplacement ? x[displacementIndex(layout)] : 0;
  return {
    shift: given.fixedShift ? given.start : { zeroDeg: given.fixedZeroDeg ?? zero, displacementCosDeg: displacement },
    zeroSigmaDeg: layout.withZero ? sigmaOf(0) : null,
    displacementSigmaDeg: layout.withDisplacement ? sigmaOf(displacementIndex(layout)) : null,
    zeroFixed: given.fixedZeroDeg !== undefined && !given.fixedShift,
    zeroPriorSigmaDeg: zeroPrior,
    displacementPriorSigmaDeg: displacementPrior,
    linesUsed,
    cells,
    zeroAtBound: Math.abs(zero) >= options.maxZeroDeg - 1e-12 && options.maxZeroDeg > 0,
    displacementAtBound: layout.withDisplacement && Math.abs(displacement) >= options.maxDisplacementDeg - 1e-12,
  };
}

/** One observation per peak that exactly one phase's line (or its coincident lines of equal d) explains. */
function collectObservations(phases: readonly SampleFitPhase[], table: PeakTable): Observation[] {
  const owners = new Map<number, Array<{ phase: number; line: number }>>();
  phases.forEach((p, i) => {
    for (let j = 0; j < p.lines.count; j++) {
      const k = p.peakOf[j];
      if (k < 0) continue;
      const list = owners.get(k) ?? [];
      list.push({ phase: i, line: j });
      owners.set(k, list);
    }
  });
  const out: Observation[] = [];
  for (const [k, list] of owners) {
    const first = list[0];
    const lines = phases[first.phase].lines;
    const d0 = lines.reference.lines[lines.lineIndex[first.line]].d;
    const single = list.every((o) => o.phase === first.phase && Math.abs(lines.reference.lines[lines.lineIndex[o.line]].d - d0) <= SAME_D * d0);
    if (!single) continue;
    const sigma = table.peaks[k].twoThetaSigma;
    const s = Number.isFinite(sigma) && sigma > 0 ? Math.max(sigma, SIGMA_FLOOR_DEG) : table.window[k] / 3;
    out.push({
      phase: first.phase,
      hkl: lines.reference.lines[lines.lineIndex[first.line]].hkl ?? null,
      fixedTwoTheta: lines.twoTheta[first.line],
      observed: table.twoTheta[k],
      cosTheta: table.cosTheta[k],
      weight: 1 / (s * s),
    });
  }
  return out.sort((a, b) => a.observed - b.observed);
}

interface FitResult {
  x: Float64Array;
  covariance: Float64Array;
  chi2: number;
  dof: number;
  layout: Layout;
  /** Normalised residuals (obs − calc)·√w per observation, and obs − calc in degrees. */
  normalised: Float64Array;
  residualDeg: Float64Array;
}

/** A line is an outlier beyond this many robust standard deviations of the normalised residuals (common practice: 4–5). */
const OUTLIER_SCATTER = 5;
/** …and only when it is off by more than this, degrees 2θ (below it the residual is no sign of a wrong match). */
const OUTLIER_MIN_DEG = 0.005;

/**
 * Drop observations whose normalised residual exceeds OUTLIER_SCATTER robust standard deviations
 * (1.4826·median |z|, the MAD estimate; Rousseeuw & Croux, JASA 88, 1273 (1993), from memory),
 * at least 1: a line matched to a neighbouring peak rather than its own.
 */
function rejectOutliers(observations: Observation[], fit: FitResult): void {
  const z = Array.from(fit.normalised, Math.abs).sort((a, b) => a - b);
  if (z.length < 5) return;
  const scatter = Math.max(1, 1.4826 * z[z.length >> 1]);
  const keep = observations.filter((_, i) => !(Math.abs(fit.normalised[i]) > OUTLIER_SCATTER * scatter && Math.abs(fit.residualDeg[i]) > OUTLIER_MIN_DEG));
  observations.splice(0, observations.length, ...keep);
}

function runFit(
  observations: Observation[],
  phases: readonly SampleFitPhase[],
  param: Array<CellParameterisation | null>,
  layout: Layout,
  options: SampleFitOptions,
  /** Prior σ of the shift terms, degrees (see the module comment); 0 leaves a term without one. */
  priors: { zeroDeg: number; displacementDeg: number },
): FitResult | null {
  const n = observations.length;
  const p = layout.size;
  if (n < p) return null;
  const priorRows: Array<{ index: number; sigma: number }> = [];
  if (layout.withZero && priors.zeroDeg > 0) priorRows.push({ index: 0, sigma: priors.zeroDeg });
  if (layout.withDisplacement && priors.displacementDeg > 0) priorRows.push({ index: displacementIndex(layout), sigma: priors.displacementDeg });
  const rows = n + priorRows.length;
  const x = new Float64Array(p);
  const lower = new Float64Array(p);
  const upper = new Float64Array(p);
  if (layout.withZero) {
    x[0] = clamp(options.start.zeroDeg, -options.maxZeroDeg, options.maxZeroDeg);
    lower[0] = -options.maxZeroDeg;
    upper[0] = options.maxZeroDeg;
  }
  if (layout.withDisplacement) {
    const at = displacementIndex(layout);
    x[at] = clamp(options.start.displacementCosDeg, -options.maxDisplacementDeg, options.maxDisplacementDeg);
    lower[at] = -options.maxDisplacementDeg;
    upper[at] = options.maxDisplacementDeg;
  }
  phases.forEach((phase, i) => {
    const offset = layout.cellOffset[i];
    if (offset < 0) return;
    const par = param[i]!;
    const current = par.fromCell(phase.currentCell!);
    const range = parameterRange(par, phase, options.cellBound);
    par.names.forEach((_, q) => {
      lower[offset + q] = range.lower[q];
      upper[offset + q] = range.upper[q];
      x[offset + q] = clamp(current[q], lower[offset + q], upper[offset + q]);
    });
  });

  const design = new Float64Array(rows * p);
  const residual = new Float64Array(rows);
  const weights = new Float64Array(rows);
  for (let i = 0; i < n; i++) weights[i] = observations[i].weight;
  // The data's scale (reduced χ²) so far: prior rows are weighted against the data's real scatter, not its nominal σ.
  let scale = 1;
  const model = (values: Float64Array, o: Observation): number => {
    const shift = (layout.withZero ? values[0] : 0) + (layout.withDisplacement ? values[displacementIndex(layout)] * o.cosTheta : 0);
    const offset = layout.cellOffset[o.phase];
    if (offset < 0 || !o.hkl) return o.fixedTwoTheta + shift;
    const par = param[o.phase]!;
    return braggTwoTheta(par.toCell(values.subarray(offset, offset + par.names.length)), o.hkl, options.lambda) + shift;
  };
  let fit = null as ReturnType<typeof weightedLinearFit>;
  for (let iteration = 0; iteration < ITERATIONS; iteration++) {
    design.fill(0);
    for (let i = 0; i < n; i++) {
      const o = observations[i];
      const at = model(x, o);
      residual[i] = o.observed - at;
      if (layout.withZero) design[i * p] = 1;
      if (layout.withDisplacement) design[i * p + displacementIndex(layout)] = o.cosTheta;
      const offset = layout.cellOffset[o.phase];
      if (offset < 0 || !o.hkl) continue;
      for (let q = 0; q < param[o.phase]!.names.length; q++) {
        const step = 1e-6 * Math.abs(x[offset + q]);
        const saved = x[offset + q];
        x[offset + q] = saved + step;
        const plus = model(x, o);
        x[offset + q] = saved - step;
        const minus = model(x, o);
        x[offset + q] = saved;
        design[i * p + offset + q] = (plus - minus) / (2 * step);
      }
    }
    priorRows.forEach((row, r) => {
      design[(n + r) * p + row.index] = 1;
      residual[n + r] = -x[row.index];
      weights[n + r] = scale / (row.sigma * row.sigma);
    });
    fit = weightedLinearFit(design, residual, weights, p);
    if (!fit) return null;
    let moved = 0;
    for (let q = 0; q < p; q++) {
      const next = clamp(x[q] + fit.coefficients[q], lower[q], upper[q]);
      moved = Math.max(moved, Math.abs(next - x[q]) / Math.max(1, Math.abs(x[q])));
      x[q] = next;
    }
    if (moved < 1e-10) break;
    scale = dataScale(observations, x, model, n - p);
  }
  // χ² at the final parameters.
  let chi2 = 0;
  const normalised = new Float64Array(n);
  const residualDeg = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    residualDeg[i] = observations[i].observed - model(x, observations[i]);
    normalised[i] = residualDeg[i] * Math.sqrt(weights[i]);
    chi2 += normalised[i] * normalised[i];
  }
  const dof = n - p;
  // The fit's covariance is (JᵀWJ + s²·P)⁻¹ with s² the data's reduced χ²; times s² it is (JᵀWJ/s² + P)⁻¹.
  const covariance = Float64Array.from(fit!.covariance, (v) => v * scale);
  return { x, covariance, chi2, dof, layout, normalised, residualDeg };
}

/** Residuals below this (degrees 2θ) are rounding, not evidence: the floor of the data's scatter. */
const POSITION_FLOOR_DEG = 1e-5;

/** Reduced χ² of the data at x (1 without degrees of freedom), never below the rounding floor's. */
function dataScale(observations: readonly Observation[], x: Float64Array, model: (values: Float64Array, o: Observation) => number, dof: number): number {
  if (dof <= 0) return 1;
  let chi2 = 0;
  let weights = 0;
  for (const o of observations) {
    chi2 += o.weight * (o.observed - model(x, o)) ** 2;
    weights += o.weight;
  }
  return Math.max(chi2, POSITION_FLOOR_DEG * POSITION_FLOOR_DEG * weights) / dof;
}

function braggTwoTheta(cell: UnitCell, hkl: [number, number, number], lambda: number): number {
  const q = inverseDSquared(cellMetric(cell).gStar, hkl[0], hkl[1], hkl[2]);
  return 2 * Math.asin(Math.min(1, (lambda * Math.sqrt(q)) / 2)) * RAD_TO_DEG;
}

function describeCell(
  cell: UnitCell,
  par: CellParameterisation,
  values: number[],
  covariance: Float64Array,
  range: { lower: number[]; upper: number[] },
  linesUsed: number,
): CellFit {
  const m = par.names.length;
  const sigmaFree = par.names.map((_, q) => Math.sqrt(Math.max(covariance[q * m + q], 0)));
  // Tied parameters carry the σ of the free one they follow; parameters fixed by symmetry have none.
  const sigma = { a: 0, b: 0, c: 0, alpha: 0, beta: 0, gamma: 0 } as Record<CellParameterName, number>;
  for (const name of ['a', 'b', 'c', 'alpha', 'beta', 'gamma'] as const) {
    for (let q = 0; q < m; q++) {
      const bumped = values.slice();
      bumped[q] += 1e-6 * Math.max(Math.abs(values[q]), 1);
      const ratio = (par.toCell(bumped)[name] - cell[name]) / (bumped[q] - values[q]);
      if (Math.abs(ratio) > 0.5) sigma[name] = Math.max(sigma[name], sigmaFree[q]);
    }
  }
  const volume = cellMetric(cell).volume;
  const gradient = par.names.map((_, q) => {
    const step = 1e-6 * Math.max(Math.abs(values[q]), 1);
    const plus = values.slice();
    plus[q] += step;
    const minus = values.slice();
    minus[q] -= step;
    return (cellMetric(par.toCell(plus)).volume - cellMetric(par.toCell(minus)).volume) / (2 * step);
  });
  let variance = 0;
  for (let r = 0; r < m; r++) for (let c = 0; c < m; c++) variance += gradient[r] * covariance[r * m + c] * gradient[c];
  const atBound = par.names.filter((_, q) => values[q] <= range.lower[q] * (1 + 1e-9) || values[q] >= range.upper[q] * (1 - 1e-9));
  return { cell, sigma, volume, volumeSigma: Math.sqrt(Math.max(variance, 0)), free: par.names, linesUsed, atBound };
}

/** Each free parameter's bounds: the reference's value (and its solid-solution partners') widened by the cell bound. */
function parameterRange(par: CellParameterisation, phase: SampleFitPhase, bound: number): { lower: number[]; upper: number[] } {
  const values = [phase.referenceCell!, ...(phase.span ?? [])].map((cell) => par.fromCell(cell));
  const lower = par.names.map((_, q) => Math.min(...values.map((v) => v[q])) * (1 - bound));
  const upper = par.names.map((_, q) => Math.max(...values.map((v) => v[q])) * (1 + bound));
  return { lower, upper };
}

/** Where the displacement sits in the parameter vector: after the zero, when the zero is refined. */
function displacementIndex(layout: Layout): number {
  return layout.withZero ? 1 : 0;
}

function clamp(v: number, lo: number, hi: number): number {
  return Math.max(lo, Math.min(hi, v));
}

/** The cosθ displacement coefficient as a specimen displacement in mm: Δ2θ(rad) = −2s·cosθ/R. */
export function displacementMillimetres(displacementCosDeg: number, radiusMm: number): number {
  return (-displacementCosDeg * DEG_TO_RAD * radiusMm) / 2;
}
