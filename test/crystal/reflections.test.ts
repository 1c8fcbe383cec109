import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import type { Hkl, UnitCell } from '../../src/core/model/cell.js';
import { dSpacing } from '../../src/core/crystal/metric.js';
import { referenceFromCell } from '../../src/core/crystal/powder.js';
import { enumerateReflections, generateReflections, isSystematicallyAbsent, multiplicity, representativeHkl } from '../../src/core/crystal/reflections.js';
import { getSpaceGroup } from '../../src/core/crystal/space-groups.js';

interface ReflectionCase {
  query: string;
  number: number;
  xhm: string;
  hall: string;
  crystalSystem: string;
  cell: [number, number, number, number, number, number];
  dMin: number;
  reflections: Array<[number, number, number, number, number]>;
}

// Golden reflection lists from gemmi 0.5.7 (UnitCell.calculate_d, GroupOps.is_systematically_absent,
// operator orbits), made by test/golden/crystal/make_golden.py.
const golden = JSON.parse(readFileSync(new URL('../golden/crystal/reflections.json', import.meta.url), 'utf8')) as {
  cases: ReflectionCase[];
};

function cellOf(c: ReflectionCase): UnitCell {
  const [a, b, cc, alpha, beta, gamma] = c.cell;
  return { a, b, c: cc, alpha, beta, gamma, spaceGroup: c.query };
}

describe('allowed reflections against gemmi', () => {
  it('covers at least 20 space groups and all seven crystal systems', () => {
    expect(new Set(golden.cases.map((c) => c.xhm)).size).toBeGreaterThanOrEqual(20);
    expect(new Set(golden.cases.map((c) => c.crystalSystem)).size).toBe(7);
  });

  for (const c of golden.cases) {
    it(`${c.query} (${c.xhm}): same reflections, d-spacings and multiplicities`, () => {
      const cell = cellOf(c);
      const group = getSpaceGroup(c.query);
      expect(group.hall).toBe(c.hall);
      const lines = generateReflections(cell, c.dMin);
      expect(lines.length).toBe(c.reflections.length);
      const byKey = new Map(lines.map((line) => [line.hkl!.join(' '), line]));
      for (const [h, k, l, d, m] of c.reflections) {
        const rep = representativeHkl(group, [h, k, l]);
        const line = byKey.get(rep.join(' '));
        expect(line, `${h} ${k} ${l} missing`).toBeDefined();
        expect(line!.d).toBeCloseTo(d, 5);
        expect(line!.multiplicity).toBe(m);
        expect(line!.intensity).toBeNull();
      }
    });
  }
});

describe('reflection conditions', () => {
  it('extinguishes 0k0 with k odd and h0l with l odd in P 21/c, and nothing else', () => {
    // Reflection conditions of P 1 21/c 1: 0k0 k = 2n, h0l l = 2n (International Tables Vol. A, from memory).
    const g = getSpaceGroup('P 21/c');
    expect(isSystematicallyAbsent(g, 0, 1, 0)).toBe(true);
    expect(isSystematicallyAbsent(g, 0, 2, 0)).toBe(false);
    expect(isSystematicallyAbsent(g, 1, 0, 1)).toBe(true);
    expect(isSystematicallyAbsent(g, 1, 0, 2)).toBe(false);
    expect(isSystematicallyAbsent(g, 1, 0, 0)).toBe(false);
  });

  it('gives face-centred cubic multiplicities 8, 6, 12, 24, 48 (common practice)', () => {
    const g = getSpaceGroup('Fm-3m');
    const cases: Array<[Hkl, number]> = [
      [[1, 1, 1], 8],
      [[2, 0, 0], 6],
      [[2, 2, 0], 12],
      [[3, 1, 1], 24],
      [[4, 2, 1], 48],
    ];
    for (const [hkl, m] of cases) expect(multiplicity(g, hkl)).toBe(m);
  });

  it('lists only half of each Friedel pair and every line once', () => {
    const cell: UnitCell = { a: 5.1, b: 6.2, c: 7.3, alpha: 81, beta: 97, gamma: 103 };
    const list = enumerateReflections(cell, getSpaceGroup('P1'), 2);
    for (let i = 0; i < list.count; i++) expect(list.multiplicity[i]).toBe(2);
    for (let i = 1; i < list.count; i++) expect(list.d[i]).toBeLessThanOrEqual(list.d[i - 1]);
  });
});

describe('NaCl lines of NBS Circular 539', () => {
  it('places the nine NaCl lines within 0.002 Å for a = 5.640 Å', () => {
    // NBS Circular 539 (Swanson & Fuyat 1953) NaCl d-spacings — from memory (project CHECK-VALUES).
    const nbs = [3.258, 2.821, 1.994, 1.701, 1.628, 1.41, 1.294, 1.261, 1.1515];
    const lines = generateReflections({ a: 5.64, b: 5.64, c: 5.64, alpha: 90, beta: 90, gamma: 90, spaceGroup: 'F m -3 m' }, 1.1);
    expect(lines.map((l) => l.hkl!.join(''))).toEqual(['111', '200', '220', '311', '222', '400', '331', '420', '422']);
    lines.forEach((line, i) => expect(Math.abs(line.d - nbs[i])).toBeLessThan(0.002));
  });

  it('computes the cubic d = a/√(h²+k²+l²) and the hexagonal form (common practice)', () => {
    expect(dSpacing({ a: 5.43159, b: 5.43159, c: 5.43159, alpha: 90, beta: 90, gamma: 90 }, [1, 1, 1])).toBeCloseTo(5.43159 / Math.sqrt(3), 12);
    // Hexagonal: 1/d² = 4(h²+hk+k²)/(3a²) + l²/c².
    const d = dSpacing({ a: 3.25, b: 3.25, c: 5.2, alpha: 90, beta: 90, gamma: 120 }, [1, 0, 1]);
    expect(d).toBeCloseTo(1 / Math.sqrt(4 / (3 * 3.25 ** 2) + 1 / 5.2 ** 2), 12);
  });
});

describe('references from a cell alone', () => {
  it('lists positions with null intensities and says which space group was used', () => {
    const ref = referenceFromCell({ a: 5.43159, b: 5.43159, c: 5.43159, alpha: 90, beta: 90, gamma: 90, spaceGroup: 'Fd-3m' }, { name: 'Si cell' });
    expect(ref.name).toBe('Si cell');
    expect(ref.lines.every((l) => l.intensity === null)).toBe(true);
    // Fd-3m reflection conditions (International Tables Vol. A): 111, 220, 311, 222 (allowed by the group), 400 first.
    expect(ref.lines.slice(0, 5).map((l) => l.hkl!.join(''))).toEqual(['111', '220', '311', '222', '400']);
    expect(ref.cell?.spaceGroup).toBe('F d -3 m:2');
    expect(Math.min(...ref.lines.map((l) => l.d))).toBeGreaterThanOrEqual(0.8);
  });

  it('falls back to P 1 when the cell names no space group, and says so', () => {
    const ref = referenceFromCell({ a: 4, b: 5, c: 6, alpha: 90, beta: 90, gamma: 90 }, { dMinAngstrom: 2 });
    expect(ref.notes).toMatch(/P 1/);
    expect(ref.lines.map((l) => l.hkl!.join(' '))).toContain('1 0 0');
  });

  it('refuses a d-minimum that is not positive', () => {
    expect(() => referenceFromCell({ a: 4, b: 5, c: 6, alpha: 90, beta: 90, gamma: 90 }, { dMinAngstrom: 0 })).toThrow(/d-minimum/);
  });
});
