/**
 * The analysis settings' checks (core/analysis/settings.ts, plain code since issue 15 took the schema
 * library off the peak path): each kind of field keeps the sentence it gave before, the flag named first.
 */
import { describe, expect, it } from 'vitest';
import { resolveAnalysisSettings } from '../../src/core/analysis/settings.js';
import { settingsFromFlags } from '../../src/cli/common/settings-flags.js';

const messageOf = (work: () => unknown): string => {
  try {
    work();
  } catch (err) {
    return (err as Error).message;
  }
  return 'no error';
};

describe('analysis settings checks', () => {
  it('names the flag and gives the range sentence for numbers, whole numbers and text', () => {
    expect(messageOf(() => settingsFromFlags({ tolerance: '2' }))).toBe('option --tolerance 2: matching tolerance must be between 0.005 and 1 ° 2θ at Cu Kα (such as 0.1)');
    expect(messageOf(() => settingsFromFlags({ threshold: 'many' }))).toBe('option --threshold many: peak detection threshold must be between 1 and 100 σ above the background (such as 3)');
    expect(messageOf(() => settingsFromFlags({ phaseLimit: '2.5' }))).toBe('option --phase-limit 2.5: phase limit must be between 1 and 50 phases (such as 12)');
    expect(messageOf(() => settingsFromFlags({ target: '  ' }))).toBe('option --target: Too small: expected string to have >=1 characters');
    expect(messageOf(() => settingsFromFlags({ wavelength: 'x'.repeat(21) }))).toBe(`option --wavelength ${'x'.repeat(21)}: Too big: expected string to have <=20 characters`);
  });

  it('takes K as a number in range or a preset name in any case, and says which when neither', () => {
    expect(settingsFromFlags({ k: ' CUBES ' }).k).toBe('cubes');
    expect(settingsFromFlags({ k: '1,1' }).k).toBe(1.1);
    expect(messageOf(() => settingsFromFlags({ k: '3' }))).toBe('option --k 3: Scherrer K must be between 0.5 and 2 (such as 0.9)');
    expect(messageOf(() => settingsFromFlags({ k: 'Infinity' }))).toMatch(/^option --k Infinity: Scherrer K must be between 0\.5 and 2 \(such as 0\.9\), or one of default, spheres, cubes/);
    expect(messageOf(() => settingsFromFlags({ k: 'round' }))).toBe('option --k round: Invalid input');
  });

  it('reports the first failing field in table order, and unknown fields by name', () => {
    expect(messageOf(() => settingsFromFlags({ threshold: '0', tolerance: '5', breadth: 'half' }))).toMatch(/^option --tolerance 5:/);
    expect(messageOf(() => settingsFromFlags({ breadth: 'HALF' }))).toBe('option --breadth HALF: breadth must be fwhm or integral');
    expect(messageOf(() => resolveAnalysisSettings({ colour: 'red', size: 1 }))).toBe('Unrecognized keys: "colour", "size"');
    expect(messageOf(() => resolveAnalysisSettings({ wavelength: 3 }))).toBe('Invalid input: expected string, received number');
  });

  it('fills in the defaults and trims names', () => {
    const settings = settingsFromFlags({ target: ' silicon ', wavelength: ' Mo ' });
    expect(settings.target).toBe('silicon');
    expect(settings.wavelength?.lambda1).toBe(0.709317);
    expect(settings.toleranceDeg).toBe(0.1);
    expect(settings.source).toBe('ni-filter');
  });
});
