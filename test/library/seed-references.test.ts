import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { twoThetaFromD } from '../../src/core/model/units.js';
import { buildSeedReferences, seedFiles } from '../../src/node/library/seed-build.js';
import { loadSeedReferences, seedFolder } from '../../src/node/library/seed.js';
import type { Reference } from '../../src/core/model/reference.js';

const CU_KA1 = 1.5405929;
const NAMES = [
  'silicon',
  'lanthanum hexaboride',
  'corundum',
  'methylammonium lead iodide',
  'lead iodide',
  'methylammonium lead iodide monohydrate',
];

const built = buildSeedReferences();
const byName = (refs: Reference[], name: string): Reference => refs.find((r) => r.name === name)!;

describe('shipped seed references (reference-patterns/*.json)', () => {
  it('equal what the generator computes from reference-patterns/cif now (else run scripts/make-seed-references.mjs)', () => {
    for (const { fileName, text } of seedFiles(built)) {
      const committed = readFileSync(join(seedFolder(), fileName), 'utf8');
      expect(JSON.parse(committed), `${fileName} is stale: npx tsc -p tsconfig.json && node scripts/make-seed-references.mjs`).toEqual(JSON.parse(text));
    }
  });

  it('load as the six named references, each with a source naming its structure and a computed RIR', () => {
    const seeds = loadSeedReferences();
    expect(seeds.map((r) => r.name).sort()).toEqual([...NAMES].sort());
    for (const ref of seeds) {
      expect(ref.source, ref.name).toMatch(/computed by Crystallog from the CIF in reference-patterns\/cif\//);
      expect(ref.rir, ref.name).toBeGreaterThan(0);
      expect(ref.cell?.spaceGroup, ref.name).toBeTruthy();
      expect(ref.intensityBasis, ref.name).toMatch(/Cu Kα1/);
      expect(Math.min(...ref.lines.map((l) => l.intensity ?? 0)), ref.name).toBeGreaterThanOrEqual(0.5);
      expect(ref.lines.every((l) => l.hkl && l.multiplicity), ref.name).toBe(true);
    }
    expect(byName(seeds, 'corundum').rir).toBe(1);
    expect(byName(seeds, 'methylammonium lead iodide').tags).toEqual(['target']);
    expect(byName(seeds, 'methylammonium lead iodide monohydrate').notes).toMatch(/approximate model/i);
  });

  it('put the silicon lines at the SRM 640d 2θ positions (Cu Kα1) within 0.001°', () => {
    // NIST SRM 640d, a = 5.43159 Å (Black et al., Powder Diffraction 25, 187 (2010)); 2θ values from CHECK-VALUES.
    const expected: Array<[string, number]> = [
      ['111', 28.4388],
      ['220', 47.2966],
      ['311', 56.1149],
      ['400', 69.1203],
      ['331', 76.3652],
      ['422', 88.0166],
    ];
    const silicon = byName(loadSeedReferences(), 'silicon');
    for (const [hkl, twoTheta] of expected) {
      const line = silicon.lines.find((l) => l.hkl?.join('') === hkl);
      expect(line, hkl).toBeDefined();
      expect(Math.abs(twoThetaFromD(line!.d, CU_KA1) - twoTheta), hkl).toBeLessThan(0.001);
    }
  });

  it('give lead iodide its 001 line first, near 12.7° 2θ', () => {
    // Common practice: the PbI2 001 reflection near 12.7° 2θ (Cu Kα) marks decomposition of MAPbI3.
    const first = byName(built, 'lead iodide').lines[0];
    expect(first.hkl).toEqual([0, 0, 1]);
    expect(Math.abs(twoThetaFromD(first.d, CU_KA1) - 12.7)).toBeLessThan(0.1);
  });

  it('put the monohydrate first line below the first line of MAPbI3 (the low-angle signature of hydration)', () => {
    // Common practice (CHECK-VALUES, facts of the trade): the hydrate's expanded spacing gives a new line at lower angle.
    const hydrate = byName(built, 'methylammonium lead iodide monohydrate').lines[0];
    const parent = byName(built, 'methylammonium lead iodide').lines[0];
    expect(twoThetaFromD(hydrate.d, CU_KA1)).toBeLessThan(twoThetaFromD(parent.d, CU_KA1));
  });
});
