import { InputError } from '../errors.js';
import { cellMetric } from './metric.js';
import { SCATTERING_FACTORS } from './scattering-factors.js';
import { TRANSLATION_DENOMINATOR } from './symop.js';
import type { CrystalStructure } from './structure.js';

/**
 * X-ray form factor f(s) = Σ_{i=1..4} a_i exp(−b_i s²) + c with s = sinθ/λ
 * (International Tables for Crystallography Vol. C, Table 6.1.1.4; Cromer–Mann form).
 * coefs = [a1, a2, a3, a4, b1, b2, b3, b4, c]; s2 = (sinθ/λ)² in Å⁻².
 */
export function formFactor(coefs: readonly number[], s2: number): number {
  return (
    coefs[0] * Math.exp(-coefs[4] * s2) +
    coefs[1] * Math.exp(-coefs[5] * s2) +
    coefs[2] * Math.exp(-coefs[6] * s2) +
    coefs[3] * Math.exp(-coefs[7] * s2) +
    coefs[8]
  );
}

export function formFactorCoefficients(element: string): readonly number[] {
  const coefs = SCATTERING_FACTORS[element];
  if (!coefs) throw new InputError(`no X-ray scattering factor is tabulated for element "${element}"`);
  return coefs;
}

/** Every atom of the unit cell, packed for the structure-factor sum. */
export interface UnitCellAtoms {
  count: number;
  x: Float64Array;
  y: Float64Array;
  z: Float64Array;
  /** Index of the structure site each atom is an image of. */
  site: Int32Array;
  /** Per site: occupancy, Debye–Waller B = 8π²U in Å², and index into elements. */
  siteOccupancy: Float64Array;
  siteB: Float64Array;
  siteSpecies: Int32Array;
  elements: string[];
}

/** Images of one site closer than this (Å) are the same atom on a special position. */
export const SPECIAL_POSITION_TOLERANCE_ANGSTROM = 0.03;

function wrap(v: number): number {
  const w = v - Math.floor(v);
  return w >= 1 - 1e-12 ? 0 : w;
}

/**
 * Apply every symmetry operation to every site and keep the distinct images (images of one site
 * within SPECIAL_POSITION_TOLERANCE_ANGSTROM are one atom on a special position), so that the
 * site's occupancy is the chemical one, as CIFs of the IUCr core dictionary give it.
 */
export function expandToUnitCell(structure: CrystalStructure): UnitCellAtoms {
  const { g } = cellMetric(structure.cell);
  const ops = structure.spaceGroup.operations;
  const elements: string[] = [];
  const positions: number[][] = [];
  const siteOf: number[] = [];
  const tol2 = SPECIAL_POSITION_TOLERANCE_ANGSTROM ** 2;
  const nSites = structure.sites.length;
  const siteOccupancy = new Float64Array(nSites);
  const siteB = new Float64Array(nSites);
  const siteSpecies = new Int32Array(nSites);
  structure.sites.forEach((site, index) => {
    let species = elements.indexOf(site.element);
    if (species < 0) species = elements.push(site.element) - 1;
    siteOccupancy[index] = site.occupancy;
    siteB[index] = 8 * Math.PI * Math.PI * site.uIso;
    siteSpecies[index] = species;
    const images: number[][] = [];
    for (const op of ops) {
      const p = [0, 1, 2].map((i) => wrap(op.r[3 * i] * site.x + op.r[3 * i + 1] * site.y + op.r[3 * i + 2] * site.z + op.t[i] / TRANSLATION_DENOMINATOR));
      const duplicate = images.some((q) => {
        const d = [0, 1, 2].map((i) => p[i] - q[i] - Math.round(p[i] - q[i]));
        let dist2 = 0;
        for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) dist2 += d[i] * g[3 * i + j] * d[j];
        return dist2 < tol2;
      });
      if (duplicate) continue;
      images.push(p);
      positions.push(p);
      siteOf.push(index);
    }
  });
  return {
    count: positions.length,
    x: Float64Array.from(positions, (p) => p[0]),
    y: Float64Array.from(positions, (p) => p[1]),
    z: Float64Array.from(positions, (p) => p[2]),
    site: Int32Array.from(siteOf),
    siteOccupancy,
    siteB,
    siteSpecies,
    elements,
  };
}

