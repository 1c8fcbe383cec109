import { invertSmall } from '../numeric/numeric.js';

/**
 * Semi-quantitative weight fractions by matrix flushing: w_i = (I_i / RIR_i) / Σ_j (I_j / RIR_j),
 * summed over the quantified phases (Chung, J. Appl. Cryst. 7, 519 (1974)). I_i is the phase's
 * measured intensity scale (integrated intensity of its 100 % line), RIR_i its reference intensity
 * ratio I/I_corundum. Phases without an RIR get null ("not quantified").
 *
 * The fractions hold when every crystalline phase is identified and there is no amorphous matter;
 * with an unquantified phase present they are fractions among the quantified phases only.
 */
export function chungWeightFractions(phases: ReadonlyArray<{ scale: number; rir: number | null | undefined }>): Array<number | null> {
  let sum = 0;
  for (const p of phases) if (p.rir && p.rir > 0 && p.scale > 0) sum += p.scale / p.rir;
  return phases.map((p) => (p.rir && p.rir > 0 && p.scale > 0 && sum > 0 ? p.scale / p.rir / sum : null));
}

export interface QuantifiedPhaseInput {
  scale: number;
  /** σ of the scale (from the scale fit's covariance or the peak areas' σ); 0 when unknown. */
  scaleSigma?: number | null;
  rir: number | null | undefined;
  /** σ of the RIR, when known. */
  rirSigma?: number | null;
}

export interface InternalStandard {
  /** Index (in the phases given) of the reference spiked into the sample. */
  index: number;
  /** Weight fraction of the standard in the spiked sample, 0–1, and its σ (weighing). */
  weightFraction: number;
  weightFractionSigma?: number;
}

export interface Quantification {
  /** Chung's matrix-flushing fractions among the quantified phases (the standard excluded), with σ. */
  weightFraction: Array<number | null>;
  weightFractionSigma: Array<number | null>;
  /** With an internal standard: weight fractions of the unspiked sample, with σ (null without one). */
  absoluteFraction: Array<number | null>;
  absoluteFractionSigma: Array<number | null>;
  /** With an internal standard: 1 − Σ absolute crystalline fractions (amorphous and unquantified matter), with σ. */
  amorphous: { fraction: number; sigma: number } | null;
  statement: string;
}

/** σ of f(x) by a central-difference gradient and independent σ of x (first-order propagation). */
function propagated(f: (x: Float64Array) => number, x: Float64Array, sigma: Float64Array): number {
  let variance = 0;
  for (let j = 0; j < x.length; j++) {
    if (!(sigma[j] > 0)) continue;
    const h = 1e-6 * Math.max(Math.abs(x[j]), 1e-12);
    const up = Float64Array.from(x);
    const down = Float64Array.from(x);
    up[j] += h;
    down[j] -= h;
    variance += (((f(up) - f(down)) / (2 * h)) * sigma[j]) ** 2;
  }
  return Math.sqrt(variance);
}

/**
 * Chung's matrix flushing with σ (scale σ and RIR σ propagated to first order), and with an internal
 * standard spiked at a known weight fraction the absolute fractions W_i = W_s·(I_i/RIR_i)/(I_s/RIR_s),
 * referred to the unspiked sample, and the amorphous content 1 − Σ W_i (Chung, J. Appl. Cryst. 7, 519 (1974)).
 */
