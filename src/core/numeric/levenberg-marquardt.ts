/**
 * Bounded Levenberg–Marquardt minimisation of a weighted sum of squares χ²(p) (Levenberg, Q. Appl. Math. 2,
 * 164 (1944); Marquardt, J. SIAM 11, 431 (1963)): the step solves (N + λ·diag N)·δ = g by Cholesky, with
 * N = JᵀWJ and g = JᵀW·r the target's normal matrix and gradient, and λ updated by Nielsen's rule
 * (H. B. Nielsen, IMM-REP-1999-05, DTU (1999)). The target fills buffers the solver owns, so a fit
 * allocates nothing per iteration; it may fill the normal matrix straight from a sparse Jacobian.
 */
import { choleskyFactor, choleskySolve } from './cholesky.js';

/** What the solver minimises. */
export interface NormalEquationsTarget {
  /**
   * χ² at `params` (the first `count` entries), filling `normal` (count × count, row-major, both triangles)
   * with JᵀWJ and `gradient` (count) with JᵀW·(data − model): the Gauss–Newton step δ solves N·δ = g.
   * It may stop once χ² is known to reach `stopAt` and return any value ≥ stopAt, leaving normal and
   * gradient unfinished (the solver then rejects the step and never reads them).
   */
  evaluate(params: Float64Array, normal: Float64Array, gradient: Float64Array, stopAt?: number): number;
}

export interface LevenbergMarquardtOptions {
  /** Limits of each parameter (±∞ for none); the start must lie within them. */
  lower: Float64Array;
  upper: Float64Array;
  /**
   * Parameters (flag 1) that a step past their lower limit takes only APPROACH_FRACTION of the way to it, not
   * onto it (one whose derivatives vanish at its limit, such as a scale at zero, could not come back).
   */
  approachLower?: Uint8Array;
  maxIterations: number;
  /** Stop when an accepted near Gauss–Newton step lowers χ² by less than this fraction, or a rejected one promised less. */
  relativeTolerance: number;
  /**
   * Also stop when an accepted near Gauss–Newton step lowers χ² by less than this (absolute), or an unclipped
   * one promises less, before it is evaluated (default 0: never).
   */
  absoluteTolerance?: number;
  /**
   * Degrees of freedom of χ² (points − parameters): when given, absoluteTolerance is counted in units of the
   * reduced χ² (where it exceeds 1), as the standard uncertainties are scaled by it (a misfit model's σ are
   * wider, and so is the change of χ² that stands for a tenth of one).
   */
  degreesOfFreedom?: number;
}

export interface LevenbergMarquardtResult {
  /** χ² at the parameters left in `params`. */
  chi2: number;
  /** Damped steps tried (each one or, with parameters clipped onto a limit, a few Cholesky factorisations). */
  steps: number;
  /** Calls of the target's evaluate (each one a model with its Jacobian's normal matrix). */
  evaluations: number;
}

/** Share of the way to its lower limit that a flagged parameter's step goes when it would cross it. */
const APPROACH_FRACTION = 0.9;
const START_DAMPING = 1e-3;
const MIN_DAMPING = 1e-12;
/** Give up raising the damping beyond this (no downhill step exists within the limits). */
const MAX_DAMPING = 1e8;
/**
 * After a rejected step the damping is at least this: far below it the step hardly shortens (the damping
 * scales the diagonal), so a step that overshot would be tried again nearly unchanged (measured: wasted trials).
 */
const REJECTED_MIN_DAMPING = 0.1;
/** Damping below this counts as a near Gauss–Newton step (its small gain means convergence). */
const GAUSS_NEWTON_DAMPING = 1;

/** 2δᵀg − δᵀNδ for the step δ (N count × count), or NaN when every entry of δ is 0. */
function promisedReduction(normal: Float64Array, gradient: Float64Array, step: Float64Array, count: number): number {
  let predicted = 0;
  let moving = false;
  for (let a = 0; a < count; a++) {
    if (step[a] === 0) continue;
    moving = true;
    let row = 0;
    for (let b = 0; b < count; b++) row += normal[a * count + b] * step[b];
    predicted += step[a] * (2 * gradient[a] - row);
  }
  return moving ? predicted : Number.NaN;
}

