import { describe, expect, it } from 'vitest';
import { twoThetaFromD } from '../../src/core/model/units.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { crystalliteSizes } from '../../src/core/size/sizes.js';
import { broadenedProfile, CU_KA1, cubicPhase, fittedPeak, typicalInstrumentProfile } from './fixtures.js';

const CU = anodeWavelength('Cu');
const phase = cubicPhase();
const instrument = typicalInstrumentProfile();

/** Fitted peaks of the cubic test phase, broadened by the instrument, a size (Lorentzian) and a strain (Gaussian). */
function phasePeaks(sizeNm: number | null, microstrain = 0, family?: (hkl: [number, number, number]) => number | null) {
  return phase.lines.map((l) => {
    const tt = twoThetaFromD(l.d, CU_KA1);
    const size = family && l.hkl ? (family(l.hkl) ?? sizeNm) : sizeNm;
    const p = broadenedProfile(tt, size, microstrain);
    return fittedPeak(tt, p.fwhm, p.eta);
  });
}

describe('Scherrer sizes after instrument correction', () => {
  it('recovers sizes from 5 to 120 nm within 2 % on exact profiles (Voigt correction, FWHM, K = 0.9)', () => {
    for (const size of [5, 10, 20, 40, 80, 120]) {
      const r = crystalliteSizes(phasePeaks(size), { wavelength: CU, instrument, phase });
      expect(r.scherrer.limit).toBeNull();
      expect(Math.abs(r.scherrer.sizeNm! / size - 1)).toBeLessThan(0.02);
      expect(r.scherrer.sizeSigmaNm).toBeGreaterThan(0);
      expect(r.peaks.every((p) => p.hkl !== null && p.limit === null)).toBe(true);
    }
  });

  it('reports a 1 µm crystallite as larger than the resolvable size, never as a number', () => {
    const r = crystalliteSizes(phasePeaks(1000), { wavelength: CU, instrument, phase });
    expect(r.scherrer.limit).toBe('instrument');
    expect(r.scherrer.sizeSigmaNm).toBeNull();
    expect(r.scherrer.sizeNm!).toBeLessThan(1000);
    expect(r.scherrer.statement).toMatch(/^larger than \d+ nm/);
    expect(r.peaks.every((p) => p.limit === 'instrument' && p.statement.startsWith('larger than'))).toBe(true);
    expect(r.williamsonHall).toBeNull();
  });

  it('marks unresolved peaks as overlap and gives them no size', () => {
    const peaks = phasePeaks(30);
    peaks[2] = { ...peaks[2], overlapped: true };
    const r = crystalliteSizes(peaks, { wavelength: CU, instrument, phase });
    const flagged = r.peaks.find((p) => Math.abs(p.twoTheta - peaks[2].twoTheta) < 1e-9)!;
    expect(flagged.limit).toBe('overlap');
    expect(flagged.sizeNm).toBeNull();
    expect(r.scherrer.peaksUsed).toBe(peaks.length - 1);
  });

  it('uses only the lines of the chosen phase and labels them with hkl', () => {
    const peaks = [...phasePeaks(30), fittedPeak(17.3, 0.3, 0.5)].sort((a, b) => a.twoTheta - b.twoTheta);
    const r = crystalliteSizes(peaks, { wavelength: CU, instrument, phase });
    expect(r.peaks.length).toBe(phase.lines.length);
    expect(r.peaks.some((p) => Math.abs(p.twoTheta - 17.3) < 0.01)).toBe(false);
    expect(r.peaks[0].hkl).toEqual([1, 0, 0]);
    expect(r.settings.phase).toEqual({ name: 'test cubic', version: null });
  });

  it('gives sizes from the integral breadth and the Lorentzian and Gaussian corrections on request', () => {
    const peaks = phasePeaks(20);
    for (const correction of ['lorentzian', 'gaussian', 'voigt'] as const) {
      for (const breadth of ['fwhm', 'integral'] as const) {
        const r = crystalliteSizes(peaks, { wavelength: CU, instrument, phase, correction, breadth, k: breadth === 'integral' ? 'column-length' : 0.9 });
        expect(r.correction).toBe(correction);
        expect(r.breadth).toBe(breadth);
        expect(r.scherrer.sizeNm).toBeGreaterThan(10);
        expect(r.scherrer.sizeNm).toBeLessThan(40);
      }
    }
    // The Lorentzian correction leaves a Voigt's Gaussian part in the sample (too small a subtraction): larger sizes than the Gaussian one.
    const lor = crystalliteSizes(peaks, { wavelength: CU, instrument, phase, correction: 'lorentzian' }).scherrer.sizeNm!;
    const gau = crystalliteSizes(peaks, { wavelength: CU, instrument, phase, correction: 'gaussian' }).scherrer.sizeNm!;
    expect(lor).toBeGreaterThan(gau);
  });

  it('without an instrument profile says the sizes are uncorrected lower bounds', () => {
    const r = crystalliteSizes(phasePeaks(40), { wavelength: CU, phase });
    expect(r.correction).toBe('none');
    expect(r.scherrer.sizeNm!).toBeLessThan(40);
    expect(r.warnings.some((w) => w.startsWith('no instrument profile'))).toBe(true);
  });

  it('always carries the caution that these are not microscopy particle sizes', () => {
    const r = crystalliteSizes(phasePeaks(40), { wavelength: CU, instrument, phase });
    expect(r.cautions.join(' ')).toMatch(/volume-weighted apparent/);
    expect(r.cautions.join(' ')).toMatch(/microscopy/);
  });

  it('records the settings used', () => {
    const r = crystalliteSizes(phasePeaks(40), { wavelength: CU, instrument, phase, k: 'cubes' });
    expect(r.settings).toMatchObject({ k: 0.94, breadth: 'fwhm', correction: 'voigt', toleranceDeg: 0.1 });
    expect(r.settings.instrument?.name).toBe(instrument.name);
    expect(r.settings.kSource).toMatch(/Langford/);
  });
});

