/**
 * Accuracy of sizes and strains on patterns from the independent true-Voigt simulator (test/simulator):
 * the whole chain (findPeaks, the instrument profile fitted on a simulated standard, crystalliteSizes)
 * against the simulated truth. Rates are printed beside the targets of the issue they answer.
 */
import { describe, expect, it } from 'vitest';
import { cubicReference } from './support.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { findPeaks } from '../../src/core/process/peaks.js';
import { fitInstrumentProfile } from '../../src/core/size/instrument.js';
import { crystalliteSizes, type SizeResult } from '../../src/core/size/sizes.js';
import { faceCentredClasses, simulatePowderPattern, type CubicPhase } from '../simulator/pattern.js';

const CU = anodeWavelength('Cu');
const RANGE = { twoThetaMinDeg: 20, twoThetaMaxDeg: 130, stepDeg: 0.02 };


// A well-crystallised face-centred cubic standard (a = 4.157 Å) fixes the instrument profile.
const STANDARD_CLASSES = new Map(faceCentredClasses(60).map((s, i) => [s, 100 / (1 + 0.3 * i)]));
const standardPattern = simulatePowderPattern({ phases: [{ a: 4.157, intensities: STANDARD_CLASSES }], ...RANGE, peakCounts: 40000, backgroundCounts: 100, seed: 1, name: 'line-profile standard' });
const instrument = fitInstrumentProfile(findPeaks(standardPattern, { wavelength: CU }).peaks, cubicReference('test standard', 4.157, STANDARD_CLASSES, ['standard']), {
  wavelength: CU,
  name: 'simulated instrument',
});

// The sample: a face-centred cubic phase (a = 5.64 Å), eleven well separated reflections in range.
const SAMPLE_A = 5.64;
const SAMPLE_CLASSES = new Map(faceCentredClasses(56).map((s, i) => [s, 100 / (1 + 0.25 * i)]));
const sample = cubicReference('test sample', SAMPLE_A, SAMPLE_CLASSES, ['target']);

function sizesOf(sizeNm: number, strain: number, seed: number, peakCounts = 20000): SizeResult {
  const phase: CubicPhase = { a: SAMPLE_A, intensities: SAMPLE_CLASSES, sizeNm, strain };
  const pattern = simulatePowderPattern({ phases: [phase], ...RANGE, peakCounts, backgroundCounts: 100, seed });
  return crystalliteSizes(findPeaks(pattern, { wavelength: CU }).peaks, { wavelength: CU, instrument, phase: { name: sample.name, lines: sample.lines }, phaseIsTarget: true });
}

const spread = (v: number[]): number => {
  const m = v.reduce((a, b) => a + b, 0) / v.length;
  return Math.sqrt(v.reduce((a, b) => a + (b - m) ** 2, 0) / (v.length - 1));
};
const mean = (v: number[]): number => v.reduce((a, b) => a + b, 0) / v.length;
const pct = (x: number): string => `${(100 * x).toFixed(1)} %`;

