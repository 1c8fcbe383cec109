import type { Hkl } from '../../core/model/cell.js';
import type { Reference, ReferenceLine } from '../../core/model/reference.js';
import { packedValuesOf } from '../../core/library/packed-lines.js';

/**
 * Compact storage of a reference's lines, so that loading 100 000 references stays fast:
 * `values` holds Float64 d[0..n) then intensity[n..2n) (NaN = unknown intensity);
 * `indices` holds Int32 h, k, l, multiplicity per line (ABSENT where not given), or is null when
 * no line has any of them. Byte order is the platform's (little-endian on every platform Node ships for).
 */
export interface PackedLines {
  count: number;
  values: Buffer;
  indices: Buffer | null;
}

const ABSENT = -2147483648;

export function packLines(lines: readonly ReferenceLine[]): PackedLines {
  const n = lines.length;
  const values = new Float64Array(2 * n);
  let hasIndices = false;
  for (let i = 0; i < n; i++) {
    const line = lines[i]!;
    values[i] = line.d;
    values[n + i] = line.intensity ?? Number.NaN;
    if (line.hkl !== undefined || line.multiplicity !== undefined) hasIndices = true;
  }
  let indices: Buffer | null = null;
  if (hasIndices) {
    const packed = new Int32Array(4 * n).fill(ABSENT);
    for (let i = 0; i < n; i++) {
      const { hkl, multiplicity } = lines[i]!;
      if (hkl) packed.set(hkl, 4 * i);
      if (multiplicity !== undefined) packed[4 * i + 3] = multiplicity;
    }
    indices = Buffer.from(packed.buffer, packed.byteOffset, packed.byteLength);
  }
  return { count: n, values: Buffer.from(values.buffer, values.byteOffset, values.byteLength), indices };
}

/** Whether any packed line carries an hkl. */
export function hasHkl(indices: Uint8Array | null, count: number): boolean {
  if (!indices) return false;
  const packed = viewAs(Int32Array, indices, 4 * count);
  for (let i = 0; i < count; i++) if (packed[4 * i] !== ABSENT) return true;
  return false;
}

/** d and intensity of the packed lines as typed arrays (intensity NaN = unknown). */
export function unpackValues(values: Uint8Array, count: number): { d: Float64Array; intensity: Float64Array } {
  const all = viewAs(Float64Array, values, 2 * count);
  return { d: all.subarray(0, count), intensity: all.subarray(count, 2 * count) };
}

export function unpackLines(packed: { count: number; values: Uint8Array; indices: Uint8Array | null }): ReferenceLine[] {
  const { d, intensity } = unpackValues(packed.values, packed.count);
  const indices = packed.indices ? viewAs(Int32Array, packed.indices, 4 * packed.count) : null;
  const lines: ReferenceLine[] = new Array(packed.count);
  for (let i = 0; i < packed.count; i++) {
    const value = intensity[i]!;
    const line: ReferenceLine = { d: d[i]!, intensity: Number.isNaN(value) ? null : value };
    if (indices) {
      const h = indices[4 * i]!;
      if (h !== ABSENT) line.hkl = [h, indices[4 * i + 1]!, indices[4 * i + 2]!] as Hkl;
      const m = indices[4 * i + 3]!;
      if (m !== ABSENT) line.multiplicity = m;
    }
    lines[i] = line;
  }
  return lines;
}

/** A typed view on stored bytes; copies only when SQLite handed back a misaligned buffer. */
function viewAs<T extends Float64Array | Int32Array>(
  Kind: { new (buffer: ArrayBufferLike, byteOffset: number, length: number): T; new (length: number): T; BYTES_PER_ELEMENT: number },
  bytes: Uint8Array,
  length: number,
): T {
  if (bytes.byteLength !== length * Kind.BYTES_PER_ELEMENT) {
    throw new Error(`stored line data has ${bytes.byteLength} bytes, expected ${length * Kind.BYTES_PER_ELEMENT}`);
  }
  if (bytes.byteOffset % Kind.BYTES_PER_ELEMENT === 0) return new Kind(bytes.buffer, bytes.byteOffset, length);
  const copy = new Uint8Array(bytes.byteLength);
  copy.set(bytes);
  return new Kind(copy.buffer, 0, length);
}

/**
 * Packed lines of many references end to end (a library snapshot, or the buffers a batch shares with
 * its workers): reference r's values start at Float64 valueStart[r], its h, k, l, multiplicity at
 * Int32 indexStart[r] (−1: none). Or, for a library read on demand, `read(r)` fetches them.
 */
export interface PackedBlock {
  lines: { values: Buffer; indices: Buffer; indexStart: Int32Array } | { read: (r: number) => PackedLines };
  valueStart: Int32Array;
  count: Int32Array;
}

/** Reference r of a packed block: its lines are cut out (or read) only when asked for (a match of 100 000 references looks at a few hundred). */
export interface BlockSlice {
  block: PackedBlock;
  r: number;
}

/** The packed lines of references read from a store (their stored bytes, or where they lie in a snapshot), so no line objects are needed. */
const packedOf = new WeakMap<object, PackedLines | BlockSlice>();

/** A reference's lines packed: the stored bytes for references loaded from a library, else packed now. */
export function packedLinesOf(ref: Reference): PackedLines {
  const known = packedOf.get(ref);
  if (!known) {
    const values = packedValuesOf(ref); // lines a file reader kept packed, never read as objects
    return values ? { count: values.length / 2, values: Buffer.from(values.buffer, values.byteOffset, values.byteLength), indices: null } : packLines(ref.lines);
  }
  if (!('block' in known)) return known;
  const packed = sliceOf(known);
  // A read from the library is kept; a slice of a loaded block stays a slice (cheap to cut again).
  if ('read' in known.block.lines) packedOf.set(ref, packed);
  return packed;
}

function sliceOf({ block, r }: BlockSlice): PackedLines {
  const { lines } = block;
  if ('read' in lines) return lines.read(r);
  const count = block.count[r]!;
  const start = block.valueStart[r]!;
  const indexStart = lines.indexStart[r]!;
  return {
    count,
    values: lines.values.subarray(8 * start, 8 * (start + 2 * count)),
    indices: indexStart < 0 ? null : lines.indices.subarray(4 * indexStart, 4 * (indexStart + 4 * count)),
  };
}

/**
 * `lines` of a stored reference: decoded from its packed bytes on first read, then an ordinary
 * property. One shared accessor for every reference (a closure pair per reference costs 100 000
 * references about 0.3 s and 60 MB); it stays an own, enumerable property, so spreads and JSON keep the lines.
 */
const LAZY_LINES: PropertyDescriptor = {
  get(this: Reference): ReferenceLine[] {
    const lines = unpackLines(packedLinesOf(this));
    Object.defineProperty(this, 'lines', { value: lines, writable: true, enumerable: true, configurable: true });
    return lines;
  },
  set(this: Reference, lines: ReferenceLine[]) {
    packedOf.delete(this); // its stored bytes no longer describe the new lines
    Object.defineProperty(this, 'lines', { value: lines, writable: true, enumerable: true, configurable: true });
  },
  enumerable: true,
  configurable: true,
};

/** Give a reference read from a store lines that are decoded from `packed` when first read. */
export function withLazyLines<T extends Omit<Reference, 'lines'>>(ref: T, packed: PackedLines | BlockSlice): T & Reference {
  Object.defineProperty(ref, 'lines', LAZY_LINES);
  packedOf.set(ref, packed);
  return ref as T & Reference;
}
