import type { UnitCell } from '../model/cell.js';
import { getSpaceGroup, type CrystalSystem } from '../crystal/space-groups.js';

/**
 * The free lattice parameters a crystal system leaves (International Tables Vol. A, Table 2.1.2.1):
 * cubic a; tetragonal and hexagonal a, c; rhombohedral (R lattice, rhombohedral axes) a, α;
 * orthorhombic a, b, c; monoclinic a, b, c and the one non-90° angle (β in the usual setting);
 * triclinic all six. Tied parameters follow their free one (b = c = a in a cubic cell).
 */
export type CellParameterName = 'a' | 'b' | 'c' | 'alpha' | 'beta' | 'gamma';

export interface CellParameterisation {
  system: CrystalSystem;
  /** The free parameters, in the order of `values`. */
  names: CellParameterName[];
  /** Build the cell from values of the free parameters. */
  toCell(values: ArrayLike<number>): UnitCell;
  /** The free parameters' values in a cell. */
  fromCell(cell: UnitCell): number[];
}

const ANGLE_TOLERANCE_DEG = 1e-3;
const near = (x: number, y: number): boolean => Math.abs(x - y) <= ANGLE_TOLERANCE_DEG;
const nearLength = (x: number, y: number): boolean => Math.abs(x - y) <= 1e-5 * Math.max(x, y);

/** Crystal system of a reference cell: from its space group where the symbol is known, else from the cell's shape. */
function crystalSystemOfCell(cell: UnitCell): CrystalSystem {
  if (cell.spaceGroup) {
    try {
      const system = getSpaceGroup(cell.spaceGroup).crystalSystem;
      if (system) return system;
    } catch {
      // An unknown symbol: judge by the cell's shape below.
    }
  }
  const right = (x: number): boolean => near(x, 90);
  const { a, b, c, alpha, beta, gamma } = cell;
  if (right(alpha) && right(beta) && right(gamma)) {
    if (nearLength(a, b) && nearLength(b, c)) return 'cubic';
    if (nearLength(a, b)) return 'tetragonal';
    return 'orthorhombic';
  }
  if (right(alpha) && right(beta) && near(gamma, 120) && nearLength(a, b)) return 'hexagonal';
  if (nearLength(a, b) && nearLength(b, c) && near(alpha, beta) && near(beta, gamma)) return 'trigonal';
  const rightAngles = [alpha, beta, gamma].filter(right).length;
  return rightAngles === 2 ? 'monoclinic' : 'triclinic';
}

export function cellParameterisation(reference: UnitCell): CellParameterisation {
  const system = crystalSystemOfCell(reference);
  const base: UnitCell = { ...reference };
  const make = (names: CellParameterName[], toCell: (v: ArrayLike<number>) => UnitCell): CellParameterisation => ({
    system,
    names,
    toCell,
    fromCell: (cell) => names.map((n) => cell[n]),
  });
  switch (system) {
    case 'cubic':
      return make(['a'], (v) => ({ ...base, a: v[0], b: v[0], c: v[0] }));
    case 'tetragonal':
      return make(['a', 'c'], (v) => ({ ...base, a: v[0], b: v[0], c: v[1] }));
    case 'hexagonal':
      return make(['a', 'c'], (v) => ({ ...base, a: v[0], b: v[0], c: v[1] }));
    case 'trigonal':
      // Hexagonal axes (γ = 120°) or rhombohedral axes (a = b = c, α = β = γ).
      if (near(reference.gamma, 120)) return make(['a', 'c'], (v) => ({ ...base, a: v[0], b: v[0], c: v[1] }));
      return make(['a', 'alpha'], (v) => ({ ...base, a: v[0], b: v[0], c: v[0], alpha: v[1], beta: v[1], gamma: v[1] }));
    case 'orthorhombic':
      return make(['a', 'b', 'c'], (v) => ({ ...base, a: v[0], b: v[1], c: v[2] }));
    case 'monoclinic': {
      // The unique axis is the one whose angle differs from 90° (b in the usual setting).
      const angle: CellParameterName = !near(reference.alpha, 90) ? 'alpha' : !near(reference.gamma, 90) ? 'gamma' : 'beta';
      return make(['a', 'b', 'c', angle], (v) => ({ ...base, a: v[0], b: v[1], c: v[2], [angle]: v[3] }));
    }
    default:
      return make(['a', 'b', 'c', 'alpha', 'beta', 'gamma'], (v) => ({ ...base, a: v[0], b: v[1], c: v[2], alpha: v[3], beta: v[4], gamma: v[5] }));
  }
}
