/**
 * Satellite lines (issue 12): a Ni-filtered Cu tube still passes about 1 % of Kβ (common practice), so
 * the strongest lines of a pure product come with weak Kβ partners at lower angle. They must be marked
 * as satellites, never raise the low-angle alarm, and leave the verdict "target". Kβ1 = 1.392252 Å
 * (xraylib 4.0 LineEnergy(29, KB1_LINE)).
 */
import { describe, expect, it } from 'vitest';
import { analyzePattern, createAnalysisContext } from '../../src/core/analysis/analyse.js';
import { sampleVerdict } from '../../src/core/analysis/verdict.js';
import { ANODE_LINES } from '../../src/core/model/wavelengths.js';
import { references, reference, simulate, TARGET } from '../series/perovskite-fixtures.js';

const K_BETA = 1.392252;
const target = reference(TARGET);
const strongest = [...target.lines].sort((a, b) => (b.intensity ?? 0) - (a.intensity ?? 0)).slice(0, 3);
// A line at d·λα/λβ stands where Kβ of the line at d falls.
const satelliteLines = strongest.map((l) => ({ d: (l.d * ANODE_LINES.Cu.kAlpha1) / K_BETA, intensity: 0.02 * (l.intensity ?? 100) }));
const pattern = simulate([{ lines: target.lines, scale: 1, sizeNm: 60 }, { lines: satelliteLines, scale: 1, sizeNm: 60 }], 31);

const analyse = (source: 'ni-filter' | 'monochromator') => analyzePattern(pattern, createAnalysisContext(references, null, { target: TARGET, source }));

describe('Kβ satellites of a filtered tube', () => {
  it('are marked as satellites of their parent lines, raise no low-angle alarm, and leave the verdict "target"', () => {
    const result = analyse('ni-filter');
    const marked = result.match.unexplained.filter((u) => u.satelliteOf);
    expect(marked.length).toBeGreaterThanOrEqual(2);
    for (const u of marked) {
      expect(u.satelliteOf).toMatch(/^Cu Kβ of the peak at \d+\.\d{3}°$/);
      expect(u.lowAngle).toBe(false);
    }
    expect(result.match.unexplained.filter((u) => u.lowAngle)).toEqual([]);
    expect(sampleVerdict(result.match, TARGET).verdict).toBe('target');
  });

  it('are not excused behind a monochromator, where no Kβ reaches the sample', () => {
    const result = analyse('monochromator');
    expect(result.match.unexplained.some((u) => u.satelliteOf)).toBe(false);
    expect(result.match.unexplained.length).toBeGreaterThanOrEqual(2);
  });
});
