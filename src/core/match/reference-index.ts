import type { StoredReference } from '../model/reference.js';
import { dFromTwoTheta } from '../model/units.js';
import { lowerBound } from '../model/sorted.js';

/** Intensity given to a line whose intensity is unknown (positions computed from a cell alone). */
const UNKNOWN_LINE_INTENSITY = 10;

/**
 * All reference lines of a library in one d-sorted table (typed arrays), for screening candidates:
 * one pass over the lines under each measured peak finds every reference with a line there.
 */
export interface ReferenceIndex {
  references: readonly StoredReference[];
  /** Line d-spacings, Å, ascending. */
  d: Float64Array;
  /** Which reference each line belongs to (index into `references`). */
  referenceOf: Int32Array;
  /** Relative intensity of each line (unknown intensities count as UNKNOWN_LINE_INTENSITY). */
  intensity: Float32Array;
  /** libraryDigest of `references` when the library stored it with the index (else computed when needed). */
  libraryDigest?: string;
}

export function lineIntensity(value: number | null): number {
  return value === null ? UNKNOWN_LINE_INTENSITY : value;
}

/**
 * Every line of a library as flat typed arrays: d (Å), which reference (its position in the
 * library's list), relative intensity. Sorted by d when it is an index; in any order as gathered.
 */
export interface PackedLineIndex {
  d: Float64Array;
  referenceOf: Int32Array;
  intensity: Float32Array;
}

/** Build the d-sorted index over every line of every reference (from the line objects). */
export function buildReferenceIndex(references: readonly StoredReference[]): ReferenceIndex {
  let total = 0;
  for (const ref of references) total += ref.lines.length;
  const gathered: PackedLineIndex = { d: new Float64Array(total), referenceOf: new Int32Array(total), intensity: new Float32Array(total) };
  let n = 0;
  references.forEach((ref, r) => {
    for (const line of ref.lines) {
      gathered.d[n] = line.d;
      gathered.referenceOf[n] = r;
      gathered.intensity[n] = lineIntensity(line.intensity);
      n++;
    }
  });
  return referenceIndexFromPacked(references, sortLineIndex(gathered));
}

/**
 * Sort gathered lines by d (lines without a positive d are dropped): what a library stores at
 * import time, so that matching never sorts or decodes line objects. The gathered arrays are used
 * as scratch space (the result may be them): hand over arrays gathered for this.
 */
export function sortLineIndex(lines: PackedLineIndex): PackedLineIndex {
  const total = lines.d.length;
  let n = 0;
  for (let i = 0; i < total; i++) if (lines.d[i]! > 0) n++;
  return sortByD(n === total ? lines : dropNonPositive(lines, n));
}

function dropNonPositive(lines: PackedLineIndex, n: number): PackedLineIndex {
  const kept: PackedLineIndex = { d: new Float64Array(n), referenceOf: new Int32Array(n), intensity: new Float32Array(n) };
  let k = 0;
  for (let i = 0; i < lines.d.length; i++) {
    if (!(lines.d[i]! > 0)) continue;
    kept.d[k] = lines.d[i]!;
    kept.referenceOf[k] = lines.referenceOf[i]!;
    kept.intensity[k++] = lines.intensity[i]!;
  }
  return kept;
}

/**
 * The index over references from a d-sorted packed line table (as stored with the library):
 * checked for shape (equal lengths, d ascending, every reference number in range), never copied.
 */
export function referenceIndexFromPacked(references: readonly StoredReference[], packed: PackedLineIndex): ReferenceIndex {
  const { d, referenceOf, intensity } = packed;
  const n = d.length;
  if (referenceOf.length !== n || intensity.length !== n) throw new Error(`packed line index has arrays of unequal length (${n}, ${referenceOf.length}, ${intensity.length})`);
  const refs = references.length;
  for (let i = 0; i < n; i++) {
    const r = referenceOf[i]!;
    if (!(r >= 0 && r < refs) || !(d[i]! > 0) || (i > 0 && d[i]! < d[i - 1]!)) {
      throw new Error(`packed line index is not a d-sorted index over these ${refs} references (line ${i})`);
    }
  }
  return { references, d, referenceOf, intensity };
}

/** Index of the high 32-bit word of a Float64 in a Uint32Array view (1 on little-endian platforms). */
const HIGH_WORD = new Uint32Array(new Float64Array([1]).buffer)[1] === 0x3ff00000 ? 1 : 0;
/** Widest digit of a radix pass: 4096 counters, whose writes stay in cache. */
const MAX_RADIX_BITS = 12;

/**
 * Lines of positive d sorted by d, ascending and stable: an LSD radix sort on the high 32 bits of
 * each d's IEEE 754 pattern (which order positive doubles; Knuth, TAOCP vol. 3, 5.2.5), less the
 * smallest, so that a library's d range (a few binary orders of magnitude) takes two passes; each
 * pass moves the lines whole (d, reference, intensity), as a gather by a sorted order afterwards
 * reads memory at random and costs more than the passes. Then one insertion pass for values that
 * share those bits, by then next to each other. `lines` is one of the two buffers.
 */
