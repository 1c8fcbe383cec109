/**
 * Measured check: NIST SRM 1976b sintered corundum plate, Cu Kα1+Kα2 (test/fixtures/measured/README.md:
 * BAM, BAMresearch/bruker-powderxrd-parser commit be7e284, Apache-2.0), matched against the shipped
 * seed library as the CLI does. Known answer (the fixture's README): corundum only. Target of issue 12:
 * corundum present alone. The scan's very high counts show the tube's satellite lines (Cu Kβ and W Lα
 * of the strong lines), which must be marked as such and never called a phase.
 */
import { describe, expect, it } from 'vitest';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { matchMeasuredAgainstSeeds } from './measured-support.js';

describe('measured: NIST SRM 1976b corundum plate (Cu Kα1+Kα2)', () => {
  const result = matchMeasuredAgainstSeeds('test/fixtures/measured/corundum-1976b-cu-ka12.xy', anodeWavelength('Cu'), { goniometerRadiusMm: 280 });

  it('calls corundum present and nothing else, on most of its lines', () => {
    const present = result.phases.filter((p) => p.verdict === 'present').map((p) => p.name);
    const corundum = result.phases.find((p) => p.name === 'corundum')!;
    console.log(
      `corundum 1976b: present ${present.join(', ')}; corundum on ${corundum.matchedLines} lines, score ${corundum.score}; ` +
        `refined a = ${corundum.cell?.a} ± ${corundum.cell?.aSigma} Å, c = ${corundum.cell?.c} ± ${corundum.cell?.cSigma} Å; ` +
        `others: ${result.phases.filter((p) => p.name !== 'corundum').map((p) => `${p.name} ${p.verdict}`).join(', ')}`,
    );
    expect(present).toEqual(['corundum']);
    expect(corundum.matchedLines).toBeGreaterThanOrEqual(30);
    expect(corundum.weightFraction).toBe(1);
  });

  it('marks the satellite lines of the strong corundum lines and raises no low-angle alarm', () => {
    const satellites = result.unexplained.filter((u) => u.satelliteOf !== null);
    // 012 at 25.58°: its Cu Kβ falls near 23.07° (λ ratio from xraylib line energies, see test/simulator/pattern.ts).
    expect(satellites.some((u) => Math.abs(u.twoTheta - 23.07) < 0.05 && /Kβ/.test(u.satelliteOf!))).toBe(true);
    expect(satellites.length).toBeGreaterThanOrEqual(5);
    expect(result.unexplained.some((u) => u.lowAngle)).toBe(false);
  });
});
