import { z } from 'zod';
import { InputError, isInputError } from '../errors.js';
import { dFromTwoTheta } from '../model/units.js';
import { parseWavelength } from '../model/wavelengths.js';
import { positionsFromCell } from './from-crystal.js';
import { JsonPlaces, type JsonPath } from './json-locate.js';
import { LINE_HAS_D, LINE_HAS_HKL, LINE_HAS_INTENSITY, LINE_HAS_MULTIPLICITY, LINE_HAS_TWO_THETA, readReferenceList, type ListItem, type PlainLines } from './json-stream.js';
import type { Reference, ReferenceLine } from '../model/reference.js';
import { withPackedValues } from './packed-lines.js';
import {
  describeEntry,
  describeField,
  describeIssue,
  markChecked,
  millerIndices,
  multiplicity,
  normalizeReference,
  normalizeReferenceOwningLines,
  positiveD,
  referenceName,
  referenceSource,
  relativeIntensity,
  rirValue,
  tagList,
  unitCell,
} from './validate.js';

/**
 * The reference file format (one object or an array of objects; see the project's CLI notes):
 * lines give d in Å, or 2θ in degrees with a top-level wavelength; a cell without lines gives
 * positions only.
 */
const fileLine = z.strictObject({
  d: positiveD.optional(),
  twoTheta: z.number().gt(0, '2θ must lie between 0 and 180 degrees').lt(180, '2θ must lie between 0 and 180 degrees').optional(),
  intensity: relativeIntensity.optional(),
  hkl: millerIndices.optional(),
  multiplicity: multiplicity.optional(),
});

const fileEntry = z.strictObject({
  name: referenceName,
  formula: z.string().optional(),
  tags: tagList.optional(),
  source: referenceSource,
  notes: z.string().optional(),
  rir: rirValue.optional(),
  cell: unitCell.nullable().optional(),
  intensityBasis: z.string().optional(),
  wavelength: z.union([z.number(), z.string()], { error: 'wavelength must be a number of Å (e.g. 1.5406) or an anode such as "Cu"' }).optional(),
  lines: z.array(fileLine).optional(),
});

/** The entry without its lines (the fast reader reads those itself). */
const fileEntryHead = fileEntry.omit({ lines: true });
type FileEntryHead = z.infer<typeof fileEntryHead>;

/** A problem found in one entry after the schema check, with the path it concerns. */
class EntryProblem extends Error {
  constructor(
    readonly path: JsonPath,
    message: string,
  ) {
    super(message);
  }
}

/** Read a reference JSON file; any problem is an InputError naming the file, the entry and the line. */
export function parseReferenceJson(text: string, fileName: string): Reference[] {
  return [...readReferenceJson([new TextEncoder().encode(text)], fileName)];
}

/**
 * The references of a reference JSON file given as byte chunks, one at a time as they are read,
 * checked and in the store's normal form; any problem is an InputError naming the file, the entry
 * and the line. A plain entry is built from the fast reader's arrays; any other goes through the
 * schema check, which also gives the message for whatever the fast reader did not take.
 */
export function* readReferenceJson(chunks: Iterable<Uint8Array>, fileName: string): Generator<Reference> {
  const seen = new Map<string, number>();
  for (const item of readReferenceList(chunks, fileName)) {
    const ref = (item.plain && referenceFromPlain(item.plain.head, item.plain.lines)) ?? referenceFromItem(item, fileName);
    const key = ref.name.toLowerCase();
    const earlier = seen.get(key);
    if (earlier !== undefined) {
      failAt(item, fileName, ['name'], `the name "${ref.name}" was already used by entry ${earlier + 1}; each reference needs its own name`);
    }
    seen.set(key, item.index);
    yield markChecked(ref);
  }
}

/** A problem in one item: its reason, with the line of the value at path (relative to the item). */
function failAt(item: ListItem, fileName: string, path: JsonPath, reason: string, full = item.full()): never {
  const name = (full.value as { name?: unknown } | null)?.name;
  const field = describeField(path);
  throw new InputError(`${describeEntry(item.index, name, item.several)}${field ? `, ${field}` : ''}: ${reason}`, {
    file: fileName,
    line: item.line + new JsonPlaces(full.text).lineOf(path) - 1,
  });
}