/** Damping after a rejected step (Nielsen's growth), at least REJECTED_MIN_DAMPING. */
function raised(damping: number, growth: number): number {
  return Math.max(damping * growth, REJECTED_MIN_DAMPING);
}

// What boundedStep found.
const SOLVED = 0;
const CLIPPED = 1;
const NOT_POSITIVE_DEFINITE = 2;

/** A solver with buffers for problems of up to its capacity in parameters, grown on demand. */
export class LevenbergMarquardt {
  private capacity = 0;
  private normal = new Float64Array(0);
  private gradient = new Float64Array(0);
  private spareNormal = new Float64Array(0);
  private spareGradient = new Float64Array(0);
  private work = new Float64Array(0);
  private step = new Float64Array(0);
  private trial = new Float64Array(0);
  private held = new Uint8Array(0);

  /** The normal matrix N at the parameters of the last minimise (count × count): ready for a covariance N⁻¹. */
  get normalMatrix(): Float64Array {
    return this.normal;
  }

  private reserve(count: number): void {
    if (count <= this.capacity) return;
    const size = Math.max(count, 2 * this.capacity);
    this.capacity = size;
    this.normal = new Float64Array(size * size);
    this.spareNormal = new Float64Array(size * size);
    this.work = new Float64Array(size * size);
    this.gradient = new Float64Array(size);
    this.spareGradient = new Float64Array(size);
    this.step = new Float64Array(size);
    this.trial = new Float64Array(size);
    this.held = new Uint8Array(size);
  }

  /** Minimise χ² from `params` (count long), leaving the best parameters found there. */
  minimise(target: NormalEquationsTarget, params: Float64Array, count: number, options: LevenbergMarquardtOptions): LevenbergMarquardtResult {
    this.reserve(count);
    const { step, trial } = this;
    const { lower, upper, approachLower, maxIterations, relativeTolerance } = options;
    const absoluteTolerance = options.absoluteTolerance ?? 0;
    const dof = options.degreesOfFreedom ?? 0;
    let steps = 0;
    let evaluations = 1;
    let chi2 = target.evaluate(params, this.normal, this.gradient);
    // The absolute tolerance, in units of the reduced χ² where the degrees of freedom are given.
    const convergedChange = (at: number): number => (dof > 0 ? absoluteTolerance * Math.max(1, at / dof) : absoluteTolerance);
    let converged = convergedChange(chi2);
    let damping = START_DAMPING;
    let growth = 2;
    for (let iteration = 0; iteration < maxIterations && damping < MAX_DAMPING; iteration++) {
      steps++;
      const solved = this.boundedStep(params, count, damping, lower, upper, approachLower);
      if (solved === NOT_POSITIVE_DEFINITE) {
        damping = raised(damping, growth);
        growth *= 2;
        continue;
      }
      const clipped = solved === CLIPPED;
      const { normal, gradient } = this;
      // Reduction of χ² the linearised model promises for this step: 2δᵀg − δᵀNδ (NaN: no parameter moves).
      const predicted = promisedReduction(normal, gradient, step, count);
      const moving = !Number.isNaN(predicted);
      if (!moving || (!clipped && damping < GAUSS_NEWTON_DAMPING && predicted < converged)) break;
      // A step the linearised model says goes uphill (possible only with parameters clipped onto a limit) is
      // rejected untried.
      if (!(predicted > 0)) {
        damping = raised(damping, growth);
        growth *= 2;
        continue;
      }
      // The trial's normal matrix goes to the spare buffers; they become the current ones only if it is accepted
      // (a trial that reaches the current χ² is rejected, so its evaluation may stop there).
      evaluations++;
      const trialChi2 = target.evaluate(trial, this.spareNormal, this.spareGradient, chi2);
      if (trialChi2 < chi2) {
        const chi2Before = chi2;
        const gain = (chi2 - trialChi2) / Math.max(chi2, 1e-300);
        const rho = (chi2 - trialChi2) / Math.max(predicted, 1e-300);
        for (let a = 0; a < count; a++) params[a] = trial[a];
        chi2 = trialChi2;
        this.swapNormalBuffers();
        converged = convergedChange(chi2);
        damping *= Math.max(1 / 3, 1 - (2 * Math.min(rho, 1) - 1) ** 3);
        damping = Math.max(damping, MIN_DAMPING);
        growth = 2;
        // A tiny gain means convergence only for a near Gauss–Newton step, not a heavily damped one.
        if ((gain < relativeTolerance || chi2Before - trialChi2 < converged) && damping < GAUSS_NEWTON_DAMPING) break;
      } else {
        // A step that promised less than the tolerance and failed: χ² is at its minimum to rounding.
        if (predicted < relativeTolerance * chi2 && damping < GAUSS_NEWTON_DAMPING) break;
        damping = raised(damping, growth);
        growth *= 2;
      }
    }
    return { chi2, steps, evaluations };
  }