/**
 * Precomputed tables for repeated structure-factor sums over one unit cell: for each atom,
 * cos and sin of 2πhx for every index h within the limits (so a reflection's phase factor is a
 * product of three tabulated complex numbers, not a new cosine and sine).
 */
export interface StructureFactorContext {
  atoms: UnitCellAtoms;
  coefficients: Array<readonly number[]>;
  limits: [number, number, number];
  cos: [Float64Array, Float64Array, Float64Array];
  sin: [Float64Array, Float64Array, Float64Array];
  /** Scratch: form factor of each element, weight of each site, at the current s². */
  f: Float64Array;
  weight: Float64Array;
}

/** A context for reflections with |h| ≤ limits[0], |k| ≤ limits[1], |l| ≤ limits[2]. */
export function structureFactorContext(atoms: UnitCellAtoms, limits: [number, number, number]): StructureFactorContext {
  const coordinates = [atoms.x, atoms.y, atoms.z];
  const cos: Float64Array[] = [];
  const sin: Float64Array[] = [];
  for (let axis = 0; axis < 3; axis++) {
    const width = 2 * limits[axis] + 1;
    const c = new Float64Array(atoms.count * width);
    const s = new Float64Array(atoms.count * width);
    for (let j = 0; j < atoms.count; j++) {
      for (let h = -limits[axis]; h <= limits[axis]; h++) {
        const phase = 2 * Math.PI * h * coordinates[axis][j];
        c[j * width + h + limits[axis]] = Math.cos(phase);
        s[j * width + h + limits[axis]] = Math.sin(phase);
      }
    }
    cos.push(c);
    sin.push(s);
  }
  return {
    atoms,
    coefficients: atoms.elements.map(formFactorCoefficients),
    limits,
    cos: cos as [Float64Array, Float64Array, Float64Array],
    sin: sin as [Float64Array, Float64Array, Float64Array],
    f: new Float64Array(atoms.elements.length),
    weight: new Float64Array(atoms.siteOccupancy.length),
  };
}

/**
 * |F(hkl)|² = |Σ_j occ_j f_j(s) exp(−B_j s²) exp(2πi h·x_j)|² over all atoms of the cell,
 * with s² = 1/(4d²); no anomalous dispersion. Indices must lie within the context's limits.
 * Allocates nothing.
 */
export function structureFactorSquared(ctx: StructureFactorContext, h: number, k: number, l: number, s2: number): number {
  const { atoms, coefficients, f, weight, cos, sin, limits } = ctx;
  for (let e = 0; e < f.length; e++) f[e] = formFactor(coefficients[e], s2);
  for (let s = 0; s < weight.length; s++) weight[s] = atoms.siteOccupancy[s] * f[atoms.siteSpecies[s]] * Math.exp(-atoms.siteB[s] * s2);
  const wx = 2 * limits[0] + 1;
  const wy = 2 * limits[1] + 1;
  const wz = 2 * limits[2] + 1;
  const [cx, cy, cz] = cos;
  const [sx, sy, sz] = sin;
  let re = 0;
  let im = 0;
  for (let j = 0; j < atoms.count; j++) {
    const ix = j * wx + h + limits[0];
    const iy = j * wy + k + limits[1];
    const iz = j * wz + l + limits[2];
    // (cx + i sx)(cy + i sy)(cz + i sz) = exp(2πi(hx + ky + lz))
    const abRe = cx[ix] * cy[iy] - sx[ix] * sy[iy];
    const abIm = cx[ix] * sy[iy] + sx[ix] * cy[iy];
    const w = weight[atoms.site[j]];
    re += w * (abRe * cz[iz] - abIm * sz[iz]);
    im += w * (abRe * sz[iz] + abIm * cz[iz]);
  }
  return re * re + im * im;
}
