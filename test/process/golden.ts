import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';

/** Golden values made by test/golden/process/make_golden.py with scipy (versions recorded inside). */
export interface ProcessGolden {
  versions: Record<string, string>;
  savgol: { input: number[]; cases: Array<{ window: number; order: number; deriv: number; delta: number; y: number[] }> };
  find_peaks: {
    signal: number[];
    height: number[];
    prominence: number[];
    peaks: number[];
    prominences: number[];
    left_bases: number[];
    right_bases: number[];
    plateau: { signal: number[]; peaks: number[]; prominences: number[] };
  };
  curve_fit: Array<{
    x: number[];
    y: number[];
    sigma: number[];
    params: Record<'a' | 'b' | 'height' | 'position' | 'fwhm' | 'eta', number>;
    sigmas: Record<'a' | 'b' | 'height' | 'position' | 'fwhm' | 'eta', number>;
    redchi2: number;
  }>;
  widths: {
    pseudoVoigt: Array<{ fwhm: number; eta: number; numericFwhm: number; numericIntegralBreadth: number }>;
    voigt: Array<{ gaussianFwhm: number; lorentzianFwhm: number; numericFwhm: number; integralBreadth: number }>;
  };
}

export const golden: ProcessGolden = JSON.parse(
  readFileSync(fileURLToPath(new URL('../golden/process/process-golden.json', import.meta.url)), 'utf8'),
);
