import { expect, it } from 'vitest';
import { GroupModel } from '../../src/core/process/group-model.js';
import type { PeakFitSetting } from '../../src/core/process/peak-parameters.js';
import type { ProfileModel } from '../../src/core/model/peak.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { seededUniform } from '../../src/core/numeric/random.js';

const CU = anodeWavelength('Cu');

/** Two overlapping peaks with Kα2 partners on noisy data: the setting and a parameter vector off the data's optimum. */
function problem(profile: ProfileModel, asymmetry: boolean): { setting: PeakFitSetting; params: Float64Array } {
  const uniform = seededUniform(77);
  const x = Float64Array.from({ length: 400 }, (_, i) => 40 + 0.01 * i);
  const y = x.map((v) => 100 + 3000 * Math.exp(-(((v - 41.2) / 0.08) ** 2)) + 1500 / (1 + ((v - 41.5) / 0.05) ** 2) + 20 * (uniform() - 0.5));
  const weight = y.map((v) => 1 / v);
  const setting: PeakFitSetting = {
    x,
    y,
    weight,
    background: new Float64Array(x.length).fill(90),
    profile,
    perPeak: asymmetry ? 5 : 4,
    lambda1: CU.lambda1,
    lambda2: CU.lambda2,
    ratio: CU.ratio,
    minFwhm: 0.01,
    maxFwhm: 2,
  };
  const peak = (pos: number, height: number, a: number, b: number, asym: number) => (asymmetry ? [pos, height, a, b, asym] : [pos, height, a, b]);
  const widths = profile === 'tch' ? [0.09, 0.05, 0.07, 0.06] : [0.12, 0.4, 0.1, 0.7];
  const params = Float64Array.from([...peak(41.21, 2800, widths[0], widths[1], 0.1), ...peak(41.49, 1400, widths[2], widths[3], -0.05), 5, -2]);
  return { setting, params };
}

it.each([
  ['pseudo-voigt', false],
  ['pseudo-voigt', true],
  ['tch', true],
] as const)('the group model’s analytic gradient JᵀW(y − model) is −½ dχ²/dp by central differences (%s, asymmetry %s)', (profile, asymmetry) => {
  const { setting, params } = problem(profile, asymmetry);
  const model = new GroupModel(setting);
  model.setUp(params, 2, 0, setting.x.length, 30);
  const n = model.paramCount;
  const normal = new Float64Array(n * n);
  const gradient = new Float64Array(n);
  const scratchN = new Float64Array(n * n);
  const scratchG = new Float64Array(n);
  model.evaluate(params, normal, gradient);
  for (let a = 0; a < n; a++) {
    const h = 1e-6 * Math.max(Math.abs(params[a]), 1e-3);
    const up = params.slice();
    const down = params.slice();
    up[a] += h;
    down[a] -= h;
    const numeric = -(model.evaluate(up, scratchN, scratchG) - model.evaluate(down, scratchN, scratchG)) / (4 * h);
    expect(Math.abs(gradient[a] - numeric)).toBeLessThan(1e-4 * Math.max(Math.abs(numeric), 1));
  }
  // The normal matrix is symmetric with a positive diagonal.
  for (let a = 0; a < n; a++) {
    expect(normal[a * n + a]).toBeGreaterThan(0);
    for (let b = 0; b < a; b++) expect(normal[a * n + b]).toBe(normal[b * n + a]);
  }
});
