import { lazyList } from '../../core/model/lazy-list.js';
import { withListFacts, type Reference, type StoredReference } from '../../core/model/reference.js';
import { knownPartners, normalisedGroupOf, structurePartners } from '../../core/match/solid-solution.js';
import type { UnitCell } from '../../core/model/cell.js';
import { withLazyLines, type BlockSlice, type PackedBlock, type PackedLines } from './packing.js';

/** The fields of a version kept in its `details` JSON. */
export interface VersionDetails {
  formula: string;
  tags: string[];
  notes?: string;
  rir?: number;
  cell?: Reference['cell'];
  intensityBasis?: string;
}

/** A stored reference from its fields; its `lines` are decoded from the packed bytes on first read. */
export function storedReference(id: number, version: number, name: string, source: string, details: VersionDetails, createdAt: string, packed: PackedLines | BlockSlice): StoredReference {
  const ref: Omit<StoredReference, 'lines'> = { id, version, createdAt, name, formula: details.formula, tags: details.tags, source };
  if (details.notes !== undefined) ref.notes = details.notes;
  if (details.rir !== undefined) ref.rir = details.rir;
  if (details.cell) ref.cell = details.cell;
  if (details.intensityBasis !== undefined) ref.intensityBasis = details.intensityBasis;
  return withLazyLines(ref, packed);
}

/**
 * The heads of a library snapshot: one JSON array of [id, version, name, source, details, createdAt,
 * count] per reference in name order as UTF-8 bytes, where each head starts in them, and what is
 * known of all references at once (names, tags, solid-solution partners) as JSON texts. A head is
 * decoded only when its reference is first read, the names and tags only when asked for.
 */
export interface SnapshotHeads {
  bytes: Uint8Array;
  /** Byte offset of each head in `bytes`, then the offset just past the last (references + 1). */
  start: Int32Array;
  /** The names in order (JSON array). */
  names: string;
  /** Positions of the references with each tag, ascending ({tag: [positions]} JSON). */
  tagged: string;
  /** Solid-solution partners by position ([[position, [positions]], ...] JSON; solid-solution.ts). */
  partners: string;
}

/**
 * Where the lines of a snapshot's references lie: the block's bytes, or a read by id and version from
 * the library file (named, so that a batch's workers can open it and read the same immutable versions).
 */
export type SnapshotLines = { values: Buffer; indices: Buffer; indexStart: Int32Array } | { read: (id: number, version: number) => PackedLines; library: string };

/** A snapshot's references as loaded, so that a batch can hand the same heads and bytes to its workers. */
export interface SnapshotSource {
  heads: SnapshotHeads;
  lines: SnapshotLines;
  /** Float64 offset of each reference's packed values in the block, then the end (references + 1). */
  valueStart: Int32Array;
}

/** Collects heads in order into the snapshot's form (the store from its rows, a batch from reference objects). */
export class HeadsBuilder {
  private heads: string[] = [];
  private names: string[] = [];
  private starts: number[] = [];
  private cells: (UnitCell | null)[] = [];
  private tagged: Record<string, number[]> = Object.create(null) as Record<string, number[]>;
  private at = 1; // past the opening bracket

  /**
   * One reference's head: `details` is its details JSON text as stored, `tags` the tags in it, `cell`
   * its cell when it may have solid-solution partners (its lines carry hkl), else null.
   */
  add(id: number, version: number, name: string, source: string, details: string, tags: readonly string[], cell: UnitCell | null, createdAt: string, count: number): void {
    const head = `[${id},${version},${JSON.stringify(name)},${JSON.stringify(source)},${details},${JSON.stringify(createdAt)},${count}]`;
    for (const tag of tags) (this.tagged[tag] ??= []).push(this.names.length);
    this.heads.push(head);
    this.names.push(name);
    this.cells.push(cell);
    this.starts.push(this.at);
    this.at += Buffer.byteLength(head) + 1; // and the comma (or closing bracket) after it
  }