describe('size and strain together', () => {
  it('Voigt single-line analysis separates size (Lorentzian) and strain (Gaussian) within 5 %', () => {
    const r = crystalliteSizes(phasePeaks(40, 0.002), { wavelength: CU, instrument, phase });
    expect(Math.abs(r.singleLine!.sizeNm! / 40 - 1)).toBeLessThan(0.05);
    expect(Math.abs(r.singleLine!.strain! / 0.002 - 1)).toBeLessThan(0.1);
    // Scherrer puts all the breadth on size: with strain present it is a lower bound.
    expect(r.scherrer.sizeNm!).toBeLessThan(40);
  });

  it('Williamson–Hall finds a clear positive strain and a size above the Scherrer one', () => {
    const r = crystalliteSizes(phasePeaks(40, 0.002), { wavelength: CU, instrument, phase });
    const wh = r.williamsonHall!;
    expect(wh.strain).toBeGreaterThan(10 * wh.strainSigma);
    expect(wh.sizeNm!).toBeGreaterThan(r.scherrer.sizeNm!);
    expect(wh.r2).toBeGreaterThan(0.95);
  });

  it('notices anisotropic broadening when one hkl family is broader than the rest', () => {
    const r = crystalliteSizes(
      phasePeaks(60, 0, (hkl) => (hkl[1] === 0 && hkl[2] === 0 ? 15 : null)),
      { wavelength: CU, instrument, phase },
    );
    expect(r.williamsonHall!.anisotropy!.detected).toBe(true);
    expect(r.williamsonHall!.anisotropy!.statement).toMatch(/\{1 0 0\}[^;]*broader/);
    const isotropic = crystalliteSizes(phasePeaks(60), { wavelength: CU, instrument, phase });
    expect(isotropic.williamsonHall!.anisotropy!.detected).toBe(false);
  });
});
