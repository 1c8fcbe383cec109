/**
 * Accuracy of refined cells: one phase per simulated pattern, its cell expanded by 0–1.5 % (thermal
 * expansion or a solid solution) against the library's unexpanded reference, with zero offsets and
 * specimen displacement drawn as in the other accuracy suites. Prints, beside the issue-12 targets,
 * the share of refined edges within 3σ of the truth and the spread of (refined − true)/σ.
 * The patterns come from src/core/crystal/simulate.ts (pseudo-Voigt lines, Kα1/Kα2, Poisson noise),
 * which shares no code with the matcher or its position fit.
 */
import { describe, expect, it } from 'vitest';
import { caseRandom, fixturePhases, phaseFromStructure, rate, runCase } from './accuracy-support.js';

const DRAWS = Number(process.env.CRYSTALLOG_CELL_DRAWS ?? 32);

describe('refined cells on simulated expanded phases', () => {
  it('find the expanded cell with an honest σ', () => {
    const phases = fixturePhases();
    const library = phases.map((p) => p.reference);
    const z: number[] = [];
    let present = 0;
    let refined = 0;
    const lines: string[] = [];
    for (let i = 0; i < DRAWS; i++) {
      const draw = caseRandom(13000 + i);
      const base = phases[i % phases.length];
      const expansion = 0.015 * draw.uniform();
      const s = base.structure;
      const cell = { ...s.cell, a: s.cell.a * (1 + expansion), b: s.cell.b * (1 + expansion), c: s.cell.c * (1 + expansion) };
      const truth = phaseFromStructure(base.reference.name, { ...s, cell });
      const result = runCase({ phases: [{ phase: truth, weightFraction: 1, sizeNm: draw.sizeNm(), marchDollaseR: 1 }], ...draw.shift(), peakCounts: draw.counts(), seed: 15000 + i }, library);
      const found = result.phases.find((p) => p.name === base.reference.name);
      if (found?.verdict === 'present') present++;
      if (!found?.cell) {
        lines.push(`  draw ${i}: ${base.reference.name} +${(100 * expansion).toFixed(2)} % → ${found?.verdict ?? 'not listed'}, no cell (${found?.reasons.at(-1) ?? ''})`);
        continue;
      }
      refined++;
      const edges = new Set(['a', found.cell.c !== found.cell.a ? 'c' : 'a', found.cell.b !== found.cell.a && found.cell.b !== found.cell.c ? 'b' : 'a']);
      for (const edge of edges as Set<'a' | 'b' | 'c'>) {
        const sigma = found.cell[`${edge}Sigma`];
        if (sigma > 0) z.push((found.cell[edge] - cell[edge]) / sigma);
      }
    }
    const within = z.filter((v) => Math.abs(v) <= 3).length;
    const spread = Math.sqrt(z.reduce((s, v) => s + v * v, 0) / Math.max(1, z.length));
    console.log(
      [
        `refined cells (${DRAWS} simulated single-phase patterns, cell expanded 0–1.5 %, reference unexpanded):`,
        `  phase present:                      ${rate(present, DRAWS)}`,
        `  cell refined:                       ${rate(refined, DRAWS)}`,
        `  refined edges within 3σ of truth:   ${rate(within, z.length)}   (target ≥ 95 %)`,
        `  spread of (refined − true)/σ (rms): ${spread.toFixed(2)}   (target 0.7–1.5)`,
        ...lines.slice(0, 8),
      ].join('\n'),
    );
    expect(present).toBe(DRAWS);
    expect(refined / DRAWS).toBeGreaterThanOrEqual(0.9);
    expect(within / z.length).toBeGreaterThanOrEqual(0.95);
  });
});
