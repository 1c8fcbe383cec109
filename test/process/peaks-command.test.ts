import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { peaksReport } from '../../src/cli/commands/peaks.js';
import { patternToXyText, simulatePattern } from '../../src/core/crystal/simulate.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { InputError } from '../../src/core/errors.js';
import { siliconLines } from './helpers.js';

const dir = mkdtempSync(join(tmpdir(), 'crystallog-peaks-cli-'));

function writeSilicon(name: string): string {
  const pattern = simulatePattern({
    phases: [{ lines: siliconLines(5.43159), scale: 1 }],
    wavelength: anodeWavelength('Cu'),
    twoThetaMinDeg: 20,
    twoThetaMaxDeg: 60,
    stepDeg: 0.01,
    peakCounts: 10000,
    noiseSeed: 3,
  });
  const file = join(dir, name);
  writeFileSync(file, patternToXyText(pattern, ['simulated silicon, Cu Kα']));
  return file;
}

describe('crystallog peaks', () => {
  it('reports the contract fields: file, points, wavelength, and per peak 2θ ± σ, d, height, area, FWHM, breadth, η', () => {
    const file = writeSilicon('si.xy');
    const report = peaksReport(file, {});
    expect(report.file).toBe(file);
    expect(report.points).toBe(4001);
    // No wavelength in a plain xy file: Cu Kα1/Kα2 (CLI contract default).
    expect(report.wavelength).toMatchObject({ lambda1: 1.5405929, lambda2: 1.544414, ratio: 0.5 });
    expect(report.peaks.map((p) => p.twoTheta.toFixed(2))).toEqual(['28.44', '47.30', '56.11']);
    for (const p of report.peaks) {
      for (const key of ['twoTheta', 'twoThetaSigma', 'd', 'height', 'area', 'fwhm', 'integralBreadth', 'eta'] as const) expect(Number.isFinite(p[key])).toBe(true);
    }
    expect(JSON.parse(JSON.stringify(report))).toEqual(report);
  });

  it('uses the wavelength option over the default', () => {
    const report = peaksReport(writeSilicon('si2.xy'), { wavelength: '1.5406' });
    expect(report.wavelength).toMatchObject({ lambda1: 1.5406, lambda2: null, source: 'option' });
  });

  it('turns a bad option or a missing file into a user error naming it', () => {
    expect(() => peaksReport(join(dir, 'missing.xy'), {})).toThrow(InputError);
    expect(() => peaksReport(writeSilicon('si3.xy'), { threshold: '-1' })).toThrow(/--threshold/);
  });
});
