import { describe, expect, it } from 'vitest';
import { InputError } from '../../src/core/errors.js';
import { twoThetaFromD } from '../../src/core/model/units.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import {
  fitInstrumentProfile,
  instrumentProfileToJson,
  instrumentWidthAt,
  parseInstrumentProfile,
} from '../../src/core/size/instrument.js';
import { broadenedProfile, CU_KA1, fittedPeak, siliconStandard } from './fixtures.js';

const CU = anodeWavelength('Cu');

function siliconPeaks(maxTwoTheta = 130) {
  return siliconStandard()
    .lines.map((l) => twoThetaFromD(l.d, CU_KA1))
    .filter((tt) => tt < maxTwoTheta)
    .map((tt) => {
      const { fwhm, eta } = broadenedProfile(tt, null);
      return fittedPeak(tt, fwhm, eta);
    });
}

describe('instrument profile from a standard', () => {
  it('fits Caglioti widths that reproduce the standard\'s FWHM within 2 %', () => {
    const profile = fitInstrumentProfile(siliconPeaks(), siliconStandard(), { wavelength: CU, name: 'lab-1', date: '2025-01-01' });
    expect(profile.residuals.length).toBe(9);
    for (const tt of [30, 60, 90, 120]) {
      const truth = broadenedProfile(tt, null);
      const at = instrumentWidthAt(profile, tt);
      expect(Math.abs(at.fwhm / truth.fwhm - 1)).toBeLessThan(0.02);
      expect(Math.abs(at.eta - truth.eta)).toBeLessThan(0.05);
    }
    expect(profile.rmsRelative).toBeLessThan(0.02);
    expect(profile.warnings).toEqual([]);
    expect(profile.name).toBe('lab-1');
    expect(profile.standard.name).toBe('silicon');
  });

  it('warns when too few peaks are available', () => {
    const peaks = siliconPeaks(60);
    const profile = fitInstrumentProfile(peaks, siliconStandard(), { wavelength: CU, name: 'short' });
    expect(peaks.length).toBe(3);
    expect(profile.warnings.some((w) => w.includes('only 3 resolved peaks'))).toBe(true);
  });

  it('warns on a poor fit', () => {
    const peaks = siliconPeaks().map((p, i) => (i === 3 ? fittedPeak(p.twoTheta, p.fwhm * 1.6, p.eta) : p));
    const profile = fitInstrumentProfile(peaks, siliconStandard(), { wavelength: CU, name: 'bad' });
    expect(profile.warnings.some((w) => w.startsWith('poor fit'))).toBe(true);
  });

  it('refuses a reference that is not a standard, and a pattern without its peaks', () => {
    const notStandard = { ...siliconStandard(), name: 'zinc oxide', formula: 'ZnO', tags: ['target'] };
    expect(() => fitInstrumentProfile(siliconPeaks(), notStandard, { wavelength: CU, name: 'x' })).toThrow(InputError);
    expect(() => fitInstrumentProfile([fittedPeak(20, 0.05, 0.3)], siliconStandard(), { wavelength: CU, name: 'x' })).toThrow(InputError);
  });

  it('round-trips through its JSON file and rejects a broken one naming the file', () => {
    const profile = fitInstrumentProfile(siliconPeaks(), siliconStandard(), { wavelength: CU, name: 'lab-1', date: '2025-01-01' });
    const back = parseInstrumentProfile(instrumentProfileToJson(profile), 'lab-1.json');
    expect(back).toEqual(profile);
    const broken = JSON.parse(instrumentProfileToJson(profile));
    broken.caglioti.u = 'wide';
    expect(() => parseInstrumentProfile(JSON.stringify(broken), 'lab-1.json')).toThrow(/lab-1\.json.*caglioti\.u/);
    expect(() => parseInstrumentProfile('{', 'x.json')).toThrow(InputError);
  });
});
