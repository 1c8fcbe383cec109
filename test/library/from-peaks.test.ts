import { describe, expect, it } from 'vitest';
import { InputError } from '../../src/core/errors.js';
import { referenceFromPeaks } from '../../src/core/library/from-peaks.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import type { FittedPeak } from '../../src/core/model/peak.js';

function peak(d: number, area: number): FittedPeak {
  return {
    twoTheta: 0, twoThetaSigma: 0, d, height: area, heightSigma: 0, area, areaSigma: 0, fwhm: 0.1, fwhmSigma: 0,
    integralBreadth: 0.12, integralBreadthSigma: 0, eta: 0.5, etaSigma: 0, group: 0, groupChi2: 1, overlapped: false,
  };
}

describe('a reference from a measured pure-phase pattern', () => {
  it('takes d from each fitted peak and scales the areas so the largest is 100', () => {
    const ref = referenceFromPeaks([peak(2.0, 50), peak(3.0, 200), peak(1.5, 20)], {
      name: 'product, batch 7',
      source: 'own measurement, 2024 lab diffractometer',
      tags: ['target'],
      wavelength: anodeWavelength('Cu'),
    });
    expect(ref.lines).toEqual([
      { d: 3.0, intensity: 100 },
      { d: 2.0, intensity: 25 },
      { d: 1.5, intensity: 10 },
    ]);
    expect(ref.intensityBasis).toMatch(/fitted peak areas.*Cu/);
  });

  it('leaves out weak peaks on request and refuses a pattern with no usable peak', () => {
    const ref = referenceFromPeaks([peak(3, 100), peak(2, 4)], { name: 'x', source: 'y', minRelativeIntensity: 5 });
    expect(ref.lines).toHaveLength(1);
    expect(() => referenceFromPeaks([peak(3, 0)], { name: 'x', source: 'y' })).toThrow(InputError);
    expect(() => referenceFromPeaks([peak(3, 10)], { name: 'x', source: '' })).toThrow(/source is empty/);
  });
});
