import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { GroupModel } from '../../src/core/process/group-model.js';
import { kAlpha1Sources, strippedVariance, stripKAlpha2 } from '../../src/core/process/kalpha2.js';
import { partnerPosition, peakWidths, W_DETA_DA, W_DETA_DB, W_DFWHM_DA, W_DFWHM_DB, W_ETA, W_FWHM, type PeakFitSetting } from '../../src/core/process/peak-parameters.js';
import { GAUSS_CUT_U2, LN2, lorentzianHeightShare, lorentzianHeightShareSlope } from '../../src/core/process/profiles.js';
import { snipBackground } from '../../src/core/process/snip.js';
import type { ProfileModel } from '../../src/core/model/peak.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { DEG_TO_RAD } from '../../src/core/model/units.js';

const CU = anodeWavelength('Cu');

/** A small linear congruential generator: reproducible data from one seed. */
function generator(seed: number): () => number {
  let state = seed;
  return () => (state = (state * 1103515245 + 12345) % 2 ** 31) / 2 ** 31;
}

interface Problem {
  setting: PeakFitSetting;
  params: Float64Array;
  peakCount: number;
  windowFwhm: number;
}

/** A random group: 1–4 peaks (overlapping or apart) on a noisy pattern, with random profile, asymmetry and Kα2. */
const problems = fc
  .record({
    seed: fc.integer({ min: 1, max: 2 ** 30 }),
    peakCount: fc.integer({ min: 1, max: 4 }),
    profile: fc.constantFrom<ProfileModel>('pseudo-voigt', 'tch'),
    asymmetry: fc.boolean(),
    doublet: fc.boolean(),
    windowFwhm: fc.double({ min: 1, max: 12, noNaN: true }),
  })
  .map(({ seed, peakCount, profile, asymmetry, doublet, windowFwhm }): Problem => {
    const random = generator(seed);
    const n = 300 + Math.floor(random() * 300);
    const x = new Float64Array(n);
    let at = 30;
    for (let i = 0; i < n; i++) x[i] = at += 0.005 + 0.01 * random();
    const y = Float64Array.from(x, () => 50 + 2000 * random() ** 4);
    const perPeak = asymmetry ? 5 : 4;
    const params = new Float64Array(peakCount * perPeak + 2);
    for (let k = 0; k < peakCount; k++) {
      const b = k * perPeak;
      params[b] = x[20] + (x[n - 20] - x[20]) * random();
      params[b + 1] = 100 + 3000 * random();
      params[b + 2] = profile === 'tch' ? 0.02 + 0.1 * random() : 0.03 + 0.15 * random();
      params[b + 3] = profile === 'tch' ? 0.1 * random() : random();
      if (asymmetry) params[b + 4] = 0.6 * (random() - 0.5);
    }
    params[peakCount * perPeak] = 10 * (random() - 0.5);
    params[peakCount * perPeak + 1] = 5 * (random() - 0.5);
    const setting: PeakFitSetting = {
      x,
      y,
      weight: y.map((v) => 1 / v),
      background: Float64Array.from(x, () => 40 + 5 * random()),
      profile,
      perPeak,
      lambda1: CU.lambda1,
      lambda2: doublet ? CU.lambda2 : null,
      ratio: doublet ? CU.ratio : 0,
      minFwhm: 0.005,
      maxFwhm: 2,
    };
    return { setting, params, peakCount, windowFwhm };
  });

/**
 * The plain computation the kernel must agree with: at every point the full model and one dense Jacobian row
 * (every parameter; zero for a peak whose window does not hold the point), written from the split pseudo-Voigt's
 * definition, then N = JᵀWJ, g = JᵀW(y − model) and χ² summed point by point.
 */