  /** The heads gathered (the builder is left empty). */
  finish(): SnapshotHeads {
    const heads: SnapshotHeads = {
      bytes: Buffer.from(`[${this.heads.join(',')}]`),
      start: Int32Array.from([...this.starts, this.at]),
      names: JSON.stringify(this.names),
      tagged: JSON.stringify(this.tagged),
      partners: JSON.stringify([...structurePartners(this.cells)]),
    };
    this.heads = [];
    this.names = [];
    this.starts = [];
    this.cells = [];
    this.tagged = Object.create(null) as Record<string, number[]>;
    return heads;
  }
}

/** The fields of a reference that its details JSON holds. */
export function detailsOf(ref: Reference): VersionDetails {
  const details: VersionDetails = { formula: ref.formula, tags: ref.tags };
  if (ref.notes !== undefined) details.notes = ref.notes;
  if (ref.rir !== undefined && ref.rir !== null) details.rir = ref.rir;
  if (ref.cell) details.cell = ref.cell;
  if (ref.intensityBasis !== undefined) details.intensityBasis = ref.intensityBasis;
  return details;
}

/** Heads for references that were not loaded from a snapshot (their lines' counts as given). */
export function headsOf(references: readonly StoredReference[], lineCount: (r: number) => number): SnapshotHeads {
  const builder = new HeadsBuilder();
  references.forEach((ref, r) => {
    const cell = normalisedGroupOf(ref.cell) !== null && ref.lines.some((l) => l.hkl) ? ref.cell! : null;
    builder.add(ref.id, ref.version, ref.name, ref.source, JSON.stringify(detailsOf(ref)), ref.tags, cell, ref.createdAt, lineCount(r));
  });
  return builder.finish();
}

type Head = [id: number, version: number, name: string, source: string, details: VersionDetails, createdAt: string, count: number];

const sourceOf = new WeakMap<object, SnapshotSource>();

/** The snapshot a list of references was loaded from (null for any other list). */
export function snapshotSourceOf(references: readonly StoredReference[]): SnapshotSource | null {
  return sourceOf.get(references) ?? null;
}

/**
 * The references of a snapshot as one list whose elements are made on first read (a match of 100 000
 * references reads a few hundred): no JSON parse of every head, no object per reference up front.
 */
export function snapshotReferences(source: SnapshotSource): readonly StoredReference[] {
  const { heads, lines, valueStart } = source;
  const n = heads.start.length - 1;
  if (n < 0 || valueStart.length !== n + 1) throw new Error(`library snapshot: ${n} heads and ${valueStart.length - 1} line blocks do not agree`);
  const text = Buffer.from(heads.bytes.buffer, heads.bytes.byteOffset, heads.bytes.byteLength);
  const ids = new Int32Array(n);
  const versions = new Int32Array(n);
  const count = new Int32Array(n);
  for (let r = 0; r < n; r++) count[r] = (valueStart[r + 1]! - valueStart[r]!) / 2;
  const block: PackedBlock = {
    lines: 'read' in lines ? { read: (r) => lines.read(ids[r]!, versions[r]!) } : lines,
    valueStart: valueStart.subarray(0, n),
    count,
  };
  const list = lazyList(n, (r) => {
    const [id, version, name, refSource, details, createdAt] = JSON.parse(text.toString('utf8', heads.start[r]!, heads.start[r + 1]! - 1)) as Head;
    ids[r] = id;
    versions[r] = version;
    return storedReference(id, version, name, refSource, details, createdAt, { block, r });
  });
  sourceOf.set(list, source);
  knownPartners(list, new Map(JSON.parse(heads.partners) as [number, number[]][]));
  let names: string[] | null = null;
  let tagged: Record<string, number[]> | null = null;
  return withListFacts(list, {
    names: () => (names ??= JSON.parse(heads.names) as string[]),
    tagged: (tag) => {
      tagged ??= JSON.parse(heads.tagged) as Record<string, number[]>;
      return Object.hasOwn(tagged, tag) ? tagged[tag]! : [];
    },
  });
}
