import { InputError } from '../errors.js';
import { closeGroup, makeOp, multiplyOps, TRANSLATION_DENOMINATOR, type SymOp } from './symop.js';

/**
 * Hall symbols → symmetry operations.
 * Hall, Acta Cryst. A37, 517 (1981); explicit-origin notation as tabulated in International
 * Tables for Crystallography Vol. B, section A1.4.2 (rotation matrices, default axes, translations).
 */

const D = TRANSLATION_DENOMINATOR;

/** Lattice centring translations (in 24ths) of the Hall lattice symbols. */
const CENTRING: Record<string, number[][]> = {
  P: [],
  A: [[0, 12, 12]],
  B: [[12, 0, 12]],
  C: [[12, 12, 0]],
  I: [[12, 12, 12]],
  R: [
    [16, 8, 8],
    [8, 16, 16],
  ],
  S: [
    [8, 8, 16],
    [16, 16, 8],
  ],
  T: [
    [8, 16, 8],
    [16, 8, 16],
  ],
  F: [
    [0, 12, 12],
    [12, 0, 12],
    [12, 12, 0],
  ],
};

/** Translation symbols of the Hall notation (in 24ths). */
const TRANSLATION: Record<string, number[]> = {
  a: [12, 0, 0],
  b: [0, 12, 0],
  c: [0, 0, 12],
  n: [12, 12, 12],
  u: [6, 0, 0],
  v: [0, 6, 0],
  w: [0, 0, 6],
  d: [6, 6, 6],
};

type Axis = 'x' | 'y' | 'z' | "'" | '"' | '*';

/** Proper rotations along the principal axes, row-major (ITC Vol. B, Table A1.4.2.4). */
const PRINCIPAL: Record<'x' | 'y' | 'z', Record<number, number[]>> = {
  x: {
    1: [1, 0, 0, 0, 1, 0, 0, 0, 1],
    2: [1, 0, 0, 0, -1, 0, 0, 0, -1],
    3: [1, 0, 0, 0, 0, -1, 0, 1, -1],
    4: [1, 0, 0, 0, 0, -1, 0, 1, 0],
    6: [1, 0, 0, 0, 1, -1, 0, 1, 0],
  },
  y: {
    1: [1, 0, 0, 0, 1, 0, 0, 0, 1],
    2: [-1, 0, 0, 0, 1, 0, 0, 0, -1],
    3: [-1, 0, 1, 0, 1, 0, -1, 0, 0],
    4: [0, 0, 1, 0, 1, 0, -1, 0, 0],
    6: [0, 0, 1, 0, 1, 0, -1, 0, 1],
  },
  z: {
    1: [1, 0, 0, 0, 1, 0, 0, 0, 1],
    2: [-1, 0, 0, 0, -1, 0, 0, 0, 1],
    3: [0, -1, 0, 1, -1, 0, 0, 0, 1],
    4: [0, -1, 0, 1, 0, 0, 0, 0, 1],
    6: [1, -1, 0, 1, 0, 0, 0, 0, 1],
  },
};

/** Two-fold rotations along face diagonals, relative to the preceding rotation axis (' and "). */
const FACE_DIAGONAL: Record<'x' | 'y' | 'z', { "'": number[]; '"': number[] }> = {
  x: { "'": [-1, 0, 0, 0, 0, -1, 0, -1, 0], '"': [-1, 0, 0, 0, 0, 1, 0, 1, 0] },
  y: { "'": [0, 0, -1, 0, -1, 0, -1, 0, 0], '"': [0, 0, 1, 0, -1, 0, 1, 0, 0] },
  z: { "'": [0, -1, 0, -1, 0, 0, 0, 0, -1], '"': [0, 1, 0, 1, 0, 0, 0, 0, -1] },
};

/** Three-fold rotation along the body diagonal a+b+c (*). */
const BODY_DIAGONAL = [0, 0, 1, 1, 0, 0, 0, 1, 0];

interface RotationToken {
  improper: boolean;
  order: number;
  axis: Axis | null;
  screw: number;
  translations: string[];
}

function fail(symbol: string, why: string): never {
  throw new InputError(`Hall symbol "${symbol}" cannot be read: ${why}`);
}

function parseRotationToken(symbol: string, token: string): RotationToken {
  const m = /^(-?)([12346])(.*)$/.exec(token);
  if (!m) fail(symbol, `"${token}" does not start with a rotation order 1, 2, 3, 4 or 6`);
  const result: RotationToken = { improper: m[1] === '-', order: Number(m[2]), axis: null, screw: 0, translations: [] };
  for (const ch of m[3]) {
    if (/[1-5]/.test(ch)) {
      if (result.screw !== 0 || Number(ch) >= result.order) fail(symbol, `screw "${ch}" does not fit the ${result.order}-fold axis`);
      result.screw = Number(ch);
    } else if ('xyz\'"*'.includes(ch)) {
      if (result.axis !== null) fail(symbol, `"${token}" names two axes`);
      result.axis = ch as Axis;
    } else if (ch in TRANSLATION) {
      result.translations.push(ch);
    } else {
      fail(symbol, `"${ch}" in "${token}" is not an axis or translation symbol`);
    }
  }
  return result;
}

