import { describe, expect, it } from 'vitest';
import { LevenbergMarquardt, type NormalEquationsTarget } from '../../src/core/numeric/levenberg-marquardt.js';

/** A target from residuals r(p) = data − model and the model's Jacobian (unit weights), filling the solver's buffers. */
function target(count: number, residuals: (p: Float64Array) => number[], jacobian: (p: Float64Array) => number[][]): NormalEquationsTarget {
  return {
    evaluate(p, normal, gradient) {
      const r = residuals(p);
      const j = jacobian(p);
      normal.fill(0, 0, count * count);
      gradient.fill(0, 0, count);
      for (let i = 0; i < r.length; i++) {
        for (let a = 0; a < count; a++) {
          gradient[a] += j[i][a] * r[i];
          for (let b = 0; b < count; b++) normal[a * count + b] += j[i][a] * j[i][b];
        }
      }
      return r.reduce((s, v) => s + v * v, 0);
    },
  };
}

const free = (n: number) => ({ lower: new Float64Array(n).fill(-Infinity), upper: new Float64Array(n).fill(Infinity) });

describe('Levenberg–Marquardt', () => {
  it('finds the minimum of the Rosenbrock function from its standard start', () => {
    // r = (10(p1 − p0²), 1 − p0) as data − model; minimum χ² = 0 at (1, 1), start (−1.2, 1)
    // (Moré, Garbow & Hillstrom, ACM Trans. Math. Softw. 7, 17 (1981), problem 1).
    const rosenbrock = target(
      2,
      (p) => [10 * (p[1] - p[0] * p[0]), 1 - p[0]],
      (p) => [
        [-20 * p[0], 10],
        [-1, 0],
      ].map((row) => row.map((v) => -v)),
    );
    const params = Float64Array.from([-1.2, 1]);
    const result = new LevenbergMarquardt().minimise(rosenbrock, params, 2, { ...free(2), maxIterations: 200, relativeTolerance: 1e-12 });
    expect(params[0]).toBeCloseTo(1, 6);
    expect(params[1]).toBeCloseTo(1, 6);
    expect(result.chi2).toBeLessThan(1e-12);
    expect(result.evaluations).toBeGreaterThan(2);
    expect(result.steps).toBeGreaterThanOrEqual(result.evaluations - 1);
  });

  it('gives the closed-form least-squares line for a linear model', () => {
    const x = [0, 1, 2, 3, 4, 5];
    const y = [1.1, 2.9, 5.2, 7.1, 8.8, 11.2];
    const n = x.length;
    const sx = x.reduce((s, v) => s + v, 0);
    const sy = y.reduce((s, v) => s + v, 0);
    const sxx = x.reduce((s, v) => s + v * v, 0);
    const sxy = x.reduce((s, v, i) => s + v * y[i], 0);
    const slope = (n * sxy - sx * sy) / (n * sxx - sx * sx);
    const intercept = (sy - slope * sx) / n;
    const line = target(
      2,
      (p) => x.map((v, i) => y[i] - (p[0] + p[1] * v)),
      () => x.map((v) => [1, v]),
    );
    const params = Float64Array.from([0, 0]);
    const solver = new LevenbergMarquardt();
    solver.minimise(line, params, 2, { ...free(2), maxIterations: 50, relativeTolerance: 1e-14 });
    expect(params[0]).toBeCloseTo(intercept, 9);
    expect(params[1]).toBeCloseTo(slope, 9);
    // The normal matrix left behind is that of the solution: JᵀJ = [[n, Σx], [Σx, Σx²]].
    expect(Array.from(solver.normalMatrix.subarray(0, 4))).toEqual([n, sx, sx, sxx]);
  });

  it('stops a parameter on its limit, and one flagged approachLower short of its lower limit', () => {
    // One constant fitted to data 5 with upper limit 3, another to data −1 with lower limit 0, flagged.
    const two = target(
      2,
      (p) => [5 - p[0], -1 - p[1]],
      () => [
        [1, 0],
        [0, 1],
      ],
    );
    const params = Float64Array.from([1, 1]);
    new LevenbergMarquardt().minimise(two, params, 2, {
      lower: Float64Array.from([-Infinity, 0]),
      upper: Float64Array.from([3, Infinity]),
      approachLower: Uint8Array.from([0, 1]),
      maxIterations: 100,
      relativeTolerance: 1e-12,
    });
    expect(params[0]).toBe(3);
    expect(params[1]).toBeGreaterThan(0);
    expect(params[1]).toBeLessThan(1e-4);
  });

  it('stops before evaluating a near Gauss–Newton step that promises less than the absolute tolerance', () => {
    const y = [2, 2.2, 1.8, 2.1];
    const constant = target(
      1,
      (p) => y.map((v) => v - p[0]),
      () => y.map(() => [1]),
    );
    const loose = Float64Array.from([0]);
    const tight = Float64Array.from([0]);
    const solver = new LevenbergMarquardt();
    const a = solver.minimise(constant, loose, 1, { ...free(1), maxIterations: 50, relativeTolerance: 1e-14, absoluteTolerance: 10 });
    const b = solver.minimise(constant, tight, 1, { ...free(1), maxIterations: 50, relativeTolerance: 1e-14 });
    expect(a.evaluations).toBeLessThan(b.evaluations);
    expect(tight[0]).toBeCloseTo(2.025, 9);
  });

  it('moves the other parameters to their best values given one clipped onto its limit (projected step)', () => {
    // Line a + b·x through data of slope 2 and intercept 1 with b ≤ 1: the bounded least-squares answer is
    // b = 1 and the mean of y − x for a (the two columns are correlated, so a must move with b's clip).
    const x = [1, 2, 3, 4];
    const y = x.map((v) => 1 + 2 * v);
    const inner = target(
      2,
      (p) => x.map((v, i) => y[i] - (p[0] + p[1] * v)),
      () => x.map((v) => [1, v]),
    );
    const tried: number[][] = [];
    const line: NormalEquationsTarget = {
      evaluate(p, normal, gradient, stopAt) {
        tried.push([p[0], p[1]]);
        return inner.evaluate(p, normal, gradient, stopAt);
      },
    };
    const params = Float64Array.from([0, 0]);
    new LevenbergMarquardt().minimise(line, params, 2, {
      lower: Float64Array.from([-Infinity, -Infinity]),
      upper: Float64Array.from([Infinity, 1]),
      maxIterations: 50,
      relativeTolerance: 1e-14,
    });
    const meanOfRest = x.reduce((s, v, i) => s + y[i] - v, 0) / x.length;
    expect(params[1]).toBe(1);
    expect(params[0]).toBeCloseTo(meanOfRest, 9);
    // The model is linear: the first step lands next to the answer (within its small damping), with a moved too.
    expect(tried[1][1]).toBe(1);
    expect(Math.abs(tried[1][0] - meanOfRest)).toBeLessThan(0.01);
    expect(tried.length).toBeLessThanOrEqual(5);
  });

  it('counts the absolute tolerance in units of the reduced χ² when given the degrees of freedom', () => {
    // A constant through scattered data (reduced χ² ≈ 2 500): Δχ² = 1 is far below a tenth of its σ.
    const y = [100, 0, 100, 0, 100, 0];
    const constant = target(
      1,
      (p) => y.map((v) => v - p[0]),
      () => y.map(() => [1]),
    );
    const solver = new LevenbergMarquardt();
    const options = { ...free(1), lower: Float64Array.from([-Infinity]), upper: Float64Array.from([Infinity]), maxIterations: 50, relativeTolerance: 1e-14, absoluteTolerance: 0.01 };
    // A start that the first (damped) step does not quite reach the minimum from.
    const plain = Float64Array.from([1e4]);
    const scaled = Float64Array.from([1e4]);
    const a = solver.minimise(constant, plain, 1, options);
    const b = solver.minimise(constant, scaled, 1, { ...options, degreesOfFreedom: y.length - 1 });
    expect(b.evaluations).toBeLessThanOrEqual(a.evaluations);
    // Within a tenth of the (scaled) σ of the mean: σ = √(χ²/ν / N) ≈ 20.
    expect(Math.abs(scaled[0] - 50)).toBeLessThan(2);
    expect(Math.abs(plain[0] - 50)).toBeLessThan(0.05);
  });
});
