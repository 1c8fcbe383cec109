import { describe, expect, it } from 'vitest';
import { findPeaks } from '../../src/core/process/peaks.js';
import { simulatePattern } from '../../src/core/crystal/simulate.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { dFromTwoTheta } from '../../src/core/model/units.js';
import { InputError } from '../../src/core/errors.js';
import { patternOf, siliconLines } from './helpers.js';

const CU = anodeWavelength('Cu');
// NIST SRM 640d silicon, a = 5.43159 Å (Black et al., Powder Diffraction 25, 187 (2010)).
const SILICON_A = 5.43159;
// 111, 220, 311, 400, 331, 422 for Cu Kα1 = 1.5405929 Å (project CHECK-VALUES, from Black et al. 2010 with Bragg's law).
const SILICON_TWO_THETA = [28.4388, 47.2966, 56.1149, 69.1203, 76.3652, 88.0166];

function silicon(noiseSeed?: number) {
  return simulatePattern({
    phases: [{ lines: siliconLines(SILICON_A), scale: 1 }],
    wavelength: CU,
    twoThetaMinDeg: 20,
    twoThetaMaxDeg: 92,
    stepDeg: 0.01,
    peakCounts: 20000,
    noiseSeed,
    name: 'simulated SRM 640d',
  });
}

function nearest(peaks: { twoTheta: number }[], tt: number) {
  return peaks.reduce((best, p) => (Math.abs(p.twoTheta - tt) < Math.abs(best.twoTheta - tt) ? p : best));
}

describe('peak search on simulated NIST SRM 640d silicon (Cu Kα1/Kα2)', () => {
  it('puts the Kα1 peaks within 0.002° of the certified-lattice positions without noise', () => {
    const result = findPeaks(silicon(), { wavelength: CU });
    // One peak per line: the Kα2 partners are part of the model, not peaks of their own.
    expect(result.peaks).toHaveLength(SILICON_TWO_THETA.length);
    for (const tt of SILICON_TWO_THETA) expect(Math.abs(nearest(result.peaks, tt).twoTheta - tt)).toBeLessThan(0.002);
  });

  it('puts them within 0.005° with Poisson noise at 20 000 counts peak, with honest uncertainties', () => {
    for (const seed of [11, 12, 13]) {
      const result = findPeaks(silicon(seed), { wavelength: CU });
      expect(result.peaks).toHaveLength(SILICON_TWO_THETA.length);
      for (const tt of SILICON_TWO_THETA) {
        const peak = nearest(result.peaks, tt);
        expect(Math.abs(peak.twoTheta - tt)).toBeLessThan(0.005);
        expect(Math.abs(peak.twoTheta - tt)).toBeLessThan(5 * peak.twoThetaSigma);
        expect(peak.d).toBeCloseTo(dFromTwoTheta(peak.twoTheta, CU.lambda1), 12);
        expect(peak.groupChi2).toBeGreaterThan(0.7);
        expect(peak.groupChi2).toBeLessThan(1.4);
      }
    }
  });

  it('returns background and model on the pattern grid, model above background under the peaks', () => {
    const pattern = silicon(5);
    const result = findPeaks(pattern, { wavelength: CU });
    expect(result.points).toBe(pattern.x.length);
    expect(result.background).toHaveLength(pattern.x.length);
    expect(result.model).toHaveLength(pattern.x.length);
    const i = Math.round((28.4388 - 20) / 0.01);
    expect(result.model[i] - result.background[i]).toBeGreaterThan(0.9 * result.peaks[0].height);
    for (const p of result.peaks) for (const q of ['twoThetaSigma', 'heightSigma', 'areaSigma', 'fwhmSigma', 'etaSigma'] as const) expect(Number.isFinite(p[q])).toBe(true);
  });
});

describe('noise and weak peaks (3σ above background, σ = √background counts)', () => {
  it('finds no peak in featureless patterns (flat or sloping background, Poisson noise, 3 to 1000 counts)', () => {
    for (const [seed, level] of [[1, 3], [2, 10], [3, 60], [4, 60], [5, 1000], [6, 400]]) {
      const pattern = simulatePattern({
        phases: [],
        wavelength: CU,
        twoThetaMinDeg: 5,
        twoThetaMaxDeg: 90,
        stepDeg: 0.01,
        peakCounts: 0,
        noiseSeed: seed,
        background: (tt) => level * (1 + 2 * Math.exp(-tt / 10)),
      });
      expect(findPeaks(pattern, { wavelength: CU }).peaks).toEqual([]);
    }
  });

  it('finds a weak peak standing 4σ above a 100-count background in at least 9 of 10 noise draws', () => {
    const d = dFromTwoTheta(30, CU.lambda1);
    let found = 0;
    for (let seed = 1; seed <= 10; seed++) {
      const pattern = simulatePattern({
        phases: [{ lines: [{ d, intensity: 100 }], scale: 1 }],
        wavelength: CU,
        twoThetaMinDeg: 20,
        twoThetaMaxDeg: 40,
        stepDeg: 0.01,
        peakCounts: 40, // 4σ with σ = √100
        noiseSeed: 100 + seed,
        background: () => 100,
      });
      const peaks = findPeaks(pattern, { wavelength: CU }).peaks;
      if (peaks.some((p) => Math.abs(p.twoTheta - 30) < 0.03)) found++;
      expect(peaks.filter((p) => Math.abs(p.twoTheta - 30) >= 0.03)).toEqual([]);
    }
    expect(found).toBeGreaterThanOrEqual(9);
  });

  it('finds a weak low-angle peak (a hydrolysis product, say) at 5σ beside strong silicon peaks', () => {
    const weakD = dFromTwoTheta(9.5, CU.lambda1);
    const make = (weakIntensity: number, noiseSeed?: number) =>
      simulatePattern({
        phases: [{ lines: [...siliconLines(SILICON_A), { d: weakD, intensity: weakIntensity }], scale: 1 }],
        wavelength: CU,
        twoThetaMinDeg: 5,
        twoThetaMaxDeg: 60,
        stepDeg: 0.01,
        peakCounts: 20000,
        noiseSeed,
        background: () => 100,
      });
    // The simulation scales to the tallest peak: measure the weak line's height once, then set it to 5σ = 50 counts.
    const probe = make(1);
    const top = probe.y[Math.round((9.5 - 5) / 0.01)] - 100;
    const result = findPeaks(make(50 / top, 21), { wavelength: CU });
    expect(result.peaks.find((p) => Math.abs(p.twoTheta - 9.5) < 0.03)).toBeDefined();
    expect(result.peaks.filter((p) => p.twoTheta < 20)).toHaveLength(1);
  });
});

