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
  /** Stop when an accepted near Gauss–Newton step lowers χ² by less than this fraction. */
  relativeTolerance: number;
  /**
   * Also stop when an accepted near Gauss–Newton step lowers χ² by less than this (absolute), or an unclipped
   * one promises less, before it is evaluated (default 0: never).
   */
  absoluteTolerance?: number;
}

export interface LevenbergMarquardtResult {
  /** χ² at the parameters left in `params`. */
  chi2: number;
  /** Damped steps tried (each one a Cholesky factorisation). */
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
/** Damping below this counts as a near Gauss–Newton step (its small gain means convergence). */
const GAUSS_NEWTON_DAMPING = 1;

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
  }

  /** Minimise χ² from `params` (count long), leaving the best parameters found there. */
  minimise(target: NormalEquationsTarget, params: Float64Array, count: number, options: LevenbergMarquardtOptions): LevenbergMarquardtResult {
    this.reserve(count);
    const { work, step, trial } = this;
    const { lower, upper, approachLower, maxIterations, relativeTolerance } = options;
    const absoluteTolerance = options.absoluteTolerance ?? 0;
    let steps = 0;
    let evaluations = 1;
    let chi2 = target.evaluate(params, this.normal, this.gradient);
    let damping = START_DAMPING;
    let growth = 2;
    for (let iteration = 0; iteration < maxIterations && damping < MAX_DAMPING; iteration++) {
      const { normal, gradient } = this;
      for (let a = 0; a < count * count; a++) work[a] = normal[a];
      for (let a = 0; a < count; a++) {
        const d = normal[a * count + a];
        work[a * count + a] = d + damping * (d > 0 ? d : 1e-12);
        step[a] = gradient[a];
        // A parameter on its limit that the gradient pushes outwards stays where it is for this step.
        if ((params[a] <= lower[a] && gradient[a] < 0) || (params[a] >= upper[a] && gradient[a] > 0)) {
          for (let b = 0; b < count; b++) {
            work[a * count + b] = 0;
            work[b * count + a] = 0;
          }
          work[a * count + a] = 1;
          step[a] = 0;
        }
      }
      steps++;
      if (!choleskyFactor(work, count)) {
        damping *= growth;
        growth *= 2;
        continue;
      }
      choleskySolve(work, count, step);
      // A parameter whose step would cross a limit stops on it (or short of it, see approachLower); the others
      // keep their full step (shortening the whole step instead stalls a fit along a limit).
      let clipped = false;
      for (let a = 0; a < count; a++) {
        let to = params[a] + step[a];
        if (to < lower[a]) to = approachLower !== undefined && approachLower[a] === 1 ? params[a] + APPROACH_FRACTION * (lower[a] - params[a]) : lower[a];
        if (to > upper[a]) to = upper[a];
        if (to !== params[a] + step[a]) clipped = true;
        trial[a] = to;
        step[a] = to - params[a];
      }
      // Reduction of χ² the linearised model promises for this step: 2δᵀg − δᵀNδ.
      let predicted = 0;
      for (let a = 0; a < count; a++) {
        if (step[a] === 0) continue;
        let row = 0;
        for (let b = 0; b < count; b++) row += normal[a * count + b] * step[b];
        predicted += step[a] * (2 * gradient[a] - row);
      }
      if (!clipped && damping < GAUSS_NEWTON_DAMPING && predicted < absoluteTolerance) break;
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
        damping *= Math.max(1 / 3, 1 - (2 * Math.min(rho, 1) - 1) ** 3);
        damping = Math.max(damping, MIN_DAMPING);
        growth = 2;
        // A tiny gain means convergence only for a near Gauss–Newton step, not a heavily damped one.
        if ((gain < relativeTolerance || chi2Before - trialChi2 < absoluteTolerance) && damping < GAUSS_NEWTON_DAMPING) break;
      } else {
        damping *= growth;
        growth *= 2;
      }
    }
    return { chi2, steps, evaluations };
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