function sortByD(lines: PackedLineIndex): PackedLineIndex {
  const n = lines.d.length;
  if (n < 2) return lines;
  let words = new Uint32Array(lines.d.buffer, lines.d.byteOffset, 2 * n);
  let min = 0xffffffff;
  let max = 0;
  for (let i = 0; i < n; i++) {
    const key = words[2 * i + HIGH_WORD]!;
    if (key < min) min = key;
    if (key > max) max = key;
  }
  const bits = 32 - Math.clz32(max - min);
  const passes = Math.max(1, Math.ceil(bits / MAX_RADIX_BITS));
  const digit = Math.max(1, Math.ceil(bits / passes));
  const mask = (1 << digit) - 1;
  const start = new Uint32Array(1 << digit);
  let from = lines;
  let to: PackedLineIndex = { d: new Float64Array(n), referenceOf: new Int32Array(n), intensity: new Float32Array(n) };
  for (let pass = 0, shift = 0; pass < passes; pass++, shift += digit) {
    start.fill(0);
    for (let i = 0; i < n; i++) start[((words[2 * i + HIGH_WORD]! - min) >>> shift) & mask]++;
    let sum = 0;
    for (let b = 0; b <= mask; b++) {
      const count = start[b]!;
      start[b] = sum;
      sum += count;
    }
    const { d, referenceOf, intensity } = from;
    const next = to;
    for (let i = 0; i < n; i++) {
      const at = start[((words[2 * i + HIGH_WORD]! - min) >>> shift) & mask]++;
      next.d[at] = d[i]!;
      next.referenceOf[at] = referenceOf[i]!;
      next.intensity[at] = intensity[i]!;
    }
    to = from;
    from = next;
    words = new Uint32Array(from.d.buffer, from.d.byteOffset, 2 * n);
  }
  const { d, referenceOf, intensity } = from;
  for (let i = 1; i < n; i++) {
    const v = d[i]!;
    if (v >= d[i - 1]!) continue;
    const r = referenceOf[i]!;
    const value = intensity[i]!;
    let j = i - 1;
    while (j >= 0 && d[j]! > v) {
      d[j + 1] = d[j]!;
      referenceOf[j + 1] = referenceOf[j]!;
      intensity[j + 1] = intensity[j]!;
      j--;
    }
    d[j + 1] = v;
    referenceOf[j + 1] = r;
    intensity[j + 1] = value;
  }
  return from;
}


export interface ScreenQuery {
  /** Measured peak positions (2θ, degrees, ascending) to screen with. */
  twoTheta: Float64Array;
  /** Wavelength (Å) that turns 2θ into d. */
  lambda: number;
  /** Half-width of the window around each peak, degrees 2θ (tolerance plus the largest shift). */
  windowDeg: number;
  /** d range of the measured pattern, Å. */
  dMin: number;
  dMax: number;
  /** How many references to return. */
  count: number;
}

/** The last range's totals per index: a batch screens every pattern of one scan range against one index. */
const lastTotals = new WeakMap<ReferenceIndex, { dMin: number; dMax: number; total: Float64Array }>();

/** Summed line intensity of each reference within a d range (the denominator of the screening share). Treat as read-only. */
export function rangeTotals(index: ReferenceIndex, dMin: number, dMax: number): Float64Array {
  const last = lastTotals.get(index);
  if (last && last.dMin === dMin && last.dMax === dMax) return last.total;
  const total = new Float64Array(index.references.length);
  const stop = lowerBound(index.d, dMax);
  for (let i = lowerBound(index.d, dMin); i < stop; i++) total[index.referenceOf[i]] += index.intensity[i];
  lastTotals.set(index, { dMin, dMax, total });
  return total;
}

/**
 * Rank references by the share of their in-range intensity that falls under the given peaks
 * (each line counted once even where windows overlap). Returns reference indices, best first.
 */
export function screenReferences(index: ReferenceIndex, query: ScreenQuery, totals: Float64Array = rangeTotals(index, query.dMin, query.dMax)): number[] {
  const nRefs = index.references.length;
  const found = new Float64Array(nRefs);
  const total = totals;
  const { d, referenceOf, intensity } = index;
  const start = lowerBound(d, query.dMin);
  const stop = lowerBound(d, query.dMax);

  // Peaks ascend in 2θ, so their d windows descend: walk them from the last peak (smallest d).
  let done = 0;
  for (let k = query.twoTheta.length - 1; k >= 0; k--) {
    const tt = query.twoTheta[k];
    const lo = Math.max(lowerBound(d, dFromTwoTheta(tt + query.windowDeg, query.lambda)), done, start);
    const hi = Math.min(lowerBound(d, dFromTwoTheta(Math.max(tt - query.windowDeg, 1e-3), query.lambda)), stop);
    for (let i = lo; i < hi; i++) found[referenceOf[i]] += intensity[i];
    if (hi > done) done = hi;
  }

  // Keep the best `count` in a small sorted list (descending share); ties keep the lower reference first.
  const best: number[] = [];
  const bestShare: number[] = [];
  for (let r = 0; r < nRefs; r++) {
    if (!(found[r] > 0) || !(total[r] > 0)) continue;
    const share = found[r] / total[r];
    if (best.length === query.count && share <= bestShare[best.length - 1]) continue;
    let pos = best.length;
    while (pos > 0 && bestShare[pos - 1] < share) pos--;
    best.splice(pos, 0, r);
    bestShare.splice(pos, 0, share);
    if (best.length > query.count) {
      best.pop();
      bestShare.pop();
    }
  }
  return best;
}
