/**
 * A crystallite size for a phase whose every line is overlapped by another phase's: the pattern itself
 * is fitted over windows around the lines, each phase's lines held at the positions of its (refined)
 * cell and the sample's shift, their areas tied to the reference intensities by one scale per phase,
 * and their widths to one crystallite size per phase on top of the instrument profile (size broadening
 * as a Lorentzian of FWHM Kλ/(D·cosθ), Scherrer 1918; strain taken as zero). Each phase's cell may
 * still change by up to 0.3 % and the zero by 0.05°, so that a line position off by a little does not
 * pass for breadth. Two lines at one place
 * cannot be told apart by a free fit, but each phase's lines must follow one width law and one set of
 * relative intensities, and that separates them — the constraint of whole-pattern fitting with
 * intensities held to a structure (Rietveld, J. Appl. Cryst. 2, 65 (1969)). σ comes from the fit's
 * covariance (scales, sizes, cell changes, zero and the windows' background terms together), scaled by
 * the reduced χ² where that is above 1, with the instrument profile's uncertainty added (a second fit
 * with the instrument 1σ broader).
 */
import type { Wavelength } from '../model/wavelengths.js';
import { lowerBound } from '../model/sorted.js';
import { DEG_TO_RAD } from '../model/units.js';
import { choleskyFactor, choleskySolve } from '../numeric/cholesky.js';
import { LevenbergMarquardt } from '../numeric/levenberg-marquardt.js';
import { FOUR_LN2, thompsonCoxHastings, thompsonCoxHastingsWithDerivatives } from '../process/profiles.js';
import { partnerTwoThetaDeg } from '../process/kalpha2.js';
import type { InstrumentProfile } from './instrument.js';
import { instrumentWidthAt } from './instrument-width.js';
import { scherrerBreadthDeg } from './scherrer.js';
import { PHI_GAUSSIAN, PHI_LORENTZIAN, voigtParts, type BreadthKind } from './voigt.js';

export interface GroupFitPhase {
  name: string;
  /** Kα1 positions after the sample's shift, degrees 2θ, with the reference's relative intensities. */
  lines: ReadonlyArray<{ twoThetaDeg: number; intensity: number }>;
  /** Start values: integrated intensity per unit of reference intensity, and size (nm). */
  startScale: number;
  startSizeNm: number;
}

export interface GroupFitInput {
  x: Float64Array;
  y: Float64Array;
  background: Float64Array;
  /** Variance of each count (counting statistics, or the file's σ²). */
  variance: Float64Array;
  wavelength: Wavelength;
  instrument: Pick<InstrumentProfile, 'caglioti' | 'cagliotiCovariance' | 'eta' | 'etaCovariance' | 'twoThetaRangeDeg'>;
  k: number;
  breadth: BreadthKind;
  /** The phase to size first, then the phases that overlap it. */
  phases: readonly GroupFitPhase[];
  /** Where the line positions came from, in words for the statement (default "the phases' cells"). */
  positionsFrom?: string;
  /** Lines below this share of their phase's strongest are left out of the windows (default 0.03). */
  minLineShare?: number;
}

export interface GroupFitSize {
  method: 'constrained-group-fit';
  phase: string;
  sizeNm: number;
  /** Standard uncertainty: the fit's own (from its covariance) and the instrument profile's, together. */
  sizeSigmaNm: number;
  sizeSigmaFitNm: number;
  /** The other phases' sizes fitted beside it. */
  others: Array<{ name: string; sizeNm: number; sizeSigmaNm: number; sizeSigmaFitNm: number }>;
  windows: Array<{ fromDeg: number; toDeg: number }>;
  /** Lines of the sized phase inside the windows. */
  linesFitted: number;
  points: number;
  reducedChi2: number;
  convention: string;
  statement: string;
}

export type GroupFitOutcome = GroupFitSize | { reason: string };

