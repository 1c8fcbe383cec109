import { InputError, type InputErrorPlace } from '../errors.js';
import type { Hkl, UnitCell } from '../model/cell.js';

/**
 * Cell metric: direct metric tensor G (g_ij = a_i·a_j) and reciprocal metric tensor G* = G⁻¹,
 * with 1/d² = hᵀ G* h (International Tables for Crystallography Vol. B, chapter 1.1, Shmueli).
 */
export interface CellMetric {
  /** Direct metric tensor, row-major 3×3, Å². */
  g: Float64Array;
  /** Reciprocal metric tensor, row-major 3×3, Å⁻². */
  gStar: Float64Array;
  /** Cell volume, Å³. */
  volume: number;
}

const DEG = Math.PI / 180;

/** Throw InputError unless the six parameters describe a real cell. */
export function checkCell(cell: UnitCell, place: InputErrorPlace = {}): void {
  for (const key of ['a', 'b', 'c'] as const) {
    const v = cell[key];
    if (!(Number.isFinite(v) && v > 0)) throw new InputError(`cell length ${key} = ${v} Å is not a positive number`, place);
  }
  for (const key of ['alpha', 'beta', 'gamma'] as const) {
    const v = cell[key];
    if (!(Number.isFinite(v) && v > 0 && v < 180)) throw new InputError(`cell angle ${key} = ${v}° must lie between 0° and 180°`, place);
  }
  const volumeSquaredFactor = cellVolumeFactor(cell);
  if (!(volumeSquaredFactor > 1e-12)) {
    throw new InputError(`cell angles ${cell.alpha}°, ${cell.beta}°, ${cell.gamma}° cannot close a cell (zero or negative volume)`, place);
  }
}

/** 1 − cos²α − cos²β − cos²γ + 2 cosα cosβ cosγ: the squared volume of the unit-edge cell. */
function cellVolumeFactor(cell: UnitCell): number {
  const ca = Math.cos(cell.alpha * DEG);
  const cb = Math.cos(cell.beta * DEG);
  const cg = Math.cos(cell.gamma * DEG);
  return 1 - ca * ca - cb * cb - cg * cg + 2 * ca * cb * cg;
}

export function cellMetric(cell: UnitCell): CellMetric {
  checkCell(cell);
  const { a, b, c } = cell;
  const ca = Math.cos(cell.alpha * DEG);
  const cb = Math.cos(cell.beta * DEG);
  const cg = Math.cos(cell.gamma * DEG);
  const g = Float64Array.of(a * a, a * b * cg, a * c * cb, a * b * cg, b * b, b * c * ca, a * c * cb, b * c * ca, c * c);
  const gStar = invertSymmetric3(g);
  return { g, gStar, volume: a * b * c * Math.sqrt(cellVolumeFactor(cell)) };
}

function invertSymmetric3(m: Float64Array): Float64Array {
  const c00 = m[4] * m[8] - m[5] * m[7];
  const c01 = m[5] * m[6] - m[3] * m[8];
  const c02 = m[3] * m[7] - m[4] * m[6];
  const det = m[0] * c00 + m[1] * c01 + m[2] * c02;
  const inv = new Float64Array(9);
  inv[0] = c00 / det;
  inv[1] = (m[2] * m[7] - m[1] * m[8]) / det;
  inv[2] = (m[1] * m[5] - m[2] * m[4]) / det;
  inv[3] = c01 / det;
  inv[4] = (m[0] * m[8] - m[2] * m[6]) / det;
  inv[5] = (m[2] * m[3] - m[0] * m[5]) / det;
  inv[6] = c02 / det;
  inv[7] = (m[1] * m[6] - m[0] * m[7]) / det;
  inv[8] = (m[0] * m[4] - m[1] * m[3]) / det;
  return inv;
}

/** 1/d² in Å⁻² for reflection (h, k, l). */
export function inverseDSquared(gStar: Float64Array, h: number, k: number, l: number): number {
  return h * h * gStar[0] + k * k * gStar[4] + l * l * gStar[8] + 2 * (h * k * gStar[1] + h * l * gStar[2] + k * l * gStar[5]);
}

/** Interplanar spacing d(hkl) in Å. */
export function dSpacing(cell: UnitCell, hkl: Hkl): number {
  const [h, k, l] = hkl;
  if (h === 0 && k === 0 && l === 0) throw new InputError('reflection 0 0 0 has no d-spacing');
  return 1 / Math.sqrt(inverseDSquared(cellMetric(cell).gStar, h, k, l));
}

/**
 * Equivalent isotropic displacement from anisotropic U^ij (Å²):
 * Ueq = (1/3) Σ_ij U^ij a*_i a*_j (a_i·a_j), Fischer & Tillmanns, Acta Cryst. C44, 775 (1988).
 * u is [U11, U22, U33, U12, U13, U23].
 */
export function equivalentIsotropicU(metric: CellMetric, u: readonly number[]): number {
  const full = [u[0], u[3], u[4], u[3], u[1], u[5], u[4], u[5], u[2]];
  const aStar = [Math.sqrt(metric.gStar[0]), Math.sqrt(metric.gStar[4]), Math.sqrt(metric.gStar[8])];
  let sum = 0;
  for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) sum += full[3 * i + j] * aStar[i] * aStar[j] * metric.g[3 * i + j];
  return sum / 3;
}