/** Apply Hall's default-axis rules to the i-th rotation of a symbol. */
function resolveAxis(token: RotationToken, index: number, previous: RotationToken | null): Axis | null {
  if (token.axis !== null) return token.axis;
  if (token.order === 1) return null;
  if (index === 0) return 'z';
  if (index === 1 && token.order === 2 && previous) {
    if (previous.order === 2 || previous.order === 4) return 'x';
    if (previous.order === 3 || previous.order === 6) return "'";
  }
  if (index === 2 && token.order === 3) return '*';
  return null;
}

function rotationOperation(symbol: string, token: RotationToken, axis: Axis | null, previousAxis: Axis | null): SymOp {
  let r: number[];
  if (token.order === 1 || axis === null) {
    if (token.order !== 1) fail(symbol, `the axis of a ${token.order}-fold rotation is not given and has no default`);
    r = PRINCIPAL.z[1];
  } else if (axis === "'" || axis === '"') {
    if (token.order !== 2) fail(symbol, `only two-fold rotations lie along face diagonals (${axis})`);
    const reference = previousAxis === 'x' || previousAxis === 'y' ? previousAxis : 'z';
    r = FACE_DIAGONAL[reference][axis];
  } else if (axis === '*') {
    if (token.order !== 3) fail(symbol, 'only three-fold rotations lie along the body diagonal (*)');
    r = BODY_DIAGONAL;
  } else {
    r = PRINCIPAL[axis][token.order];
  }
  if (token.improper) r = r.map((v) => -v);
  const t = [0, 0, 0];
  if (token.screw !== 0) {
    if (axis !== 'x' && axis !== 'y' && axis !== 'z') fail(symbol, 'a screw translation needs the axis x, y or z');
    t[{ x: 0, y: 1, z: 2 }[axis]] = (D * token.screw) / token.order;
  }
  for (const name of token.translations) for (let i = 0; i < 3; i++) t[i] += TRANSLATION[name][i];
  return makeOp(r, t);
}

/** Change-of-origin part "(0 0 1)": a shift in twelfths of the cell edges, returned in 24ths. */
function parseOriginShift(symbol: string, text: string): number[] {
  const parts = text.trim().split(/[\s,]+/);
  if (parts.length !== 3 || parts.some((p) => !/^-?\d+$/.test(p))) {
    fail(symbol, `"(${text})" is not an origin shift of three whole numbers of twelfths`);
  }
  return parts.map((p) => (Number(p) * D) / 12);
}

/** All operations of the space group described by a Hall symbol (e.g. "-P 2ybc", "-F 4vw 2vw 3", "P 31 2 (0 0 4)"). */
export function operationsFromHall(symbol: string): SymOp[] {
  const text = symbol.trim();
  const shiftMatch = /\(([^)]*)\)\s*$/.exec(text);
  const body = shiftMatch ? text.slice(0, shiftMatch.index).trim() : text;
  const words = body.split(/\s+/).filter((w) => w !== '');
  if (words.length === 0) fail(symbol, 'it is empty');
  const lattice = /^(-?)([PABCIRSTF])$/i.exec(words[0]);
  if (!lattice) fail(symbol, `"${words[0]}" is not a lattice symbol (P, A, B, C, I, R, S, T or F, with an optional leading -)`);

  const generators: SymOp[] = [];
  for (const vector of CENTRING[lattice[2].toUpperCase()]) generators.push(makeOp(PRINCIPAL.z[1], vector));
  if (lattice[1] === '-') generators.push(makeOp(PRINCIPAL.z[1].map((v) => -v)));

  let previous: RotationToken | null = null;
  let previousAxis: Axis | null = null;
  words.slice(1).forEach((word, index) => {
    const token = parseRotationToken(symbol, word);
    const axis = resolveAxis(token, index, previous);
    generators.push(rotationOperation(symbol, token, axis, previousAxis));
    previous = token;
    previousAxis = axis;
  });

  const group = closeGroup(generators);
  if (!group) fail(symbol, 'its operations do not close into a space group');
  if (!shiftMatch) return group;
  // Origin shift v: each (R|t) becomes (I|v)(R|t)(I|-v) = (R | t + v - Rv).
  const v = parseOriginShift(symbol, shiftMatch[1]);
  const shift = makeOp(PRINCIPAL.z[1], v);
  const back = makeOp(PRINCIPAL.z[1], v.map((x) => -x));
  return group.map((op) => multiplyOps(multiplyOps(shift, op), back));
}