/** Sizes the fit may take, nm (beyond the upper one the lines are the instrument's). */
const SIZE_RANGE_NM: [number, number] = [1, 2000];
/** A window reaches this many FWHM either side of a line. */
const WINDOW_FWHM = 3;
/** A line's profile is evaluated out to this many FWHM (beyond, a Lorentzian tail is below 1/900 of its height and the windows' background terms take up the rest). */
const REACH_FWHM = 15;
/** Other phases' lines from this share of their strongest get windows of their own (they pin that phase's size). */
const OTHER_WINDOW_SHARE = 0.2;
/** Above this relative σ the size is not worth quoting. */
const MAX_RELATIVE_SIGMA = 0.5;
/** The fit may move each phase's cell by this relative amount and the zero by this much (degrees 2θ) from where the match put them. */
const MAX_CELL_CHANGE = 0.003;
const MAX_ZERO_DEG = 0.05;
/** One phase's profile at the fitted points and its derivatives by ln D, by the cell change and by the zero offset. */
interface PhaseColumns {
  profile: Float64Array;
  bySize: Float64Array;
  byCell: Float64Array;
  byZero: Float64Array;
}

interface PreparedLine {
  phase: number;
  twoThetaDeg: number;
  intensity: number;
  /** The instrument's Gaussian and Lorentzian FWHM there, degrees 2θ. */
  gaussianFwhm: number;
  lorentzianFwhm: number;
  /** Kα2 partner position, or NaN without one. */
  partnerDeg: number;
  /** The instrument FWHM's relative standard uncertainty there. */
  relativeSigma: number;
}