/** An item by the schema check and the line objects (throws the InputError for whatever is wrong). */
function referenceFromItem(item: ListItem, fileName: string): Reference {
  const full = item.full();
  const entry = full.value;
  const fail = (path: JsonPath, reason: string) => failAt(item, fileName, path, reason, full);
  if (typeof entry !== 'object' || entry === null || Array.isArray(entry)) {
    return fail([], 'a reference must be an object in curly braces, { "name": ..., "source": ..., "lines": [...] }');
  }
  const checked = fileEntry.safeParse(entry, { reportInput: true });
  if (!checked.success) {
    const issue = checked.error.issues[0]!;
    return fail(issue.path, describeIssue(issue));
  }
  try {
    const { lines, ...head } = checked.data;
    const lambda = lines && lines.length > 0 ? entryWavelength(head) : undefined;
    return referenceFromEntry(head, lines?.map((line, i) => lineFromEntry(line, i, lambda)));
  } catch (err) {
    if (err instanceof EntryProblem) return fail(err.path, err.message);
    if (isInputError(err)) return fail([], err.message);
    throw err;
  }
}

/**
 * A plain entry from the fast reader (its lines as arrays), or null when anything about it is not
 * right: the schema check of the other fields, the same line rules as lineFromEntry; the full path
 * then finds and words the problem.
 */
function referenceFromPlain(head: Record<string, unknown>, plain: PlainLines | null): Reference | null {
  if (!plain || plain.count === 0) return null; // a cell without lines, or none: the full path
  const checked = fileEntryHead.safeParse(head);
  if (!checked.success) return null;
  try {
    const lambda = entryWavelength(checked.data);
    const values = packedValuesOfPlain(plain, lambda);
    if (values) {
      // Without a `lines` of its own: the accessor is added, not put in place of a value (which would make the object a slow dictionary).
      const { lines: _none, ...head } = normalizeReferenceOwningLines(referenceHead(checked.data));
      return withPackedValues(head, values);
    }
    const lines: ReferenceLine[] = new Array(plain.count);
    for (let i = 0; i < plain.count; i++) {
      const given = plain.given[i]!;
      const d = lineD(given & LINE_HAS_D ? plain.d[i] : undefined, given & LINE_HAS_TWO_THETA ? plain.twoTheta[i] : undefined, i, lambda);
      const line: ReferenceLine = { d, intensity: given & LINE_HAS_INTENSITY ? plain.intensity[i]! : null };
      if (given & LINE_HAS_HKL) line.hkl = [plain.hkl[3 * i]!, plain.hkl[3 * i + 1]!, plain.hkl[3 * i + 2]!];
      if (given & LINE_HAS_MULTIPLICITY) line.multiplicity = plain.multiplicity[i]!;
      lines[i] = line;
    }
    return referenceFromEntry(checked.data, lines);
  } catch (err) {
    if (err instanceof EntryProblem || isInputError(err)) return null;
    throw err;
  }
}

/**
 * The lines of a plain entry as packed values (packed-lines.ts), when they need no line objects: no
 * line with hkl or multiplicity, d by decreasing value (as normal form has them). Else null, and
 * line objects are made (and sorted). A bad line throws as lineD does.
 */
function packedValuesOfPlain(plain: PlainLines, lambda: number | undefined): Float64Array | null {
  const n = plain.count;
  const values = new Float64Array(2 * n);
  for (let i = 0; i < n; i++) {
    const given = plain.given[i]!;
    if (given & (LINE_HAS_HKL | LINE_HAS_MULTIPLICITY)) return null;
    const d = lineD(given & LINE_HAS_D ? plain.d[i] : undefined, given & LINE_HAS_TWO_THETA ? plain.twoTheta[i] : undefined, i, lambda);
    if (i > 0 && d > values[i - 1]!) return null;
    values[i] = d;
    values[n + i] = given & LINE_HAS_INTENSITY ? plain.intensity[i]! : Number.NaN;
  }
  return values;
}

function entryWavelength(entry: FileEntryHead): number | undefined {
  return entry.wavelength === undefined ? undefined : wavelengthAngstrom(entry.wavelength);
}