export function chungQuantification(phases: readonly QuantifiedPhaseInput[], standard?: InternalStandard): Quantification {
  const count = phases.length;
  const quantified = phases.map((p, i) => !!(p.rir && p.rir > 0 && p.scale > 0) && i !== standard?.index);
  // Parameters: scales, RIRs, then the standard's weight fraction.
  const x = new Float64Array(2 * count + 1);
  const sx = new Float64Array(2 * count + 1);
  phases.forEach((p, i) => {
    x[i] = p.scale;
    sx[i] = p.scaleSigma ?? 0;
    x[count + i] = p.rir ?? 0;
    sx[count + i] = p.rirSigma ?? 0;
  });
  x[2 * count] = standard?.weightFraction ?? 0;
  sx[2 * count] = standard?.weightFractionSigma ?? 0;
  const flushed = (i: number) => (v: Float64Array) => {
    let sum = 0;
    for (let j = 0; j < count; j++) if (quantified[j]) sum += v[j] / v[count + j];
    return v[i] / v[count + i] / sum;
  };
  const weightFraction = phases.map((_, i) => (quantified[i] ? flushed(i)(x) : null));
  const weightFractionSigma = phases.map((_, i) => (quantified[i] ? propagated(flushed(i), x, sx) : null));
  const s = standard?.index ?? -1;
  const usableStandard = !!standard && s >= 0 && s < count && phases[s].scale > 0 && !!phases[s].rir && standard.weightFraction > 0 && standard.weightFraction < 1;
  if (!usableStandard) {
    return {
      weightFraction,
      weightFractionSigma,
      absoluteFraction: phases.map(() => null),
      absoluteFractionSigma: phases.map(() => null),
      amorphous: null,
      statement: standard
        ? 'the internal standard is not usable (not found in the pattern, no RIR, or its weight fraction is not between 0 and 1): fractions assume a fully crystalline sample'
        : 'fractions assume a fully crystalline sample with every crystalline phase identified (no internal standard given)',
    };
  }
  const absolute = (i: number) => (v: Float64Array) => {
    const ws = v[2 * count];
    return (ws * (v[i] / v[count + i])) / (v[s] / v[count + s]) / (1 - ws);
  };
  const amorphousOf = (v: Float64Array) => {
    let sum = 0;
    for (let j = 0; j < count; j++) if (quantified[j]) sum += absolute(j)(v);
    return 1 - sum;
  };
  return {
    weightFraction,
    weightFractionSigma,
    absoluteFraction: phases.map((_, i) => (quantified[i] ? absolute(i)(x) : null)),
    absoluteFractionSigma: phases.map((_, i) => (quantified[i] ? propagated(absolute(i), x, sx) : null)),
    amorphous: { fraction: amorphousOf(x), sigma: propagated(amorphousOf, x, sx) },
    statement: `absolute fractions of the unspiked sample from the internal standard at ${(100 * standard.weightFraction).toPrecision(3)} wt %; the rest is amorphous or unquantified`,
  };
}

/** Most phases whose zero patterns are all tried (2^n small solves); beyond, the phases are fitted without the bound. */
const EXHAUSTIVE_PHASES = 10;
/** Reweighting passes after the first fit (weights from the model, not from the measured areas). */
const REWEIGHTING_PASSES = 3;
/** Lines that may or may not be part of a group's area, expected to carry more than this share of it, make the group unusable for the scales. */
const UNCERTAIN_AREA_SHARE = 0.05;

/** Measured areas and reference intensities per group of peaks fitted together, as the scale fit needs them. */
export interface GroupIntensities {
  /** Measured area of each group (the peaks some present phase matches), counts·degrees. */
  areas: Float64Array;
  /** Per phase, per group: summed reference intensity of its lines in the group's area (matched, or not resolved from its peaks). */
  matched: Float64Array[];
  /** Per phase, per group: summed reference intensity of its lines that may or may not be part of the group's area. */
  unmatched: Float64Array[];
}

/**
 * Intensity scales s_i of the phases that explain a pattern (measured area per unit reference
 * intensity), fitted jointly to the groups' areas: area_g ≈ Σ_i s_i·G_ig, so a peak two phases share
 * is split between them instead of inflating one. A first fit on every group gives the expected area
 * of the lines that may or may not be part of a group; groups where that exceeds UNCERTAIN_AREA_SHARE
 * of the area are left out of the final fit (unless a phase would be left without any group). Returns one scale per phase, 0 where the fit gives the phase none.
 */
export function fitPhaseScales(groups: GroupIntensities): { scales: Float64Array; sigmas: Float64Array } {
  const first = jointPhaseScales(groups.areas, groups.matched);
  const usable = Float64Array.from(groups.areas, (area, g) => {
    let hidden = 0;
    groups.unmatched.forEach((u, i) => (hidden += first[i] * u[g]));
    return hidden > UNCERTAIN_AREA_SHARE * area ? 0 : area;
  });
  const covered = groups.matched.every((m, i) => !(first[i] > 0) || m.some((v, g) => v > 0 && usable[g] > 0));
  const areas = covered ? usable : groups.areas;
  const scales = covered ? jointPhaseScales(usable, groups.matched) : first;
  return { scales, sigmas: scaleSigmas(areas, groups.matched, scales) };
}

/**
 * σ of the positive scales from the weighted fit's covariance (normal matrix inverse at the final,
 * model-based relative weights) times the residual variance χ²/(groups − phases): the scatter of the
 * groups' areas about the model (preferred orientation, overlap) sets the uncertainty. NaN where the
 * groups leave no degree of freedom (the scatter cannot be measured).
 */