function reference(model: GroupModel, setting: PeakFitSetting, params: Float64Array): { chi2: number; normal: Float64Array; gradient: Float64Array } {
  const { x, y, weight, background, perPeak, ratio, lambda1, lambda2 } = setting;
  const m = model.paramCount;
  const bgBase = model.peakCount * perPeak;
  const normal = new Float64Array(m * m);
  const gradient = new Float64Array(m);
  const row = new Float64Array(m);
  const widths = new Float64Array(6);
  let chi2 = 0;
  for (let i = model.first; i < model.last; i++) {
    row.fill(0);
    const t = x[i] - model.middle;
    let value = background[i] + model.others[i] + params[bgBase] + params[bgBase + 1] * t;
    row[bgBase] = 1;
    row[bgBase + 1] = t;
    for (let k = 0; k < model.peakCount; k++) {
      if (i < model.lo[k] || i >= model.hi[k]) continue;
      const b = k * perPeak;
      peakWidths(setting.profile, params, b, widths, 0);
      const fwhm = widths[W_FWHM];
      const mix = lorentzianHeightShare(widths[W_ETA]);
      const asym = perPeak === 5 ? params[b + 4] : 0;
      const pos = params[b];
      const height = params[b + 1];
      let dValueDPos = 0;
      let dValueDFwhm = 0;
      let dValueDMix = 0;
      let dValueDAsym = 0;
      let dValueDHeight = 0;
      const lines = lambda2 === null ? [[pos, 1, 1]] : [[pos, 1, 1], [partnerPosition(setting, pos), ratio, partnerSlope(pos, lambda1, lambda2)]];
      for (const [centre, share, dCentreDPos] of lines) {
        const dx = x[i] - centre;
        const side = dx < 0 ? 1 : -1;
        const halfFwhm = fwhm * (1 + side * asym);
        const u = dx / halfFwhm;
        const lor = 1 / (1 + 4 * u * u);
        const gau = u * u > GAUSS_CUT_U2 ? 0 : Math.exp(-4 * LN2 * u * u);
        const shape = mix * lor + (1 - mix) * gau;
        const dShapeDu = mix * -8 * u * lor * lor + (1 - mix) * -8 * LN2 * u * gau;
        value += share * height * shape;
        dValueDHeight += share * shape;
        dValueDPos += (share * height * dShapeDu * -dCentreDPos) / halfFwhm;
        dValueDFwhm += (share * height * dShapeDu * -u) / fwhm;
        dValueDAsym += share * height * dShapeDu * ((-u * side) / (1 + side * asym));
        dValueDMix += share * height * (lor - gau);
      }
      const dValueDEta = dValueDMix * lorentzianHeightShareSlope(widths[W_ETA]);
      row[b] = dValueDPos;
      row[b + 1] = dValueDHeight;
      row[b + 2] = dValueDFwhm * widths[W_DFWHM_DA] + dValueDEta * widths[W_DETA_DA];
      row[b + 3] = dValueDFwhm * widths[W_DFWHM_DB] + dValueDEta * widths[W_DETA_DB];
      if (perPeak === 5) row[b + 4] = dValueDAsym;
    }
    const residual = y[i] - value;
    chi2 += weight[i] * residual * residual;
    for (let a = 0; a < m; a++) {
      gradient[a] += weight[i] * row[a] * residual;
      for (let c = 0; c < m; c++) normal[a * m + c] += weight[i] * row[a] * row[c];
    }
  }
  return { chi2, normal, gradient };
}

/** dθ2/dθ1 of the Kα2 partner (same d): (λ2/λ1)·cos θ1 / cos θ2. */
function partnerSlope(pos: number, lambda1: number, lambda2: number): number {
  const half1 = (pos * DEG_TO_RAD) / 2;
  const half2 = Math.asin((lambda2 / lambda1) * Math.sin(half1));
  return ((lambda2 / lambda1) * Math.cos(half1)) / Math.cos(half2);
}

function setUpModel(problem: Problem): GroupModel {
  const { setting, params, peakCount, windowFwhm } = problem;
  const model = new GroupModel(setting);
  const n = setting.x.length;
  // Other peaks held fixed under the group: any curve will do.
  for (let i = 0; i < n; i++) model.others[i] = 30 * Math.sin(i / 17) ** 2;
  model.setUp(params, peakCount, 5, n - 5, windowFwhm);
  return model;
}

