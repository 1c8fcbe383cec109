import { InputError } from '../errors.js';
import type { AnodeName } from '../model/wavelengths.js';
import { ANOMALOUS_SCATTERING, ANOMALOUS_SCATTERING_SOURCE } from './anomalous-scattering.js';
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
  /**
   * When the group holds the inversion −x, −y, −z through the origin: each atom's image under it (the
   * atom itself on an inversion centre); else null.
   */
  inversionPartner: Int32Array | null;
}

/** Images of one site closer than this (Å) are the same atom on a special position. */
const SPECIAL_POSITION_TOLERANCE_ANGSTROM = 0.03;

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
  const centric = ops.some((op) => op.r.every((v, i) => v === (i % 4 === 0 ? -1 : 0)) && op.t.every((v) => v % TRANSLATION_DENOMINATOR === 0));
  const partner: number[] = [];
  const sameAtom = (p: readonly number[], q: readonly number[], sign: number): boolean => {
    const d = [0, 1, 2].map((i) => p[i] - sign * q[i] - Math.round(p[i] - sign * q[i]));
    let dist2 = 0;
    for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) dist2 += d[i] * g[3 * i + j] * d[j];
    return dist2 < tol2;
  };
  let paired = centric;
  structure.sites.forEach((site, index) => {
    let species = elements.indexOf(site.element);
    if (species < 0) species = elements.push(site.element) - 1;
    siteOccupancy[index] = site.occupancy;
    siteB[index] = 8 * Math.PI * Math.PI * site.uIso;
    siteSpecies[index] = species;
    const first = positions.length;
    const images: number[][] = [];
    for (const op of ops) {
      const p = [0, 1, 2].map((i) => wrap(op.r[3 * i] * site.x + op.r[3 * i + 1] * site.y + op.r[3 * i + 2] * site.z + op.t[i] / TRANSLATION_DENOMINATOR));
      if (images.some((q) => sameAtom(p, q, 1))) continue;
      images.push(p);
      positions.push(p);
      siteOf.push(index);
    }
    // The images of a site are closed under the inversion: each one's partner is among them.
    if (!paired) return;
    images.forEach((p, k) => {
      const mate = images.findIndex((q) => sameAtom(p, q, -1));
      if (mate < 0) paired = false;
      partner[first + k] = first + mate;
    });
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
    inversionPartner: paired ? Int32Array.from(partner) : null,
  };
}

/** The anomalous-dispersion terms f′, f″ used at one wavelength, and a sentence saying which. */
export interface Dispersion {
  /** Element symbol → [f′, f″] in electrons, or null for none (f = f0 alone). */
  terms: Readonly<Record<string, readonly [number, number]>> | null;
  description: string;
}

/** A wavelength within this relative distance of a tabulated anode Kα1 line takes that line's f′, f″. */
const DISPERSION_WAVELENGTH_TOLERANCE = 1e-3;

/**
 * The f′, f″ of the anode Kα1 line that λ is (within DISPERSION_WAVELENGTH_TOLERANCE), from the
 * table exported from xraylib; none for any other wavelength, or when switched off.
 */
export function dispersionForWavelength(lambdaAngstrom: number, enabled = true): Dispersion {
  if (!enabled) return { terms: null, description: 'no anomalous dispersion (switched off)' };
  for (const anode of Object.keys(ANOMALOUS_SCATTERING) as AnodeName[]) {
    const line = ANOMALOUS_SCATTERING[anode];
    if (Math.abs(lambdaAngstrom / line.wavelengthAngstrom - 1) <= DISPERSION_WAVELENGTH_TOLERANCE) {
      return {
        terms: line.terms,
        description: `anomalous dispersion f′, f″ of ${anode} Kα1 (${line.wavelengthAngstrom} Å; ${ANOMALOUS_SCATTERING_SOURCE})`,
      };
    }
  }
  return {
    terms: null,
    description: `no anomalous dispersion (λ = ${lambdaAngstrom} Å is not within ${DISPERSION_WAVELENGTH_TOLERANCE * 100} % of a tabulated anode Kα1 line)`,
  };
}

/**
 * Precomputed tables for repeated structure-factor sums over one unit cell: for each atom,
 * cos and sin of 2πhx for every index h within the limits (so a reflection's phase factor is a
 * product of three tabulated complex numbers, not a new cosine and sine). The tables are stored
 * index by index, the atoms of one index side by side, so one reflection reads six contiguous runs
 * of memory: stored atom by atom, each atom cost a cache miss per table, and a cell of 12 000 atoms
 * took four times as long (22.6 s against 5.3 s of CPU for its 19 000 reflections to 0.8 Å, before
 * the inversion pairs and shared B below).
 */