  /**
   * The damped step from params into this.step (and params + step into this.trial): (N + λ·diag N)·δ = g
   * solved by Cholesky with the parameters on a limit that the gradient pushes outwards held where they are.
   * A parameter whose step would cross a limit is put on it (or APPROACH_FRACTION of the way, see
   * approachLower) and held there while the others are solved again (a projected step: keeping the others'
   * unclipped step would throw away their coupling to it, often uphill).
   */
  private boundedStep(params: Float64Array, count: number, damping: number, lower: Float64Array, upper: Float64Array, approachLower: Uint8Array | undefined): number {
    const { normal, gradient, work, step, trial } = this;
    const held = this.held;
    for (let a = 0; a < count; a++) {
      // A parameter on its limit that the gradient pushes outwards stays where it is for this step.
      const outwards = (params[a] <= lower[a] && gradient[a] < 0) || (params[a] >= upper[a] && gradient[a] > 0);
      held[a] = outwards ? 1 : 0;
      trial[a] = params[a];
    }
    let clipped = false;
    for (let pass = 0; pass <= count; pass++) {
      work.set(normal.subarray(0, count * count));
      for (let a = 0; a < count; a++) {
        const d = normal[a * count + a];
        work[a * count + a] = d + damping * (d > 0 ? d : 1e-12);
        step[a] = gradient[a];
      }
      // Held parameters move by their fixed amount (trial − params): their share moves to the right side.
      for (let a = 0; a < count; a++) {
        if (!held[a]) continue;
        const fixed = trial[a] - params[a];
        if (fixed !== 0) for (let b = 0; b < count; b++) step[b] -= normal[b * count + a] * fixed;
      }
      for (let a = 0; a < count; a++) {
        if (!held[a]) continue;
        for (let b = 0; b < count; b++) {
          work[a * count + b] = 0;
          work[b * count + a] = 0;
        }
        work[a * count + a] = 1;
        step[a] = trial[a] - params[a];
      }
      if (!choleskyFactor(work, count)) return NOT_POSITIVE_DEFINITE;
      choleskySolve(work, count, step);
      let newlyHeld = false;
      for (let a = 0; a < count; a++) {
        if (held[a]) continue;
        let to = params[a] + step[a];
        if (to < lower[a]) to = approachLower !== undefined && approachLower[a] === 1 ? params[a] + APPROACH_FRACTION * (lower[a] - params[a]) : lower[a];
        if (to > upper[a]) to = upper[a];
        trial[a] = to;
        if (to !== params[a] + step[a]) {
          held[a] = 1;
          newlyHeld = true;
        }
      }
      if (!newlyHeld) break;
      clipped = true;
    }
    for (let a = 0; a < count; a++) step[a] = trial[a] - params[a];
    return clipped ? CLIPPED : SOLVED;
  }

  private swapNormalBuffers(): void {
    const normal = this.normal;
    this.normal = this.spareNormal;
    this.spareNormal = normal;
    const gradient = this.gradient;
    this.gradient = this.spareGradient;
    this.spareGradient = gradient;
  }
}