function scaleSigmas(areas: Float64Array, contributions: readonly Float64Array[], scales: Float64Array): Float64Array {
  const sigmas = new Float64Array(scales.length).fill(Number.NaN);
  const members = [...scales.keys()].filter((i) => scales[i] > 0);
  const rows: number[] = [];
  for (let g = 0; g < areas.length; g++) if (areas[g] > 0 && members.some((i) => contributions[i][g] > 0)) rows.push(g);
  const dof = rows.length - members.length;
  if (members.length === 0 || dof <= 0) return sigmas;
  const p = members.length;
  const normal = new Float64Array(p * p);
  let chi2 = 0;
  for (const g of rows) {
    let model = 0;
    let carried = 0;
    for (const i of members) {
      model += scales[i] * contributions[i][g];
      carried += contributions[i][g];
    }
    const weight = carried / Math.max(model, 1e-12 * areas[g]) ** 2;
    chi2 += weight * (areas[g] - model) ** 2;
    for (let a = 0; a < p; a++) for (let b = 0; b < p; b++) normal[a * p + b] += weight * contributions[members[a]][g] * contributions[members[b]][g];
  }
  const inverse = invertSmall(normal, p);
  if (!inverse) return sigmas;
  members.forEach((i, a) => (sigmas[i] = Math.sqrt(Math.max(inverse[a * p + a], 0) * (chi2 / dof))));
  return sigmas;
}

/**
 * Non-negative least squares area_g ≈ Σ_i s_i·G_ig (Lawson & Hanson, Solving Least Squares Problems,
 * 1974), solved exactly for a few phases: the unconstrained fit on every subset of phases, keeping the
 * best whose scales are all positive. Residuals are relative (intensity errors such as preferred
 * orientation scale with the area), each group weighted by the reference intensity it carries; the
 * weights are then taken from the model instead of the measured area (iteratively reweighted), so a
 * group measured far too small does not dominate. Groups with area 0 are left out.
 */
function jointPhaseScales(areas: Float64Array, contributions: readonly Float64Array[]): Float64Array {
  const phases = contributions.length;
  const rows: number[] = [];
  for (let g = 0; g < areas.length; g++) if (areas[g] > 0 && contributions.some((c) => c[g] > 0)) rows.push(g);
  const carried = rows.map((g) => contributions.reduce((s, c) => s + c[g], 0));
  let scales: Float64Array = new Float64Array(phases);
  if (rows.length === 0 || phases === 0) return scales;
  let weights = rows.map((g, r) => carried[r] / (areas[g] * areas[g]));
  for (let pass = 0; pass <= REWEIGHTING_PASSES; pass++) {
    const next = nonNegativeFit(areas, contributions, rows, weights);
    if (!next) break;
    scales = next;
    weights = rows.map((g, r) => {
      let model = 0;
      for (let i = 0; i < phases; i++) model += scales[i] * contributions[i][g];
      return carried[r] / Math.max(model, 1e-12 * areas[g]) ** 2;
    });
  }
  return scales;
}

function nonNegativeFit(areas: Float64Array, contributions: readonly Float64Array[], rows: number[], weights: number[]): Float64Array | null {
  const phases = contributions.length;
  let best: Float64Array | null = null;
  let bestChi2 = Infinity;
  const solveOn = (members: number[]): void => {
    const p = members.length;
    const normal = new Float64Array(p * p);
    const rhs = new Float64Array(p);
    rows.forEach((g, r) => {
      for (let a = 0; a < p; a++) {
        const ga = contributions[members[a]][g];
        if (ga === 0) continue;
        rhs[a] += weights[r] * ga * areas[g];
        for (let b = 0; b < p; b++) normal[a * p + b] += weights[r] * ga * contributions[members[b]][g];
      }
    });
    const inverse = invertSmall(normal, p);
    if (!inverse) return;
    const scales = new Float64Array(phases);
    for (let a = 0; a < p; a++) {
      let s = 0;
      for (let b = 0; b < p; b++) s += inverse[a * p + b] * rhs[b];
      if (!(s > 0)) return;
      scales[members[a]] = s;
    }
    let chi2 = 0;
    rows.forEach((g, r) => {
      let model = 0;
      for (let i = 0; i < phases; i++) model += scales[i] * contributions[i][g];
      chi2 += weights[r] * (areas[g] - model) ** 2;
    });
    if (chi2 < bestChi2) [best, bestChi2] = [scales, chi2];
  };
  if (phases > EXHAUSTIVE_PHASES) {
    solveOn(Array.from({ length: phases }, (_, i) => i));
    return best;
  }
  for (let mask = 1; mask < 1 << phases; mask++) {
    const members: number[] = [];
    for (let i = 0; i < phases; i++) if (mask & (1 << i)) members.push(i);
    solveOn(members);
  }
  return best;
}