/** Fit the phases' sizes over windows around the first phase's lines (and the others' strong ones). */
export function constrainedGroupFit(input: GroupFitInput): GroupFitOutcome {
  const { x, y, background, variance, wavelength, instrument, k, breadth, phases } = input;
  if (phases.length < 2) return { reason: 'a constrained group fit needs the sized phase and at least one phase that overlaps it' };
  const lambda = wavelength.lambda1;
  const [xMin, xMax] = [x[0], x[x.length - 1]];
  const lines: PreparedLine[] = [];
  phases.forEach((phase, p) => {
    for (const line of phase.lines) {
      if (!(line.intensity > 0) || line.twoThetaDeg < xMin - 2 || line.twoThetaDeg > xMax + 2) continue;
      const inst = instrumentWidthAt(instrument, line.twoThetaDeg);
      const parts = voigtParts(inst.breadths);
      lines.push({
        phase: p,
        twoThetaDeg: line.twoThetaDeg,
        intensity: line.intensity,
        gaussianFwhm: parts.gaussian * PHI_GAUSSIAN,
        lorentzianFwhm: parts.lorentzian * PHI_LORENTZIAN,
        partnerDeg: wavelength.lambda2 ? partnerTwoThetaDeg(line.twoThetaDeg, lambda, wavelength.lambda2) : Number.NaN,
        relativeSigma: inst.fwhm > 0 ? inst.fwhmSigma / inst.fwhm : 0,
      });
    }
  });
  // The sample's Lorentzian FWHM: the Scherrer breadth of the stated kind (a Lorentzian's FWHM is 2/π of its integral breadth).
  const sizeFwhm = (line: PreparedLine, sizeNm: number): number => {
    const w = scherrerBreadthDeg(sizeNm, line.twoThetaDeg, lambda, k);
    return breadth === 'fwhm' ? w : w * PHI_LORENTZIAN;
  };
  const profileOf = (line: PreparedLine, sizeNm: number) => thompsonCoxHastings(line.gaussianFwhm, line.lorentzianFwhm + sizeFwhm(line, sizeNm));

  // Windows: around every usable line of the sized phase, and the other phases' strong lines.
  const minShare = input.minLineShare ?? 0.03;
  const strongest = phases.map((_, p) => Math.max(0, ...lines.filter((l) => l.phase === p).map((l) => l.intensity)));
  const spans: Array<[number, number]> = [];
  for (const line of lines) {
    const share = line.intensity / strongest[line.phase];
    if (line.twoThetaDeg < xMin || line.twoThetaDeg > xMax || share < (line.phase === 0 ? minShare : OTHER_WINDOW_SHARE)) continue;
    const reach = WINDOW_FWHM * profileOf(line, phases[line.phase].startSizeNm).fwhm;
    const to = Number.isFinite(line.partnerDeg) ? Math.max(line.twoThetaDeg, line.partnerDeg) : line.twoThetaDeg;
    spans.push([Math.max(xMin, line.twoThetaDeg - reach), Math.min(xMax, to + reach)]);
  }
  spans.sort((a, b) => a[0] - b[0]);
  const windows: Array<[number, number]> = [];
  for (const s of spans) {
    const last = windows[windows.length - 1];
    if (last && s[0] <= last[1]) last[1] = Math.max(last[1], s[1]);
    else windows.push([s[0], s[1]]);
  }
  const sizedLines = lines.filter((l) => l.phase === 0 && windows.some(([a, b]) => l.twoThetaDeg >= a && l.twoThetaDeg <= b)).length;
  if (sizedLines === 0) return { reason: `no line of ${phases[0].name} lies in the scanned range` };

  // The points in the windows, with the window each belongs to.
  const index: number[] = [];
  const windowOf: number[] = [];
  windows.forEach(([a, b], w) => {
    for (let i = lowerBound(x, a); i < x.length && x[i] <= b; i++) {
      index.push(i);
      windowOf.push(w);
    }
  });
  const n = index.length;
  const P = phases.length;
  const W = windows.length;
  // Parameters: per phase a scale, ln D and a relative cell change δ (d → d·(1 + δ)); one zero offset;
  // per window an offset and a slope of the background correction.
  const SCALE = 0;
  const LOG_SIZE = P;
  const CELL = 2 * P;
  const ZERO = 3 * P;
  const BACKGROUND = 3 * P + 1;
  const count = BACKGROUND + 2 * W;
  if (n <= count + 5) return { reason: 'too few points in the fitted windows' };
  const centre = windows.map(([a, b]) => (a + b) / 2);
  const px = Float64Array.from(index, (i) => x[i]);
  const net = Float64Array.from(index, (i) => y[i] - background[i]);
  const weight = Float64Array.from(index, (i) => 1 / Math.max(variance[i], 1e-12));
  // The lines near the windows, per phase.
  const near = phases.map((_, p) =>
    lines.filter((l) => l.phase === p && windows.some(([a, b]) => {
      const reach = REACH_FWHM * profileOf(l, SIZE_RANGE_NM[0] * 5).fwhm;
      return l.twoThetaDeg + reach >= a && l.twoThetaDeg - reach <= b;
    })),
  );

  /**
   * One phase's unit-scale line profiles (Kα1 + Kα2) at the fitted points, its lines moved by the cell
   * change δ (Δ2θ = −2δ·tanθ, from Bragg's law) and the zero offset, with the instrument widened by
   * `widen` σ; and, written out, their derivatives by ln D, by δ and by the zero offset.
   */
  const phaseProfile = (p: number, sizeNm: number, cell: number, zero: number, widen: number, out: PhaseColumns): void => {
    out.profile.fill(0);
    out.bySize.fill(0);
    out.byCell.fill(0);
    out.byZero.fill(0);
    for (const line of near[p]) {
      const grow = 1 + widen * line.relativeSigma;
      const sample = sizeFwhm(line, sizeNm);
      const mix = thompsonCoxHastingsWithDerivatives(line.gaussianFwhm * grow, line.lorentzianFwhm * grow + sample);
      // ∂/∂ln D of the sample's Lorentzian width is −width (width ∝ 1/D).
      const dFwhm = -sample * mix.dFwhmDLorentzian;
      const dEta = -sample * mix.dEtaDLorentzian;
      const reach = REACH_FWHM * mix.fwhm;
      for (const [at, area] of [[line.twoThetaDeg, line.intensity], [line.partnerDeg, wavelength.ratio * line.intensity]] as const) {
        if (!Number.isFinite(at)) continue;
        const centre = at + zero - (2 * cell * Math.tan((at / 2) * DEG_TO_RAD)) / DEG_TO_RAD;
        const dCentreDCell = (-2 * Math.tan((at / 2) * DEG_TO_RAD)) / DEG_TO_RAD;
        addLine(out, centre, area, mix.fwhm, mix.eta, dFwhm, dEta, dCentreDCell, reach);
      }
    }
  };
  /** Add area × a unit-area pseudo-Voigt centred at `centre`, with its derivatives, over the points within reach (px ascending). */
  const addLine = (out: PhaseColumns, centre: number, area: number, fwhm: number, eta: number, dFwhm: number, dEta: number, dCentreDCell: number, reach: number): void => {
    const lorentzNorm = PHI_LORENTZIAN / fwhm;
    const gaussNorm = PHI_GAUSSIAN / fwhm;
    for (let q = lowerBound(px, centre - reach); q < n && px[q] < centre + reach; q++) {
      const u = (px[q] - centre) / fwhm;
      const u2 = u * u;
      const denominator = 1 + 4 * u2;
      const l = lorentzNorm / denominator;
      const g = gaussNorm * Math.exp(-FOUR_LN2 * u2);
      const value = eta * l + (1 - eta) * g;
      // ∂/∂Γ at fixed position: L·(8u²/(1+4u²) − 1)/Γ and G·(8 ln2·u² − 1)/Γ; ∂/∂x: −8u·L/((1+4u²)Γ) and −8 ln2·u·G/Γ.
      const dGamma = (eta * l * ((8 * u2) / denominator - 1) + (1 - eta) * g * (2 * FOUR_LN2 * u2 - 1)) / fwhm;
      const dX = -(eta * l * (8 * u) / denominator + (1 - eta) * g * 2 * FOUR_LN2 * u) / fwhm;
      out.profile[q] += area * value;
      out.bySize[q] += area * (dGamma * dFwhm + (l - g) * dEta);
      // Moving the centre by +c moves the profile: ∂f/∂centre = −∂f/∂x.
      out.byCell[q] -= area * dX * dCentreDCell;
      out.byZero[q] -= area * dX;
    }
  };

  const params = new Float64Array(count);
  phases.forEach((phase, p) => {
    params[SCALE + p] = Math.max(phase.startScale, 1e-9);
    params[LOG_SIZE + p] = Math.log(Math.min(SIZE_RANGE_NM[1] / 2, Math.max(SIZE_RANGE_NM[0] * 2, phase.startSizeNm)));
  });
  const lower = new Float64Array(count).fill(-Infinity);
  const upper = new Float64Array(count).fill(Infinity);
  const approachLower = new Uint8Array(count);
  for (let p = 0; p < P; p++) {
    lower[SCALE + p] = 0;
    approachLower[SCALE + p] = 1;
    lower[LOG_SIZE + p] = Math.log(SIZE_RANGE_NM[0]);
    upper[LOG_SIZE + p] = Math.log(SIZE_RANGE_NM[1]);
    lower[CELL + p] = -MAX_CELL_CHANGE;
    upper[CELL + p] = MAX_CELL_CHANGE;
  }
  lower[ZERO] = -MAX_ZERO_DEG;
  upper[ZERO] = MAX_ZERO_DEG;

  const columns: PhaseColumns[] = phases.map(() => ({ profile: new Float64Array(n), bySize: new Float64Array(n), byCell: new Float64Array(n), byZero: new Float64Array(n) }));
  let widen = 0;
  const jacobianRow = new Float64Array(count);
  const target = {
    evaluate(v: Float64Array, normal: Float64Array, gradient: Float64Array): number {
      for (let p = 0; p < P; p++) phaseProfile(p, Math.exp(v[LOG_SIZE + p]), v[CELL + p], v[ZERO], widen, columns[p]);
      normal.fill(0, 0, count * count);
      gradient.fill(0, 0, count);
      let chi2 = 0;
      for (let q = 0; q < n; q++) {
        const w = windowOf[q];
        const dx = px[q] - centre[w];
        let model = v[BACKGROUND + 2 * w] + v[BACKGROUND + 2 * w + 1] * dx;
        jacobianRow.fill(0);
        let byZero = 0;
        for (let p = 0; p < P; p++) {
          const c = columns[p];
          const scale = v[SCALE + p];
          model += scale * c.profile[q];
          jacobianRow[SCALE + p] = c.profile[q];
          jacobianRow[LOG_SIZE + p] = scale * c.bySize[q];
          jacobianRow[CELL + p] = scale * c.byCell[q];
          byZero += scale * c.byZero[q];
        }
        jacobianRow[ZERO] = byZero;
        jacobianRow[BACKGROUND + 2 * w] = 1;
        jacobianRow[BACKGROUND + 2 * w + 1] = dx;
        const r = net[q] - model;
        const wq = weight[q];
        chi2 += wq * r * r;
        for (let a = 0; a < count; a++) {
          const ja = jacobianRow[a];
          if (ja === 0) continue;
          gradient[a] += wq * ja * r;
          for (let b = 0; b < count; b++) normal[a * count + b] += wq * ja * jacobianRow[b];
        }
      }
      return chi2;
    },
  };
  const solver = new LevenbergMarquardt();
  const fitOptions = { lower, upper, approachLower, maxIterations: 60, relativeTolerance: 1e-7 };
  const normal = new Float64Array(count * count);
  const gradient = new Float64Array(count);
  const { chi2 } = solver.minimise(target, params, count, fitOptions);
  target.evaluate(params, normal, gradient);
  const dof = n - count;
  const reducedChi2 = chi2 / dof;
  const covarianceDiagonal = inverseDiagonal(normal, count);
  if (!covarianceDiagonal) return { reason: 'the constrained group fit could not separate the phases (its normal matrix is singular)' };
  const inflate = Math.max(1, reducedChi2);
  const fitted = Float64Array.from(params);
  // The instrument profile's own uncertainty: the fit again with the instrument's widths 1σ broader.
  widen = 1;
  const widened = Float64Array.from(fitted);
  solver.minimise(target, widened, count, fitOptions);
  widen = 0;
  const sizeOf = (p: number) => {
    const sizeNm = Math.exp(fitted[LOG_SIZE + p]);
    const fitSigma = sizeNm * Math.sqrt(covarianceDiagonal[LOG_SIZE + p] * inflate);
    const instrumentSigma = Math.abs(Math.exp(widened[LOG_SIZE + p]) - sizeNm);
    return { sizeNm, sizeSigmaNm: Math.hypot(fitSigma, instrumentSigma), sizeSigmaFitNm: fitSigma };
  };
  const sized = sizeOf(0);
  const scaleSigma = Math.sqrt(covarianceDiagonal[SCALE] * inflate);
  const name = phases[0].name;
  const atBound = fitted[LOG_SIZE] <= lower[LOG_SIZE] + 1e-6 || fitted[LOG_SIZE] >= upper[LOG_SIZE] - 1e-6;
  if (!(fitted[SCALE] > 2 * scaleSigma)) return { reason: `even a constrained group fit finds the lines of ${name} no stronger than twice their uncertainty there` };
  if (atBound) return { reason: `even a constrained group fit puts the size of ${name} at the edge of what the widths can tell (${SIZE_RANGE_NM[0]}–${SIZE_RANGE_NM[1]} nm)` };
  if (!(sized.sizeSigmaNm < MAX_RELATIVE_SIGMA * sized.sizeNm)) {
    return { reason: `even a constrained group fit leaves the size of ${name} uncertain by more than ${100 * MAX_RELATIVE_SIGMA} % (${sized.sizeNm.toPrecision(3)} ± ${sized.sizeSigmaNm.toPrecision(2)} nm)` };
  }
  const others = phases.slice(1).map((phase, i) => ({ name: phase.name, ...sizeOf(i + 1) }));
  const w = breadth === 'fwhm' ? 'FWHM' : 'integral breadth';
  return {
    method: 'constrained-group-fit',
    phase: name,
    ...sized,
    others,
    windows: windows.map(([fromDeg, toDeg]) => ({ fromDeg, toDeg })),
    linesFitted: sizedLines,
    points: n,
    reducedChi2,
    convention: `size D = Kλ/(w·cosθ) with K = ${k} and w the ${w} of a Lorentzian size broadening added to the instrument profile; strain taken as zero; line areas held to the reference intensities, one scale per phase`,
    statement:
      `${sized.sizeNm.toPrecision(3)} ± ${sized.sizeSigmaNm.toPrecision(2)} nm from a constrained group fit of ${sizedLines} overlapped line(s) of ${name} ` +
      `beside ${others.map((o) => `${o.name} (${o.sizeNm.toPrecision(3)} nm)`).join(', ')}, positions from ${input.positionsFrom ?? "the phases' cells"}, reduced χ² ${reducedChi2.toFixed(2)}`,
  };
}

/** Diagonal of the inverse of a symmetric positive-definite matrix, or null when it is singular. */
function inverseDiagonal(matrix: Float64Array, n: number): Float64Array | null {
  const factor = Float64Array.from(matrix);
  if (!choleskyFactor(factor, n)) return null;
  const out = new Float64Array(n);
  const column = new Float64Array(n);
  for (let a = 0; a < n; a++) {
    column.fill(0);
    column[a] = 1;
    choleskySolve(factor, n, column);
    out[a] = column[a];
  }
  return out;
}
