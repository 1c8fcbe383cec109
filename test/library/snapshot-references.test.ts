/**
 * A library snapshot's references load as a lazy list (issue 15): it reads as the array it stands
 * for, makes only the references that are read, and what it knows of all of them without making
 * them (names, tags, solid-solution partners) is what the references themselves say.
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import fc from 'fast-check';
import { afterAll, describe, expect, it } from 'vitest';
import { lazyList } from '../../src/core/model/lazy-list.js';
import { namesOf, positionsTagged, type Reference } from '../../src/core/model/reference.js';
import { solidSolutionPartners, structurePartners } from '../../src/core/match/solid-solution.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { loadSeedReferences } from '../../src/node/library/seed.js';
import { ReferenceLibrary } from '../../src/node/library/store.js';
import { linesAt } from '../match/synthetic.js';

const dir = mkdtempSync(join(tmpdir(), 'crystallog-snapshot-refs-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('a lazily made list', () => {
  it('reads as the array it stands for and makes each element once, only when read', () => {
    fc.assert(
      fc.property(fc.array(fc.record({ v: fc.integer() }), { maxLength: 40 }), fc.nat(60), (items, probe) => {
        const made: number[] = [];
        const list = lazyList(items.length, (i) => {
          made.push(i);
          return items[i]!;
        });
        expect(made).toEqual([]);
        expect(list.length).toBe(items.length);
        expect(list[probe]).toBe(items[probe]);
        expect(probe in list).toBe(probe < items.length);
        expect(made).toEqual(probe < items.length ? [probe] : []);
        expect(list.map((x) => x.v)).toEqual(items.map((x) => x.v));
        expect(list.filter((x) => x.v % 2 === 0)).toEqual(items.filter((x) => x.v % 2 === 0));
        expect([...list]).toEqual(items);
        expect(list.slice(1, 3)).toEqual(items.slice(1, 3));
        expect(JSON.parse(JSON.stringify(list))).toEqual(items);
        expect(Array.isArray(list)).toBe(true);
        expect(new Set(made).size).toBe(made.length); // never made twice
      }),
    );
  });

  it('refuses to be written to', () => {
    const list = lazyList(3, (i) => ({ i })) as { i: number }[];
    expect(() => {
      list[0] = { i: 9 };
    }).toThrow('read-only');
    expect(() => list.push({ i: 4 })).toThrow('read-only');
  });
});

describe("a snapshot's references", () => {
  const wavelength = anodeWavelength('Cu').lambda1;
  /** Two cubic end members of one structure type (a solid-solution pair), one other cubic phase, a few tagged phases. */
  function library(): Reference[] {
    const cubic = (name: string, a: number, spaceGroup: string, tags: string[]): Reference => ({
      name,
      formula: name,
      tags,
      source: 'simulated for the snapshot test',
      cell: { a, b: a, c: a, alpha: 90, beta: 90, gamma: 90, spaceGroup },
      lines: [[1, 1, 1], [2, 0, 0], [2, 2, 0]].map(([h, k, l]) => ({ d: a / Math.hypot(h!, k!, l!), intensity: 50, hkl: [h!, k!, l!] as [number, number, number] })),
    });
    return [
      ...loadSeedReferences(),
      cubic('end member A', 5.0, 'F m -3 m', ['precursor']),
      cubic('end member B', 5.2, 'Fm-3m', ['impurity']),
      cubic('other cubic', 6.5, 'P m -3 m', ['decomposition product', 'impurity']),
      { name: 'no cell', formula: 'Y', tags: ['decomposition product'], source: 'simulated for the snapshot test', lines: linesAt(wavelength, [[20, 100], [35, 40]]) },
    ];
  }

  it('know their names, tags and solid-solution partners as the references themselves give them', () => {
    const path = join(dir, 'facts.sqlite');
    const writer = ReferenceLibrary.open(path);
    writer.importReferences(library());
    writer.close();
    const reader = ReferenceLibrary.open(path, { readOnly: true });
    for (const linesOnDemand of [false, true]) {
      const { references } = reader.referencesWithIndex({ linesOnDemand });
      const plain = reader.all();
      expect(namesOf(references)).toEqual(plain.map((r) => r.name));
      for (const tags of [['impurity'], ['decomposition product', 'impurity'], ['precursor'], ['no such tag']]) {
        expect(positionsTagged(references, tags)).toEqual(positionsTagged(plain, tags));
      }
      const partners = solidSolutionPartners(references);
      expect(partners).toEqual(structurePartners(plain.map((r) => (r.lines.some((l) => l.hkl) ? r.cell : null))));
      const a = plain.findIndex((r) => r.name === 'end member A');
      const b = plain.findIndex((r) => r.name === 'end member B');
      expect(partners.get(a)).toContain(b);
      expect(references).toEqual(plain);
    }
    reader.close();
  });
});