describe('the fit kernel (runs between window edges, one-peak fast path) against a plain dense computation', () => {
  it('gives χ², JᵀWJ and JᵀW(y − model) of an explicit Jacobian, within 1e-12 relative, on random groups', () => {
    fc.assert(
      fc.property(problems, (problem) => {
        const model = setUpModel(problem);
        const m = model.paramCount;
        const normal = new Float64Array(m * m);
        const gradient = new Float64Array(m);
        const chi2 = model.evaluate(problem.params, normal, gradient);
        const plain = reference(model, problem.setting, problem.params);
        expect(Math.abs(chi2 - plain.chi2)).toBeLessThanOrEqual(1e-12 * plain.chi2);
        for (let a = 0; a < m; a++) {
          // Each cell against the scale of its row and column (|N_ab| ≤ √(N_aa·N_bb)).
          for (let c = 0; c < m; c++) {
            const scale = Math.sqrt(plain.normal[a * m + a] * plain.normal[c * m + c]);
            expect(Math.abs(normal[a * m + c] - plain.normal[a * m + c])).toBeLessThanOrEqual(1e-12 * scale);
          }
          const gradientScale = Math.sqrt(plain.normal[a * m + a] * plain.chi2);
          expect(Math.abs(gradient[a] - plain.gradient[a])).toBeLessThanOrEqual(1e-12 * gradientScale);
        }
      }),
      { numRuns: 150 },
    );
  });

  it('stops a trial early only once χ² reaches the limit, and is unchanged to the bit when it does not', () => {
    fc.assert(
      fc.property(problems, fc.double({ min: 0.01, max: 0.99, noNaN: true }), (problem, fraction) => {
        const model = setUpModel(problem);
        const m = model.paramCount;
        const normal = new Float64Array(m * m);
        const gradient = new Float64Array(m);
        const full = model.evaluate(problem.params, normal, gradient);
        // A limit below χ²: the partial sum returned reaches it (so the solver rejects the step).
        const partial = model.evaluate(problem.params, new Float64Array(m * m), new Float64Array(m), fraction * full);
        expect(partial).toBeGreaterThanOrEqual(fraction * full);
        expect(partial).toBeLessThanOrEqual(full);
        // A limit above χ²: the same χ², normal matrix and gradient as without one.
        const normalAbove = new Float64Array(m * m);
        const gradientAbove = new Float64Array(m);
        expect(model.evaluate(problem.params, normalAbove, gradientAbove, full * (1 + 1e-9) + 1e-300)).toBe(full);
        expect(normalAbove).toEqual(normal);
        expect(gradientAbove).toEqual(gradient);
      }),
      { numRuns: 80 },
    );
  });
});

/** SNIP as Ryan et al. define it, one comparison per point, on the LLS scale (the fine-grid path of snip.ts). */
function plainSnip(x: Float64Array, y: Float64Array, halfWidthDeg: number): Float64Array {
  const n = y.length;
  let v = Array.from(y, (value) => Math.log(Math.log(Math.sqrt((value > 0 ? value : 0) + 1) + 1) + 1));
  const window = Array.from(x, (_, i) => {
    const lo = i > 0 ? i - 1 : 0;
    const hi = i < n - 1 ? i + 1 : n - 1;
    return Math.min(Math.round(halfWidthDeg / ((x[hi] - x[lo]) / (hi - lo))), i, n - 1 - i);
  });
  for (let p = Math.max(...window); p >= 1; p--) {
    const next = v.slice();
    for (let i = p; i < n - p; i++) {
      if (window[i] < p) continue;
      const mean = (v[i - p] + v[i + p]) / 2;
      if (mean < v[i]) next[i] = mean;
    }
    v = next;
  }
  return Float64Array.from(v, (value) => {
    const root = Math.exp(Math.exp(value) - 1) - 1;
    return root * root - 1;
  });
}

describe('SNIP without the data-dependent branch', () => {
  it('equals the plain one-comparison-per-point definition to the bit (uneven steps, zeros, spikes, NaN)', () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 2 ** 30 }), fc.integer({ min: 3, max: 400 }), fc.double({ min: 0.01, max: 1, noNaN: true }), (seed, n, halfWidthDeg) => {
        const random = generator(seed);
        const x = new Float64Array(n);
        let at = 10;
        for (let i = 0; i < n; i++) x[i] = at += 0.002 + 0.02 * random();
        const y = Float64Array.from(x, () => {
          const r = random();
          return r < 0.02 ? Number.NaN : r < 0.05 ? 0 : r < 0.1 ? 1e5 * random() : 100 * random();
        });
        expect(snipBackground(x, y, { clippingHalfWidthDeg: halfWidthDeg })).toEqual(plainSnip(x, y, halfWidthDeg));
      }),
      { numRuns: 200 },
    );
  });
});

describe('Kα2 stripping with one shared Kα1 source angle per point', () => {
  it('strips and carries the variance exactly as with the angles worked out in each call', () => {
    const x = Float64Array.from({ length: 2000 }, (_, i) => 5 + 0.04 * i);
    const random = generator(99);
    const y = Float64Array.from(x, () => 1000 * random() ** 3);
    const sources = kAlpha1Sources(x, CU) as Float64Array;
    expect(stripKAlpha2(x, y, CU, undefined, sources)).toEqual(stripKAlpha2(x, y, CU));
    expect(strippedVariance(x, y, CU, sources)).toEqual(strippedVariance(x, y, CU));
  });
});
