/**
 * Lattice geometry for the accuracy-test simulator, written apart from the app's crystal module:
 * d-spacings from the reciprocal metric tensor, 1/d² = hᵀ G* h with G* = G⁻¹ and G the direct metric
 * (International Tables for Crystallography Vol. B, §1.1.3), checked against gemmi's UnitCell
 * (test/golden/simulator/d-spacings.json, made by make_d_golden.py).
 */
import type { UnitCell } from '../../src/core/model/cell.js';

/** Edges in Å, angles in degrees (the app's cell shape; the space group plays no part here). */
export type SimulatedCell = Omit<UnitCell, 'spaceGroup'>;

export type Miller = readonly [number, number, number];

const RAD = Math.PI / 180;

/** The reciprocal metric G* (symmetric 3×3, row-major) of a cell. */
export function reciprocalMetric(cell: SimulatedCell): number[] {
  const ca = Math.cos(cell.alpha * RAD);
  const cb = Math.cos(cell.beta * RAD);
  const cg = Math.cos(cell.gamma * RAD);
  const g = [
    cell.a * cell.a, cell.a * cell.b * cg, cell.a * cell.c * cb,
    cell.a * cell.b * cg, cell.b * cell.b, cell.b * cell.c * ca,
    cell.a * cell.c * cb, cell.b * cell.c * ca, cell.c * cell.c,
  ];
  // Inverse of a symmetric 3×3 by cofactors.
  const [g00, g01, g02, , g11, g12, , , g22] = g;
  const c00 = g11 * g22 - g12 * g12;
  const c01 = g02 * g12 - g01 * g22;
  const c02 = g01 * g12 - g02 * g11;
  const c11 = g00 * g22 - g02 * g02;
  const c12 = g01 * g02 - g00 * g12;
  const c22 = g00 * g11 - g01 * g01;
  const det = g00 * c00 + g01 * c01 + g02 * c02;
  return [c00, c01, c02, c01, c11, c12, c02, c12, c22].map((v) => v / det);
}

/** d of the reflection h k l, Å. */
export function dSpacing(cell: SimulatedCell, hkl: Miller): number {
  const m = reciprocalMetric(cell);
  const [h, k, l] = hkl;
  const q = h * h * m[0] + k * k * m[4] + l * l * m[8] + 2 * (h * k * m[1] + h * l * m[2] + k * l * m[5]);
  return 1 / Math.sqrt(q);
}

export interface SimulatedReflection {
  hkl: Miller;
  /** Integrated intensity, arbitrary units (the strongest of a phase is usually 100). */
  intensity: number;
}

/**
 * The distinct reflections of a cell down to dMin: every h k l with h ≥ 0 (Friedel pairs merged),
 * those of equal d at this cell merged into one line with their multiplicity (so symmetry-equivalent
 * reflections of a tetragonal, hexagonal or monoclinic cell are one line, as in a powder pattern).
 * Intensities are drawn (seeded) as multiplicity × a random structure-factor weight × a Debye–Waller-like
 * fall-off exp(−B/(2d²)) with B = 2 Å²: not a structure, but a line list whose truth is known.
 */
export function reflectionList(cell: SimulatedCell, dMin: number, draw: () => number): SimulatedReflection[] {
  const limit = (edge: number): number => Math.ceil(edge / dMin) + 1;
  const groups = new Map<string, { hkl: Miller; d: number; multiplicity: number }>();
  for (let h = 0; h <= limit(cell.a); h++)
    for (let k = -limit(cell.b); k <= limit(cell.b); k++)
      for (let l = -limit(cell.c); l <= limit(cell.c); l++) {
        if (h === 0 && (k < 0 || (k === 0 && l <= 0))) continue;
        const d = dSpacing(cell, [h, k, l]);
        if (d < dMin) continue;
        const key = d.toPrecision(9);
        const group = groups.get(key);
        if (group) group.multiplicity++;
        else groups.set(key, { hkl: [h, k, l], d, multiplicity: 1 });
      }
  const lines = [...groups.values()].sort((p, q) => q.d - p.d);
  const raw = lines.map((g) => g.multiplicity * (0.05 + draw() ** 2) * Math.exp(-1 / (g.d * g.d)));
  const top = Math.max(...raw);
  return lines.map((g, i) => ({ hkl: g.hkl, intensity: (100 * raw[i]!) / top }));
}
