import { InputError } from '../errors.js';
import type { ReferenceLine } from '../model/reference.js';
import type { Hkl, UnitCell } from '../model/cell.js';
import { cellMetric, inverseDSquared } from './metric.js';
import { getSpaceGroup, type SpaceGroup } from './space-groups.js';
import { TRANSLATION_DENOMINATOR } from './symop.js';

/**
 * Reflection conditions and multiplicities computed from the operators themselves:
 * h is systematically absent when some operation (R|t) has hR = h and h·t not an integer
 * (International Tables for Crystallography Vol. A, section 1.6.4; Vol. B, chapter 1.4).
 * Equivalent reflections are hR and −hR for every rotation R (Laue class with Friedel's law).
 */

const PACK = 1024;
const OFFSET = 512;

function pack(h: number, k: number, l: number): number {
  return ((h + OFFSET) * PACK + (k + OFFSET)) * PACK + (l + OFFSET);
}

/** True when reflection (h, k, l) is extinguished by the group's centring, screw axes or glide planes. */
export function isSystematicallyAbsent(group: SpaceGroup, h: number, k: number, l: number): boolean {
  const { rotations: r, translations: t } = group;
  const n = t.length / 3;
  for (let i = 0; i < n; i++) {
    const o = 9 * i;
    if (h * r[o] + k * r[o + 3] + l * r[o + 6] !== h) continue;
    if (h * r[o + 1] + k * r[o + 4] + l * r[o + 7] !== k) continue;
    if (h * r[o + 2] + k * r[o + 5] + l * r[o + 8] !== l) continue;
    if ((h * t[3 * i] + k * t[3 * i + 1] + l * t[3 * i + 2]) % TRANSLATION_DENOMINATOR !== 0) return true;
  }
  return false;
}

/** Is (a1, a2, a3) after (b1, b2, b3) in the order h, then k, then l? */
function isAfter(a1: number, a2: number, a3: number, b1: number, b2: number, b3: number): boolean {
  return a1 !== b1 ? a1 > b1 : a2 !== b2 ? a2 > b2 : a3 > b3;
}

/**
 * Whether (h, k, l) is the representative of its class of equivalent reflections (the largest in
 * the order h, then k, then l, among hR and −hR), and if so the size of the class (the powder
 * multiplicity) as |Laue group| / |stabilizer of h|; 0 when it is not the representative.
 * Allocates nothing.
 */
function representativeMultiplicity(group: SpaceGroup, h: number, k: number, l: number): number {
  const r = group.pointRotations;
  const n = r.length / 9;
  let fixing = 0;
  for (let i = 0; i < n; i++) {
    const o = 9 * i;
    const h2 = h * r[o] + k * r[o + 3] + l * r[o + 6];
    const k2 = h * r[o + 1] + k * r[o + 4] + l * r[o + 7];
    const l2 = h * r[o + 2] + k * r[o + 5] + l * r[o + 8];
    if (isAfter(h2, k2, l2, h, k, l) || isAfter(-h2, -k2, -l2, h, k, l)) return 0;
    if (h2 === h && k2 === k && l2 === l) fixing++;
    else if (!group.centrosymmetric && h2 === -h && k2 === -k && l2 === -l) fixing++;
  }
  // Laue group: the point group itself when centrosymmetric, else the point group and its negatives.
  return group.centrosymmetric ? n / fixing : (2 * n) / fixing;
}

/** All reflections equivalent to hkl (Laue class, Friedel mates included). */
export function equivalentReflections(group: SpaceGroup, hkl: Hkl): Hkl[] {
  const [h, k, l] = hkl;
  const r = group.pointRotations;
  const out = new Map<number, Hkl>();
  for (let o = 0; o < r.length; o += 9) {
    const image: Hkl = [h * r[o] + k * r[o + 3] + l * r[o + 6], h * r[o + 1] + k * r[o + 4] + l * r[o + 7], h * r[o + 2] + k * r[o + 5] + l * r[o + 8]];
    out.set(pack(...image), image);
    const friedel: Hkl = [-image[0] || 0, -image[1] || 0, -image[2] || 0];
    out.set(pack(...friedel), friedel);
  }
  return [...out.values()];
}