describe('noise-free patterns', () => {
  it('reports exactly one peak per line, none beside the strong lines', () => {
    const positions = [18.3, 24.1, 29.7, 31.2, 35.9, 43.5, 47.0, 52.8, 57.4, 63.0, 66.1, 74.7];
    const intensities = [100, 35, 80, 20, 60, 15, 45, 30, 12, 25, 8, 18];
    const lines = positions.map((tt, i) => ({ d: dFromTwoTheta(tt, CU.lambda1), intensity: intensities[i] }));
    for (const [peakCounts, sizeNm, stepDeg, flat] of [
      [1e6, 20, 0.005, false],
      [1e5, 60, 0.02, true],
      [2e4, 80, 0.01, false],
    ] as const) {
      const pattern = simulatePattern({
        phases: [{ lines, scale: 1, sizeNm }],
        wavelength: CU,
        twoThetaMinDeg: 10,
        twoThetaMaxDeg: 80,
        stepDeg,
        peakCounts,
        background: flat ? () => 0 : undefined,
      });
      const peaks = findPeaks(pattern, { wavelength: CU }).peaks;
      expect(peaks).toHaveLength(positions.length);
      for (const tt of positions) expect(Math.abs(nearest(peaks, tt).twoTheta - tt)).toBeLessThan(0.01);
    }
  });

  it('fits broad, overlapping Lorentzian peaks (5 nm crystallites) with their widths, not a background that ate their tails', () => {
    const positions = [21.1, 30.1, 37.0, 43.0, 48.4, 53.4, 62.5];
    const lines = positions.map((tt, i) => ({ d: dFromTwoTheta(tt, CU.lambda1), intensity: [100, 60, 30, 45, 20, 25, 15][i] }));
    const pattern = simulatePattern({ phases: [{ lines, scale: 1, sizeNm: 5 }], wavelength: CU, twoThetaMinDeg: 10, twoThetaMaxDeg: 80, stepDeg: 0.02, peakCounts: 10000 });
    const peaks = findPeaks(pattern, { wavelength: CU }).peaks;
    expect(peaks).toHaveLength(positions.length);
    for (const tt of positions.slice(0, 4)) {
      // Scherrer width 0.9λ/(L cosθ) (Scherrer 1918) dominates the simulated instrument's 0.05°.
      const sizeWidth = (0.9 * CU.lambda1) / (50 * Math.cos((tt / 2) * (Math.PI / 180))) / (Math.PI / 180);
      expect(Math.abs(nearest(peaks, tt).fwhm / sizeWidth - 1)).toBeLessThan(0.05);
    }
  });
});

describe('bad input', () => {
  it('names the file when 2θ does not increase', () => {
    const p = patternOf([10, 10.01, 10.02, 10.02, 10.04, 10.05, 10.06, 10.07, 10.08, 10.09, 10.1], new Array(11).fill(5));
    p.source.file = 'broken.xy';
    expect(() => findPeaks(p, { wavelength: CU })).toThrow(InputError);
    expect(() => findPeaks(p, { wavelength: CU })).toThrow(/broken\.xy.*point 4/);
  });

  it('refuses a pattern too short to search', () => {
    expect(() => findPeaks(patternOf([1, 2, 3], [1, 2, 3]), { wavelength: CU })).toThrow(/too few/);
  });
});

describe('a pattern too short to search', () => {
  it('says where its data ends', async () => {
    const { readPatternBytes } = await import('../../src/core/pattern/read.js');
    const short = readPatternBytes(new TextEncoder().encode('# six points\n10 1\n11 2\n12 3\n13 2\n14 1\n15 1\n'), 'short.xy');
    expect(() => findPeaks(short, { wavelength: anodeWavelength('Cu') })).toThrow(/^short\.xy, line 7: 6 points are too few to search for peaks \(the data ends at line 7\)/);
  });
});