describe('size–strain accuracy (independent true-Voigt simulator)', () => {
  it('Halder–Wagner size within 10 % and strain within 15 % for D = 20–100 nm, ε = 0.001–0.003', () => {
    let sizeOk = 0;
    let strainOk = 0;
    let cases = 0;
    const rows: string[] = [];
    for (const d of [20, 50, 100])
      for (const e of [0.001, 0.002, 0.003]) {
        const r = sizesOf(d, e, 100 + cases);
        const hw = r.sizeStrain;
        cases++;
        if (!hw) {
          rows.push(`D ${d} ε ${e}: no result (${r.sizeStrainReason})`);
          continue;
        }
        const sizeError = hw.sizeNm! / d - 1;
        const strainError = hw.strain / e - 1;
        if (hw.limit === null && Math.abs(sizeError) < 0.1) sizeOk++;
        if (hw.strainDetected && Math.abs(strainError) < 0.15) strainOk++;
        rows.push(`D ${d} ε ${e}: ${hw.sizeNm!.toFixed(1)} nm (${pct(sizeError)}), ε ${hw.strain.toExponential(2)} (${pct(strainError)}); W–H ${r.williamsonHall?.sizeNm?.toFixed(1)} nm ε ${r.williamsonHall?.strain.toExponential(2)}`);
      }
    console.log(`${rows.join('\n')}\nHalder–Wagner size within 10 %: ${sizeOk}/${cases} (target all); strain within 15 %: ${strainOk}/${cases} (target all)`);
    expect(sizeOk).toBe(cases);
    expect(strainOk).toBe(cases);
  });

  it('strain-free controls report no strain in at least 95 % of draws', () => {
    const draws = 20;
    let quiet = 0;
    let quietWh = 0;
    for (let seed = 0; seed < draws; seed++) {
      const r = sizesOf(40, 0, 300 + seed);
      if (r.sizeStrain && !r.sizeStrain.strainDetected) quiet++;
      if (r.williamsonHall && !r.williamsonHall.strainDetected) quietWh++;
    }
    console.log(`strain-free controls with no strain detected: Halder–Wagner ${quiet}/${draws}, Williamson–Hall ${quietWh}/${draws} (target ≥ 95 %)`);
    expect(quiet / draws).toBeGreaterThanOrEqual(0.95);
    expect(quietWh / draws).toBeGreaterThanOrEqual(0.95);
  });

  it('reported σ match the spread over 20 noise draws (spread / σ within 0.7–1.5)', () => {
    const scherrer: number[] = [];
    const scherrerSigma: number[] = [];
    const hwSize: number[] = [];
    const hwSizeSigma: number[] = [];
    const hwStrain: number[] = [];
    const hwStrainSigma: number[] = [];
    for (let seed = 0; seed < 20; seed++) {
      // Scherrer on a strain-free powder (with strain its peaks disagree and the mean's σ carries that spread too).
      const free = sizesOf(40, 0, 900 + seed, 5000);
      scherrer.push(free.scherrer.sizeNm!);
      // The instrument profile is the same in every draw, so only the fit's share of σ scatters.
      scherrerSigma.push(free.scherrer.sizeSigmaFitNm!);
      const r = sizesOf(40, 0.002, 500 + seed, 5000);
      hwSize.push(r.sizeStrain!.sizeNm!);
      hwSizeSigma.push(r.sizeStrain!.sizeSigmaNm!);
      hwStrain.push(r.sizeStrain!.strain);
      hwStrainSigma.push(r.sizeStrain!.strainSigma);
    }
    const ratios = {
      scherrer: spread(scherrer) / mean(scherrerSigma),
      size: spread(hwSize) / mean(hwSizeSigma),
      strain: spread(hwStrain) / mean(hwStrainSigma),
    };
    console.log(`spread/σ over 20 draws: Scherrer size ${ratios.scherrer.toFixed(2)}, Halder–Wagner size ${ratios.size.toFixed(2)}, strain ${ratios.strain.toFixed(2)} (target 0.7–1.5)`);
    for (const value of Object.values(ratios)) {
      expect(value).toBeGreaterThan(0.7);
      expect(value).toBeLessThan(1.5);
    }
  });

  // Target ±2 % from 5 to 150 nm. A pseudo-Voigt fit of a true-Voigt line leaves a small spurious Gaussian
  // excess over the instrument's, which biased 120–150 nm by −2 to −2.5 %; a sample Gaussian part below 2σ is
  // now left out of the Scherrer breadth (sizes.ts), measured −1.0 % and −1.2 % there.
  it('Scherrer sizes of strain-free powders are unbiased within ±2 % from 5 to 150 nm', () => {
    const rows: string[] = [];
    let within = 0;
    const sizes = [5, 10, 20, 40, 80, 120, 150];
    for (const d of sizes) {
      const values: number[] = [];
      for (let seed = 0; seed < 4; seed++) values.push(sizesOf(d, 0, 700 + 10 * d + seed).scherrer.sizeNm!);
      const bias = mean(values) / d - 1;
      if (Math.abs(bias) <= 0.02) within++;
      rows.push(`${d} nm: ${pct(bias)}`);
    }
    console.log(`Scherrer size bias (mean of 4 draws): ${rows.join(', ')}; within ±2 %: ${within}/${sizes.length} (target ±2 % throughout)`);
    expect(within).toBe(sizes.length);
  });
});
