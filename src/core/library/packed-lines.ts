import type { Reference, ReferenceLine } from '../model/reference.js';

/**
 * Lines of a reference kept packed as a file reader read them, so that an import of 100 000
 * references makes no line objects: d[0..n) then relative intensity[n..2n) (NaN = unknown), the
 * store's packed values (node/library/packing.ts) for lines without h, k, l or multiplicity. `lines`
 * is made from them when first read; from then on the line objects are the reference's lines.
 */
const PACKED = Symbol('packed line values');

type Packed = { [PACKED]?: Float64Array | undefined };

/** The packed values of a reference whose lines were never read, else undefined. Treat as read-only. */
export function packedValuesOf(ref: Reference): Float64Array | undefined {
  return (ref as Packed)[PACKED];
}

/** One shared accessor for every such reference (as in packing.ts); it stays an own, enumerable property. */
const PACKED_LINES: PropertyDescriptor = {
  get(this: Reference): ReferenceLine[] {
    const values = (this as Packed)[PACKED]!;
    const n = values.length / 2;
    const lines: ReferenceLine[] = new Array(n);
    for (let i = 0; i < n; i++) {
      const intensity = values[n + i]!;
      lines[i] = { d: values[i]!, intensity: Number.isNaN(intensity) ? null : intensity };
    }
    setLines(this, lines);
    return lines;
  },
  set(this: Reference, lines: ReferenceLine[]) {
    setLines(this, lines);
  },
  enumerable: true,
  configurable: true,
};

/** The line objects become the lines: the packed values no longer speak for them (they may be changed). */
function setLines(ref: Reference, lines: ReferenceLine[]): void {
  (ref as Packed)[PACKED] = undefined;
  Object.defineProperty(ref, 'lines', { value: lines, writable: true, enumerable: true, configurable: true });
}

/**
 * Give a reference (without lines of its own yet) these packed lines, d by decreasing value as in
 * normal form. They sit in a property of their own that is not enumerable (spreads, JSON and
 * structured clones leave it out): far cheaper than a WeakMap entry per reference.
 */
export function withPackedValues<T extends Omit<Reference, 'lines'>>(ref: T, values: Float64Array): T & Reference {
  Object.defineProperty(ref, PACKED, { value: values, writable: true, enumerable: false, configurable: true });
  Object.defineProperty(ref, 'lines', PACKED_LINES);
  return ref as T & Reference;
}