/** The representative of hkl's class of equivalent reflections, as listed by generateReflections. */
export function representativeHkl(group: SpaceGroup, hkl: Hkl): Hkl {
  let best = hkl;
  for (const image of equivalentReflections(group, hkl)) if (isAfter(image[0], image[1], image[2], best[0], best[1], best[2])) best = image;
  return best;
}

/** Powder multiplicity of hkl: the number of distinct equivalent reflections, Friedel mates included. */
export function multiplicity(group: SpaceGroup, hkl: Hkl): number {
  return equivalentReflections(group, hkl).length;
}

/** Allowed, symmetry-unique reflections in typed arrays, sorted by decreasing d. */
export interface ReflectionList {
  count: number;
  h: Int32Array;
  k: Int32Array;
  l: Int32Array;
  d: Float64Array;
  multiplicity: Int32Array;
}

/** Largest index searched along one axis; d-minimum values that need more are refused. */
const MAX_INDEX = 200;

/**
 * Every allowed reflection with d ≥ dMinAngstrom, one per class of equivalent reflections, with its
 * multiplicity. Only half of reciprocal space is visited (the representative always has its first
 * non-zero index positive).
 */
export function enumerateReflections(cell: UnitCell, group: SpaceGroup, dMinAngstrom: number): ReflectionList {
  if (!(Number.isFinite(dMinAngstrom) && dMinAngstrom > 0)) throw new InputError(`d-minimum ${dMinAngstrom} Å must be a positive number`);
  const { gStar } = cellMetric(cell);
  const limit = [cell.a, cell.b, cell.c].map((length) => Math.floor(length / dMinAngstrom));
  if (limit.some((v) => v > MAX_INDEX)) {
    throw new InputError(`d-minimum ${dMinAngstrom} Å is too small for this cell (indices above ${MAX_INDEX}); choose a larger d-minimum`);
  }
  const maxInverseD2 = (1 / (dMinAngstrom * dMinAngstrom)) * (1 + 1e-9);
  const found: Array<{ h: number; k: number; l: number; d: number; m: number }> = [];
  for (let h = 0; h <= limit[0]; h++) {
    for (let k = h === 0 ? 0 : -limit[1]; k <= limit[1]; k++) {
      for (let l = h === 0 && k === 0 ? 1 : -limit[2]; l <= limit[2]; l++) {
        const s2 = inverseDSquared(gStar, h, k, l);
        if (s2 > maxInverseD2) continue;
        const m = representativeMultiplicity(group, h, k, l);
        if (m === 0 || isSystematicallyAbsent(group, h, k, l)) continue;
        found.push({ h, k, l, d: 1 / Math.sqrt(s2), m });
      }
    }
  }
  found.sort((x, y) => y.d - x.d || y.h - x.h || y.k - x.k || y.l - x.l);
  const n = found.length;
  const list: ReflectionList = {
    count: n,
    h: new Int32Array(n),
    k: new Int32Array(n),
    l: new Int32Array(n),
    d: new Float64Array(n),
    multiplicity: new Int32Array(n),
  };
  found.forEach((f, i) => {
    list.h[i] = f.h;
    list.k[i] = f.k;
    list.l[i] = f.l;
    list.d[i] = f.d;
    list.multiplicity[i] = f.m;
  });
  return list;
}

/** The space group a cell names, or P 1 when it names none. */
export function spaceGroupOfCell(cell: UnitCell): SpaceGroup {
  return getSpaceGroup(cell.spaceGroup && cell.spaceGroup.trim() !== '' ? cell.spaceGroup : 'P 1');
}

/**
 * Allowed reflections of a cell to a d-minimum (its space group from cell.spaceGroup, P 1 if none),
 * equivalents merged, with multiplicity; intensities unknown (null).
 */
export function generateReflections(cell: UnitCell, dMinAngstrom: number): ReferenceLine[] {
  const list = enumerateReflections(cell, spaceGroupOfCell(cell), dMinAngstrom);
  const lines: ReferenceLine[] = [];
  for (let i = 0; i < list.count; i++) {
    lines.push({ d: list.d[i], intensity: null, hkl: [list.h[i], list.k[i], list.l[i]], multiplicity: list.multiplicity[i] });
  }
  return lines;
}
