/**
 * A Scherrer K preset carries its breadth (Langford & Wilson, J. Appl. Cryst. 11, 102 (1978)):
 * named alone it brings its breadth, named with the other breadth it is refused — never used silently
 * with the wrong one.
 */
import { describe, expect, it } from 'vitest';
import { resolveAnalysisSettings } from '../../src/core/analysis/settings.js';
import { isInputError } from '../../src/core/errors.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { crystalliteSizes } from '../../src/core/size/sizes.js';

describe('Scherrer K presets and their breadth', () => {
  it('a preset named alone brings its own breadth', () => {
    expect(resolveAnalysisSettings({ k: 'sphere-integral' }).breadth).toBe('integral');
    expect(resolveAnalysisSettings({ k: 'column-length' }).breadth).toBe('integral');
    expect(resolveAnalysisSettings({ k: 'sphere-fwhm' }).breadth).toBe('fwhm');
  });

  it('a preset named with the other breadth is refused with a sentence naming both', () => {
    let caught: unknown;
    try {
      resolveAnalysisSettings({ k: 'sphere-integral', breadth: 'fwhm' }, { k: '--k' });
    } catch (err) {
      caught = err;
    }
    expect(isInputError(caught)).toBe(true);
    expect((caught as Error).message).toBe(
      '--k: the Scherrer K preset "sphere-integral" (K = 1.0747) belongs with the integral breadth, not the FWHM; choose a K for the FWHM or leave the breadth to the preset',
    );
    expect(() => resolveAnalysisSettings({ k: 'spheres', breadth: 'integral' })).toThrow(/belongs with the FWHM/);
  });

  it('a number is taken with the breadth given, as before', () => {
    const s = resolveAnalysisSettings({ k: 1.0747, breadth: 'fwhm' });
    expect([s.k, s.breadth]).toEqual([1.0747, 'fwhm']);
  });

  it('the size module refuses a preset with the other breadth too', () => {
    expect(() => crystalliteSizes([], { wavelength: anodeWavelength('Cu'), k: 'column-length', breadth: 'fwhm' })).toThrow(/belongs with the integral breadth/);
    expect(crystalliteSizes([], { wavelength: anodeWavelength('Cu'), k: 'column-length' }).breadth).toBe('integral');
  });
});