/** A checked entry's reference without its lines (none yet). */
function referenceHead(entry: FileEntryHead): Reference {
  const ref: Reference = {
    name: entry.name,
    formula: entry.formula ?? '',
    tags: entry.tags ?? [],
    source: entry.source,
    lines: [],
  };
  if (entry.notes !== undefined) ref.notes = entry.notes;
  if (entry.rir !== undefined) ref.rir = entry.rir;
  if (entry.cell) ref.cell = entry.cell;
  if (entry.intensityBasis !== undefined) ref.intensityBasis = entry.intensityBasis;
  return ref;
}

/** The reference of a checked entry whose lines (in d, these objects its own) are already made. */
function referenceFromEntry(entry: FileEntryHead, lines: ReferenceLine[] | undefined): Reference {
  const ref = referenceHead(entry);
  if (lines && lines.length > 0) {
    ref.lines = lines;
    return normalizeReferenceOwningLines(ref);
  } else if (entry.cell) {
    const computed = positionsFromCell(entry.cell, { name: entry.name });
    if (computed.lines.length === 0) throw new EntryProblem(['cell'], 'the cell gives no reflections; check its lengths');
    ref.lines = computed.lines;
    ref.cell = computed.cell ?? entry.cell;
    ref.intensityBasis ??= computed.intensityBasis;
    ref.notes ??= computed.notes;
    return normalizeReference(ref);
  }
  throw new EntryProblem(lines ? ['lines'] : [], 'give "lines" (d or 2θ with intensity), or a "cell" to compute line positions from');
}

function lineFromEntry(line: z.infer<typeof fileLine>, index: number, lambda: number | undefined): ReferenceLine {
  const out: ReferenceLine = { d: lineD(line.d, line.twoTheta, index, lambda), intensity: line.intensity ?? null };
  if (line.hkl) out.hkl = line.hkl;
  if (line.multiplicity !== undefined) out.multiplicity = line.multiplicity;
  return out;
}

/** A line's d (Å): given, or from its 2θ and the reference's wavelength. */
function lineD(d: number | undefined, twoTheta: number | undefined, index: number, lambda: number | undefined): number {
  if (d !== undefined && twoTheta !== undefined) {
    throw new EntryProblem(['lines', index], 'give either "d" or "twoTheta" for a line, not both');
  } else if (d !== undefined) {
    return d;
  } else if (twoTheta !== undefined) {
    if (lambda === undefined) {
      throw new EntryProblem(['lines', index, 'twoTheta'], 'lines given in 2θ need the wavelength they were measured with: add "wavelength" (Å) to the reference');
    }
    return dFromTwoTheta(twoTheta, lambda);
  }
  throw new EntryProblem(['lines', index], 'the line has neither "d" (Å) nor "twoTheta" (degrees)');
}

function wavelengthAngstrom(value: number | string): number {
  try {
    return parseWavelength(String(value)).lambda1;
  } catch (err) {
    if (isInputError(err)) throw new EntryProblem(['wavelength'], err.message);
    throw err;
  }
}

/** The reference file format for export: d-based lines, one line object per text line for readable diffs. */
export function formatReferenceJson(refs: readonly Reference[]): string {
  if (refs.length === 0) return '[]\n';
  const blocks = refs.map((ref) => {
    const { lines, ...head } = toFileEntry(ref);
    const headText = JSON.stringify(head, null, 2).slice(0, -2); // drop the closing "\n}"
    const lineText = lines.map((line) => `    ${JSON.stringify(line)}`).join(',\n');
    return `${headText},\n  "lines": [\n${lineText}\n  ]\n}`.replace(/^/gm, '  ');
  });
  return `[\n${blocks.join(',\n')}\n]\n`;
}

/** A reference as its file entry (extra fields of a stored reference, such as id and version, left out). */
export function toFileEntry(ref: Reference): Reference {
  const entry: Reference = { name: ref.name, formula: ref.formula, tags: [...ref.tags], source: ref.source, lines: [] };
  if (ref.notes) entry.notes = ref.notes;
  if (ref.rir !== undefined && ref.rir !== null) entry.rir = ref.rir;
  if (ref.cell) entry.cell = ref.cell;
  if (ref.intensityBasis) entry.intensityBasis = ref.intensityBasis;
  entry.lines = ref.lines.map((line) => {
    const out: ReferenceLine = { d: line.d, intensity: line.intensity };
    if (line.hkl) out.hkl = line.hkl;
    if (line.multiplicity !== undefined) out.multiplicity = line.multiplicity;
    return out;
  });
  return entry;
}
