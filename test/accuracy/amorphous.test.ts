/**
 * Amorphous content from an internal standard spiked at a known weight (Chung, J. Appl. Cryst. 7, 519
 * (1974)), on patterns from the independent true-Voigt simulator: crystalline phases at weight fractions
 * w_i scaled by w_i·RIR_i (Chung's I_i ∝ w_i·RIR_i), the amorphous rest as a broad hump.
 */
import { describe, expect, it } from 'vitest';
import { analyzePattern, createAnalysisContext } from '../../src/core/analysis/analyse.js';
import { resolveAnalysisSettings } from '../../src/core/analysis/settings.js';
import type { StoredReference } from '../../src/core/model/reference.js';
import { faceCentredClasses, hklOfClass, simulatePowderPattern } from '../simulator/pattern.js';

const TARGET_CLASSES = new Map([1, 2, 3, 4, 5, 6, 8, 9, 10, 11, 12, 13, 14, 16, 17, 18, 19, 20].map((s, i) => [s, Math.round((100 * (i % 3 === 0 ? 1 : 0.55)) / (1 + 0.18 * i))]));
const STANDARD_CLASSES = new Map(faceCentredClasses(40).map((s, i) => [s, Math.round(100 / (1 + 0.5 * i))]));
const RIR = { target: 3.0, standard: 5.0 };

function stored(id: number, name: string, a: number, classes: ReadonlyMap<number, number>, tags: string[], rir: number): StoredReference {
  const lines = [...classes].map(([s, intensity]) => ({ d: a / Math.sqrt(s), intensity, hkl: hklOfClass(s)! })).sort((p, q) => q.d - p.d);
  return { id, version: 1, createdAt: '2026-01-01T00:00:00Z', name, formula: 'X', tags, source: 'accuracy-test simulator', rir, lines };
}
const LIBRARY = [stored(1, 'test target', 6.3, TARGET_CLASSES, ['target'], RIR.target), stored(2, 'test spike', 4.05, STANDARD_CLASSES, ['standard'], RIR.standard)];

describe('amorphous content from a spiked internal standard', () => {
  it('is recovered within 3 wt % for 0–50 wt % amorphous matter', () => {
    const rows: string[] = [];
    let within = 0;
    let cases = 0;
    for (const amorphous of [0, 0.1, 0.3, 0.5])
      for (let seed = 0; seed < 3; seed++) {
        // 20 wt % standard in the spiked mixture; the sample (80 %) is target + amorphous.
        const spike = 0.2;
        const target = (1 - spike) * (1 - amorphous);
        const pattern = simulatePowderPattern({
          phases: [
            { a: 6.3, intensities: TARGET_CLASSES, sizeNm: 60, scale: target * RIR.target },
            { a: 4.05, intensities: STANDARD_CLASSES, sizeNm: 150, scale: spike * RIR.standard },
          ],
          twoThetaMinDeg: 8,
          twoThetaMaxDeg: 80,
          stepDeg: 0.02,
          peakCounts: 20000,
          backgroundCounts: 150,
          seed: 5000 + 10 * seed + Math.round(100 * amorphous),
          humps: amorphous > 0 ? [{ centerDeg: 28, fwhmDeg: 9, areaRelative: amorphous }] : [],
        });
        const r = analyzePattern(pattern, createAnalysisContext(LIBRARY, null, { target: 'test target', internalStandard: 'test spike', internalStandardPercent: 100 * spike }));
        const found = r.match.amorphous!;
        cases++;
        if (Math.abs(found.fraction - amorphous) <= 0.03) within++;
        rows.push(`${(100 * amorphous).toFixed(0)} %: ${(100 * found.fraction).toFixed(1)} ± ${(100 * found.sigma).toFixed(1)} %`);
      }
    console.log(`amorphous content (internal standard 20 wt %): ${rows.join(', ')}; within 3 wt %: ${within}/${cases} (target all)`);
    expect(within).toBe(cases);
  });

  it("needs both the standard's name and its weight %, and a standard that is in the library", () => {
    expect(() => resolveAnalysisSettings({ internalStandard: 'test spike' }, { internalStandard: 'option --internal-standard' })).toThrow(/needs both its name and its weight %/);
    expect(() => resolveAnalysisSettings({ internalStandard: 'test spike', internalStandardPercent: 95 })).toThrow(/internal standard weight/);
    expect(() => createAnalysisContext(LIBRARY, null, { internalStandard: 'no such phase', internalStandardPercent: 20 })).toThrow(/internal standard/);
  });
});
