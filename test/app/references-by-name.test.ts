import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { ReferencesByName } from '../../src/core/analysis/analyse.js';
import type { StoredReference } from '../../src/core/model/reference.js';

const ref = (name: string, id: number): StoredReference => ({ id, version: 1, createdAt: '2026-01-01T00:00:00Z', name, formula: 'X', tags: [], source: 'test', lines: [] });

describe('references by name (scans first, a map later)', () => {
  it('answers every lookup as a map built from the list would, before and after it builds one', () => {
    fc.assert(
      fc.property(fc.array(fc.constantFrom('a', 'b', 'c', 'd', 'e'), { maxLength: 12 }), fc.array(fc.constantFrom('a', 'b', 'c', 'x'), { minLength: 1, maxLength: 40 }), (names, asked) => {
        const refs = names.map(ref);
        const map = new Map(refs.map((r) => [r.name, r]));
        const lookup = new ReferencesByName(refs);
        for (const name of asked) expect(lookup.get(name)).toBe(map.get(name));
      }),
    );
  });
});