export interface StructureFactorContext {
  atoms: UnitCellAtoms;
  coefficients: Array<readonly number[]>;
  /** Per element: anomalous-dispersion terms f′ and f″ (zeros without dispersion). */
  fPrime: Float64Array;
  fDoublePrime: Float64Array;
  limits: [number, number, number];
  cos: [Float64Array, Float64Array, Float64Array];
  sin: [Float64Array, Float64Array, Float64Array];
  /** Scratch: f0 + f′ of each element, real and imaginary weight of each site, at the current s². */
  f: Float64Array;
  weight: Float64Array;
  weightImag: Float64Array;
  /** Scratch: [Re P, Im P, Re Q, Im Q] of the last sum, F(hkl) = P + iQ (see structureFactorParts). */
  sum: Float64Array;
  /**
   * Scratch: exp(2πi(hx + ky)) of every atom for the h, k of the last sum (hk[0], hk[1]), kept so that
   * reflections taken in order of h and k (same h, k, other l) share it.
   */
  hkRe: Float64Array;
  hkIm: Float64Array;
  hk: Int32Array;
  /** The distinct Debye–Waller B of the sites (Å²), each site's index into them, and scratch for exp(−B s²) of each. */
  distinctB: Float64Array;
  siteBIndex: Int32Array;
  debyeWaller: Float64Array;
  /** The atoms the tables hold, by their site: every atom of the cell, or one of each inversion pair (see pairs). */
  tabulatedSite: Int32Array;
  /**
   * With the inversion through the origin: the first `pairs` tabulated atoms each stand for an atom
   * and its inversion partner, the others sit on inversion centres, and F = P + iQ has P, Q real
   * (Σ 2 w cos φ over pairs + Σ w cos φ over the rest): half the atoms, and no sine sum. Null: the
   * general sum over every atom.
   */
  pairs: number | null;
}

/**
 * A context for reflections with |h| ≤ limits[0], |k| ≤ limits[1], |l| ≤ limits[2], with the
 * anomalous-dispersion terms of the wavelength (dispersionForWavelength(λ).terms; null for none).
 */
export function structureFactorContext(
  atoms: UnitCellAtoms,
  limits: [number, number, number],
  dispersion: Dispersion['terms'] = null,
): StructureFactorContext {
  const partner = atoms.inversionPartner;
  const tabulated: number[] = [];
  if (partner) {
    for (let j = 0; j < atoms.count; j++) if (partner[j] > j) tabulated.push(j);
    for (let j = 0; j < atoms.count; j++) if (partner[j] === j) tabulated.push(j);
  } else {
    for (let j = 0; j < atoms.count; j++) tabulated.push(j);
  }
  const n = tabulated.length;
  const coordinates = [atoms.x, atoms.y, atoms.z];
  const cos: Float64Array[] = [];
  const sin: Float64Array[] = [];
  for (let axis = 0; axis < 3; axis++) {
    const width = 2 * limits[axis] + 1;
    const c = new Float64Array(n * width);
    const s = new Float64Array(n * width);
    for (let h = -limits[axis]; h <= limits[axis]; h++) {
      const row = (h + limits[axis]) * n;
      for (let j = 0; j < n; j++) {
        const phase = 2 * Math.PI * h * coordinates[axis][tabulated[j]];
        c[row + j] = Math.cos(phase);
        s[row + j] = Math.sin(phase);
      }
    }
    cos.push(c);
    sin.push(s);
  }
  // Sites often share their B (constrained in the refinement): exp(−B s²) once per value.
  const distinctB = new Map<number, number>();
  for (const b of atoms.siteB) if (!distinctB.has(b)) distinctB.set(b, distinctB.size);
  const terms = atoms.elements.map((element) => {
    if (dispersion === null) return [0, 0] as const;
    const t = dispersion[element];
    if (!t) throw new InputError(`no anomalous-dispersion terms are tabulated for element "${element}"`);
    return t;
  });
  return {
    atoms,
    coefficients: atoms.elements.map(formFactorCoefficients),
    fPrime: Float64Array.from(terms, (t) => t[0]),
    fDoublePrime: Float64Array.from(terms, (t) => t[1]),
    limits,
    cos: cos as [Float64Array, Float64Array, Float64Array],
    sin: sin as [Float64Array, Float64Array, Float64Array],
    f: new Float64Array(atoms.elements.length),
    weight: new Float64Array(atoms.siteOccupancy.length),
    weightImag: new Float64Array(atoms.siteOccupancy.length),
    sum: new Float64Array(4),
    hkRe: new Float64Array(n),
    hkIm: new Float64Array(n),
    // No reflection has indices beyond the limits: the first sum fills the scratch.
    hk: Int32Array.of(limits[0] + 1, 0),
    distinctB: Float64Array.from(distinctB.keys()),
    siteBIndex: Int32Array.from(atoms.siteB, (b) => distinctB.get(b)!),
    debyeWaller: new Float64Array(distinctB.size),
    tabulatedSite: Int32Array.from(tabulated, (j) => atoms.site[j]),
    pairs: partner ? tabulated.filter((j) => partner[j] > j).length : null,
  };
}

