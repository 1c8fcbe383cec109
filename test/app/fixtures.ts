import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { patternToXyText, simulatePattern } from '../../src/core/crystal/simulate.js';
import type { Reference } from '../../src/core/model/reference.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { createAppApi } from '../../src/app/api.js';

/** A fresh app-data folder per test file. */
export function freshDataDir(prefix = 'crystallog-app-'): string {
  return mkdtempSync(join(tmpdir(), prefix));
}

/**
 * Silicon: d from a = 5.43159 Å (NIST SRM 640d, Black et al., Powder Diffraction 25, 187 (2010));
 * relative intensities 100, 55, 30, 6, 11, 12 for 111, 220, 311, 400, 331, 422 (from memory).
 */
export const SILICON: Reference = {
  name: 'silicon test',
  formula: 'Si',
  tags: ['standard'],
  source: 'test fixture: d from NIST SRM 640d cell; intensities from memory',
  lines: [
    { hkl: [1, 1, 1], intensity: 100 },
    { hkl: [2, 2, 0], intensity: 55 },
    { hkl: [3, 1, 1], intensity: 30 },
    { hkl: [4, 0, 0], intensity: 6 },
    { hkl: [3, 3, 1], intensity: 11 },
    { hkl: [4, 2, 2], intensity: 12 },
  ].map(({ hkl, intensity }) => ({ d: 5.43159 / Math.hypot(...hkl), intensity, hkl: hkl as [number, number, number] })),
};

/** A simulated silicon pattern (with an optional extra low-angle line) as the bytes of a two-column file. */
export function siliconPatternText(options: { sizeNm?: number; extraLowAngleD?: number; extraScale?: number; points?: number; seed?: number; xDecimals?: number } = {}): string {
  const points = options.points ?? 6001;
  const min = 5;
  const max = 90;
  const phases = [{ lines: SILICON.lines, scale: 1, sizeNm: options.sizeNm ?? 40 }];
  if (options.extraLowAngleD) phases.push({ lines: [{ d: options.extraLowAngleD, intensity: 100 }], scale: options.extraScale ?? 0.25, sizeNm: 40 });
  const pattern = simulatePattern({
    phases,
    wavelength: anodeWavelength('Cu'),
    twoThetaMinDeg: min,
    twoThetaMaxDeg: max,
    stepDeg: (max - min) / (points - 1),
    peakCounts: 5000,
    noiseSeed: options.seed ?? 5,
    name: 'silicon.xy',
  });
  return patternToXyText(pattern, ['simulated silicon for tests'], { xDecimals: options.xDecimals ?? 4 });
}

export const b64 = (text: string): string => Buffer.from(text, 'utf8').toString('base64');

/** The app's API in a fresh data folder, and `ok`: a method's result, or its sentence thrown. */
export function testApi(prefix?: string) {
  const dataDir = freshDataDir(prefix);
  const api = createAppApi({ mode: 'browser', dataDir });
  const ok = async <T>(method: string, params: unknown): Promise<T> => {
    const reply = await api.call(method, params);
    if (!reply.ok) throw new Error(`${method}: ${reply.error.message}`);
    return reply.result as T;
  };
  return { dataDir, api, ok };
}
