/**
 * Whole-chain checks on simulated patterns: a silicon standard and a cubic phase of known crystallite
 * size (Lorentzian size broadening, Scherrer K = 0.9) convolved with a known instrument profile, with
 * Poisson noise; peaks found and fitted by findPeaks, then the instrument profile and the sizes.
 */
import { describe, expect, it } from 'vitest';
import { simulatePattern, TYPICAL_LAB_INSTRUMENT } from '../../src/core/crystal/simulate.js';
import type { ReferenceLine } from '../../src/core/model/reference.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { findPeaks } from '../../src/core/process/peaks.js';
import { analyzeSeries } from '../../src/core/series/series.js';
import { fitInstrumentProfile, instrumentWidthAt } from '../../src/core/size/instrument.js';
import { crystalliteSizes, type SizeResult } from '../../src/core/size/sizes.js';
import { broadenedProfile, cubicPhase, siliconStandard } from './fixtures.js';

const CU = anodeWavelength('Cu');
const STEP_DEG = 0.02;
const phase = cubicPhase();
const INTENSITIES = [100, 60, 30, 45, 20, 25, 15, 12, 20, 10, 8, 14, 9, 7, 6, 5, 10, 6, 5, 4];
const lines: ReferenceLine[] = phase.lines.map((l, i) => ({ ...l, intensity: INTENSITIES[i] ?? 5 }));
const sizePhase = { name: phase.name, version: 1, lines };

const standardPattern = simulatePattern({
  phases: [{ lines: siliconStandard().lines, scale: 1 }],
  wavelength: CU,
  twoThetaMinDeg: 20,
  twoThetaMaxDeg: 120,
  stepDeg: STEP_DEG,
  peakCounts: 20000,
  noiseSeed: 1,
  instrument: TYPICAL_LAB_INSTRUMENT,
  name: 'silicon standard (simulated)',
});
const instrument = fitInstrumentProfile(findPeaks(standardPattern, { wavelength: CU }).peaks, siliconStandard(), {
  wavelength: CU,
  name: 'typical lab instrument (simulated)',
});

function sizesOf(sizeNm: number, seed: number): SizeResult {
  const pattern = simulatePattern({
    phases: [{ lines, scale: 1, sizeNm }],
    wavelength: CU,
    twoThetaMinDeg: 15,
    twoThetaMaxDeg: 115,
    stepDeg: STEP_DEG,
    peakCounts: 10000,
    noiseSeed: seed,
    instrument: TYPICAL_LAB_INSTRUMENT,
  });
  return crystalliteSizes(findPeaks(pattern, { wavelength: CU }).peaks, { wavelength: CU, instrument, phase: sizePhase });
}

describe('instrument profile from a simulated silicon standard', () => {
  it('reproduces the simulated instrument widths within 2 % over the standard\'s range', () => {
    expect(instrument.warnings).toEqual([]);
    for (const tt of [30, 50, 70, 90, 110]) {
      expect(Math.abs(instrumentWidthAt(instrument, tt).fwhm / broadenedProfile(tt, null).fwhm - 1)).toBeLessThan(0.02);
    }
  });
});

describe('sizes recovered from simulated patterns (issue targets)', () => {
  for (const [sizeNm, tolerance, seed] of [
    [5, 0.1, 11],
    [10, 0.05, 12],
    [20, 0.05, 13],
    [40, 0.05, 14],
    [80, 0.05, 15],
    [120, 0.1, 16],
  ] as const) {
    it(`recovers ${sizeNm} nm within ${tolerance * 100} %`, () => {
      const r = sizesOf(sizeNm, seed);
      expect(r.scherrer.limit).toBeNull();
      expect(Math.abs(r.scherrer.sizeNm! / sizeNm - 1)).toBeLessThan(tolerance);
    });
  }

  it('reports a 1 µm crystallite as beyond the resolvable range', () => {
    const r = sizesOf(1000, 17);
    expect(r.scherrer.limit).toBe('instrument');
    expect(r.scherrer.statement).toMatch(/^larger than \d+ nm/);
  });
});

describe('series of simulated variants', () => {
  const sample = (label: string, sizeNm: number, seed: number) => ({
    label,
    file: `${label} (simulated)`,
    verdict: 'present',
    lowAnglePeaks: [],
    otherPhases: [],
    size: sizesOf(sizeNm, seed),
  });

  it('three variants simulated at 30 nm do not differ', () => {
    const r = analyzeSeries([sample('as made', 30, 21), sample('ground', 30, 22), sample('washed', 30, 23)]);
    expect(r.comparison.pairs.map((p) => p.differs)).toEqual([false, false, false]);
  });

  it('20 nm and 40 nm differ', () => {
    const r = analyzeSeries([sample('small', 20, 24), sample('large', 40, 25)]);
    expect(r.comparison.pairs[0].differs).toBe(true);
  });
});