/**
 * F(hkl) = Σ_j T_j occ_j [(f0_j(s) + f′_j) + i f″_j] exp(2πi h·x_j) over all atoms of the cell,
 * T_j = exp(−B_j s²), s² = 1/(4d²) (International Tables for Crystallography Vol. C, sections 6.1.1
 * and 4.2.6, from memory), kept as F = P + iQ with P = Σ T occ (f0 + f′) exp(2πi h·x), Q = Σ T occ f″ exp(2πi h·x):
 * ctx.sum = [Re P, Im P, Re Q, Im Q]. Indices must lie within the context's limits. Allocates nothing.
 */
function structureFactorParts(ctx: StructureFactorContext, h: number, k: number, l: number, s2: number): Float64Array {
  const { atoms, coefficients, fPrime, fDoublePrime, f, weight, weightImag, cos, sin, limits, sum } = ctx;
  for (let e = 0; e < f.length; e++) f[e] = formFactor(coefficients[e], s2) + fPrime[e];
  const { distinctB, siteBIndex, debyeWaller } = ctx;
  for (let b = 0; b < distinctB.length; b++) debyeWaller[b] = Math.exp(-distinctB[b] * s2);
  for (let s = 0; s < weight.length; s++) {
    const t = atoms.siteOccupancy[s] * debyeWaller[siteBIndex[s]];
    weight[s] = t * f[atoms.siteSpecies[s]];
    weightImag[s] = t * fDoublePrime[atoms.siteSpecies[s]];
  }
  const { hkRe, hkIm, tabulatedSite: site, pairs } = ctx;
  const n = site.length;
  if (ctx.hk[0] !== h || ctx.hk[1] !== k) {
    const [cx, cy] = cos;
    const [sx, sy] = sin;
    const rx = (h + limits[0]) * n;
    const ry = (k + limits[1]) * n;
    // (cx + i sx)(cy + i sy) = exp(2πi(hx + ky))
    for (let j = 0; j < n; j++) {
      hkRe[j] = cx[rx + j] * cy[ry + j] - sx[rx + j] * sy[ry + j];
      hkIm[j] = cx[rx + j] * sy[ry + j] + sx[rx + j] * cy[ry + j];
    }
    ctx.hk[0] = h;
    ctx.hk[1] = k;
  }
  const cz = cos[2];
  const sz = sin[2];
  const rz = (l + limits[2]) * n;
  let pRe = 0;
  let pIm = 0;
  let qRe = 0;
  let qIm = 0;
  if (pairs !== null) {
    // An atom and its inversion partner: w e^{iφ} + w e^{−iφ} = 2 w cos φ, cos φ = Re[exp(2πi(hx + ky)) (cz + i sz)].
    for (let j = 0; j < n; j++) {
      if (j === pairs) {
        // The pairs counted, twice each; then the atoms on inversion centres, once.
        pRe *= 2;
        qRe *= 2;
      }
      const re = hkRe[j] * cz[rz + j] - hkIm[j] * sz[rz + j];
      pRe += weight[site[j]] * re;
      qRe += weightImag[site[j]] * re;
    }
    if (pairs === n) {
      pRe *= 2;
      qRe *= 2;
    }
  } else {
    for (let j = 0; j < n; j++) {
      // exp(2πi(hx + ky)) (cz + i sz) = exp(2πi(hx + ky + lz))
      const re = hkRe[j] * cz[rz + j] - hkIm[j] * sz[rz + j];
      const im = hkRe[j] * sz[rz + j] + hkIm[j] * cz[rz + j];
      const a = weight[site[j]];
      const b = weightImag[site[j]];
      pRe += a * re;
      pIm += a * im;
      qRe += b * re;
      qIm += b * im;
    }
  }
  sum[0] = pRe;
  sum[1] = pIm;
  sum[2] = qRe;
  sum[3] = qIm;
  return sum;
}

/**
 * |F(hkl)|² of the one reflection hkl, F = P + iQ (structureFactorParts): with f″ ≠ 0 a
 * non-centrosymmetric structure has |F(hkl)|² ≠ |F(−h−k−l)|² (Friedel's law fails). Allocates nothing.
 */
export function structureFactorSquared(ctx: StructureFactorContext, h: number, k: number, l: number, s2: number): number {
  const sum = structureFactorParts(ctx, h, k, l, s2);
  const re = sum[0] - sum[3];
  const im = sum[1] + sum[2];
  return re * re + im * im;
}

/**
 * ½(|F(hkl)|² + |F(−h−k−l)|²) = |P|² + |Q|², what a powder line of hkl and its Friedel mate
 * carries per reflection (F(−h) = P* + iQ*); equal to |F(hkl)|² when f″ = 0 or the structure is
 * centrosymmetric. Allocates nothing.
 */
export function powderStructureFactorSquared(ctx: StructureFactorContext, h: number, k: number, l: number, s2: number): number {
  const sum = structureFactorParts(ctx, h, k, l, s2);
  return sum[0] * sum[0] + sum[1] * sum[1] + sum[2] * sum[2] + sum[3] * sum[3];
}
