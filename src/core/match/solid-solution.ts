/**
 * Solid solutions between two references of one structure type. Two references are end members of
 * one type when they have the same space group and similar cells (every edge within
 * SIMILAR_EDGE_FRACTION, every angle within SIMILAR_ANGLE_DEG). A refined cell lying between them is
 * read by Vegard's law, a(x) = (1 − x)·a_A + x·a_B (Vegard, Z. Phys. 5, 17 (1921)), which is an
 * approximation (Denton & Ashcroft, Phys. Rev. A 43, 3161 (1991)).
 */
import type { StoredReference } from '../model/reference.js';
import type { UnitCell } from '../model/cell.js';
import { fmt } from './format.js';

/** Edges of the two end members may differ by up to this fraction (a solid-solution series spans a few %). */
const SIMILAR_EDGE_FRACTION = 0.08;
/** Angles may differ by up to this, degrees. */
const SIMILAR_ANGLE_DEG = 2;
/** x must lie this many σ inside (0, 1) to be called between the end members. */
const BETWEEN_SIGMAS = 2;

export const VEGARD_CAUTION = "Vegard's law is an approximation (Denton & Ashcroft, Phys. Rev. A 43, 3161 (1991))";

export interface SolidSolution {
  /** The two end members, [A, B]: the fraction is that of B. */
  between: [string, string];
  /** Vegard's-law fraction x of B, 0–1. */
  fraction: number;
  fractionSigma: number;
  statement: string;
}

const normalisedGroup = (symbol: string | undefined): string | null => (symbol ? symbol.replace(/[\s_]/g, '').toLowerCase() : null);

/** The space group of a cell as compared (spaces and underscores dropped, any case), or null when it names none. */
export const normalisedGroupOf = (cell: UnitCell | null | undefined): string | null => normalisedGroup(cell?.spaceGroup);

function similarCells(p: UnitCell, q: UnitCell): boolean {
  if (normalisedGroup(p.spaceGroup) === null || normalisedGroup(p.spaceGroup) !== normalisedGroup(q.spaceGroup)) return false;
  const edge = (x: number, y: number): boolean => Math.abs(x - y) <= SIMILAR_EDGE_FRACTION * Math.min(x, y);
  const angle = (x: number, y: number): boolean => Math.abs(x - y) <= SIMILAR_ANGLE_DEG;
  return edge(p.a, q.a) && edge(p.b, q.b) && edge(p.c, q.c) && angle(p.alpha, q.alpha) && angle(p.beta, q.beta) && angle(p.gamma, q.gamma);
}

/** Per reference, the other references of its structure type (found once per library: a batch matches many patterns against one). */
const partnersByLibrary = new WeakMap<readonly StoredReference[], Map<number, number[]>>();
export function solidSolutionPartners(refs: readonly StoredReference[]): Map<number, number[]> {
  let found = partnersByLibrary.get(refs);
  if (found) return found;
  // The space group is asked first: most references have none, and their lines are then never decoded.
  found = structurePartners(refs.map((r) => (normalisedGroupOf(r.cell) !== null && r.lines.some((l) => l.hkl) ? r.cell : null)));
  partnersByLibrary.set(refs, found);
  return found;
}

/** The partners of a library's references as found earlier (the library keeps them with its snapshot), so none is read to find them. */
export function knownPartners(refs: readonly StoredReference[], partners: Map<number, number[]>): void {
  partnersByLibrary.set(refs, partners);
}

/**
 * Per position, the other positions of its structure type: same space group, similar cell. A
 * reference takes part only with a cell that names its space group and lines indexed by hkl (null: it does not).
 */
export function structurePartners(cells: readonly (UnitCell | null | undefined)[]): Map<number, number[]> {
  const found = new Map<number, number[]>();
  const byGroup = new Map<string, number[]>();
  cells.forEach((cell, i) => {
    const group = normalisedGroup(cell?.spaceGroup);
    if (group === null) return;
    byGroup.set(group, [...(byGroup.get(group) ?? []), i]);
  });
  for (const members of byGroup.values()) {
    for (const i of members) {
      const partners = members.filter((j) => j !== i && similarCells(cells[i]!, cells[j]!));
      if (partners.length > 0) found.set(i, partners);
    }
  }
  return found;
}

type Edge = 'a' | 'b' | 'c';

/**
 * Vegard's-law fraction of B from a refined cell: weighted least squares over the refined edges,
 * x = Σ w (p − A)(B − A) / Σ w (B − A)², w = 1/σ², σ_x = (Σ w (B − A)²)^(−½) (correlations between
 * the edges neglected), scaled by √(χ²/(n − 1)) where the edges disagree on x more than their σ allow.
 * Returns null when the end members do not differ in any refined edge.
 */
export function vegardFraction(
  cell: Record<Edge, number>,
  sigma: Record<Edge, number>,
  free: readonly string[],
  endA: UnitCell,
  endB: UnitCell,
): { fraction: number; sigma: number } | null {
  const edges = (['a', 'b', 'c'] as const).filter((e) => free.includes(e) && sigma[e] > 0 && Math.abs(endB[e] - endA[e]) > 1e-6 * endA[e]);
  let sww = 0;
  let swx = 0;
  for (const e of edges) {
    const w = 1 / (sigma[e] * sigma[e]);
    const span = endB[e] - endA[e];
    sww += w * span * span;
    swx += w * (cell[e] - endA[e]) * span;
  }
  if (!(sww > 0)) return null;
  const fraction = swx / sww;
  let chi2 = 0;
  for (const e of edges) chi2 += ((cell[e] - endA[e] - fraction * (endB[e] - endA[e])) / sigma[e]) ** 2;
  const scale = edges.length > 1 ? Math.max(1, Math.sqrt(chi2 / (edges.length - 1))) : 1;
  return { fraction, sigma: scale / Math.sqrt(sww) };
}

/**
 * The solid solution a refined cell of reference `own` points to: the partner for which the Vegard
 * fraction lies most clearly inside (0, 1), or null when the cell lies between none (or agrees with
 * its own reference, x ≈ 0).
 */
export function solidSolutionOf(
  own: StoredReference,
  partners: readonly StoredReference[],
  cell: Record<Edge, number>,
  sigma: Record<Edge, number>,
  free: readonly string[],
): SolidSolution | null {
  let best: SolidSolution | null = null;
  let bestMargin = 0;
  for (const partner of partners) {
    const x = vegardFraction(cell, sigma, free, own.cell!, partner.cell!);
    if (!x) continue;
    const margin = Math.min(x.fraction, 1 - x.fraction) / x.sigma;
    if (margin < BETWEEN_SIGMAS || margin <= bestMargin) continue;
    // Named from the end member with the smaller cell, so the fraction reads the usual way (A₁₋ₓBₓ).
    const ownFirst = own.cell!.a * own.cell!.b * own.cell!.c <= partner.cell!.a * partner.cell!.b * partner.cell!.c;
    const [first, second] = ownFirst ? [own, partner] : [partner, own];
    const fraction = ownFirst ? x.fraction : 1 - x.fraction;
    bestMargin = margin;
    best = {
      between: [first.name, second.name],
      fraction,
      fractionSigma: x.sigma,
      statement:
        `the refined cell lies between ${first.name} and ${second.name} (same space group ${own.cell!.spaceGroup}, similar cells, both in the library): ` +
        `a solid solution with x = ${fmt(fraction, 3)} ± ${fmt(x.sigma, 3)} of the way from ${first.name} to ${second.name} by Vegard's law ` +
        `(the lattice parameters linear in x; ${VEGARD_CAUTION})`,
    };
  }
  return best;
}
