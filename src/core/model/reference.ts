import type { Hkl, UnitCell } from './cell.js';

/** One line of a reference phase, wavelength-free. */
export interface ReferenceLine {
  /** d-spacing, Å. */
  d: number;
  /** Relative intensity 0–100, or null when unknown (positions computed from a cell alone). */
  intensity: number | null;
  hkl?: Hkl;
  multiplicity?: number;
}

export const STANDARD_TAGS = ['target', 'impurity', 'precursor', 'decomposition product', 'standard'] as const;

/** A reference phase as the library stores it. */
export interface Reference {
  name: string;
  formula: string;
  tags: string[];
  /** Where the values come from (required). */
  source: string;
  notes?: string;
  /** Reference intensity ratio I/Ic (corundum), if known. */
  rir?: number | null;
  cell?: UnitCell | null;
  /** How the intensities were obtained, e.g. "computed from CIF for Cu Kα1, Bragg–Brentano". */
  intensityBasis?: string;
  lines: ReferenceLine[];
}

/** A stored reference with its identity in the library. */
export interface StoredReference extends Reference {
  id: number;
  version: number;
  createdAt: string;
}

/**
 * What a lazily loaded list of references (stored-references.ts) knows of all its references without
 * making them: their names in order, and the positions of the references with a tag.
 */
export interface ListFacts {
  names: () => readonly string[];
  /** Positions of the references with this tag (exact), ascending. */
  tagged: (tag: string) => readonly number[];
}

const factsOfList = new WeakMap<object, ListFacts>();

/** Tell lookups by name or tag what the list holds, so that they make none of its references. */
export function withListFacts<T extends readonly Reference[]>(references: T, facts: ListFacts): T {
  factsOfList.set(references, facts);
  return references;
}

/** The names of the list's references in order: known ones without reading the references, else read from them. */
export function namesOf(references: readonly Reference[]): readonly string[] {
  return factsOfList.get(references)?.names() ?? references.map((r) => r.name);
}

/** Positions of the references that carry any of these tags (exact), ascending. */
export function positionsTagged(references: readonly Reference[], tags: readonly string[]): number[] {
  const facts = factsOfList.get(references);
  if (facts) return [...new Set(tags.flatMap((tag) => facts.tagged(tag)))].sort((a, b) => a - b);
  const wanted = new Set(tags);
  const found: number[] = [];
  references.forEach((r, i) => {
    if (r.tags.some((tag) => wanted.has(tag))) found.push(i);
  });
  return found;
}
