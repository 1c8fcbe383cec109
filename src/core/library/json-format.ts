import { z } from 'zod';
import { InputError, isInputError } from '../errors.js';
import { dFromTwoTheta } from '../model/units.js';
import { parseWavelength } from '../model/wavelengths.js';
import { positionsFromCell } from './from-crystal.js';
import { findJsonSyntaxError, findTooDeepNesting, JsonPlaces, type JsonPath } from './json-locate.js';
import type { Reference, ReferenceLine } from '../model/reference.js';
import {
  describeEntry,
  describeField,
  describeIssue,
  millerIndices,
  multiplicity,
  normalizeReference,
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

type FileEntry = z.infer<typeof fileEntry>;

/** A problem found in one entry after the schema check, with the path it concerns. */
class EntryProblem extends Error {
  constructor(
    readonly path: JsonPath,
    message: string,
  ) {
    super(message);
  }
}

/** Levels a reference file uses at most: the list, a reference, its lines, a line, its hkl. */
const REFERENCE_NESTING = 5;
/** Deeper than this is no reference file (and would overflow the stack of the parser and checks). */
const MAX_NESTING = 64;

/** Read a reference JSON file; any problem is an InputError naming the file, the entry and the line. */
export function parseReferenceJson(text: string, fileName: string): Reference[] {
  const body = text.replace(/^\uFEFF/, '');
  if (body.trim() === '') throw new InputError('the reference file is empty', { file: fileName });
  const deep = findTooDeepNesting(body, MAX_NESTING);
  if (deep) {
    throw new InputError(
      `the JSON nests arrays and objects more than ${MAX_NESTING} deep here; a reference file needs ${REFERENCE_NESTING} levels (list, reference, lines, line, hkl)`,
      { file: fileName, line: deep.line },
    );
  }
  let document: unknown;
  try {
    document = JSON.parse(body);
  } catch (err) {
    const problem = findJsonSyntaxError(body);
    if (problem) throw new InputError(`this is not valid JSON: ${problem.message}`, { file: fileName, line: problem.line });
    throw new InputError(`this is not valid JSON (${err instanceof Error ? err.message : String(err)})`, { file: fileName });
  }
  const several = Array.isArray(document);
  const entries: unknown[] = several ? (document as unknown[]) : [document];
  if (entries.length === 0) throw new InputError('the file holds an empty list: no references to import', { file: fileName });

  let places: JsonPlaces | undefined;
  const fail = (index: number, path: JsonPath, reason: string): never => {
    places ??= new JsonPlaces(body);
    const fullPath = several ? [index, ...path] : path;
    const name = (entries[index] as { name?: unknown } | null)?.name;
    const field = describeField(path);
    throw new InputError(`${describeEntry(index, name, several)}${field ? `, ${field}` : ''}: ${reason}`, {
      file: fileName,
      line: places.lineOf(fullPath),
    });
  };

  const seen = new Map<string, number>();
  return entries.map((entry, index) => {
    if (typeof entry !== 'object' || entry === null || Array.isArray(entry)) {
      return fail(index, [], 'a reference must be an object in curly braces, { "name": ..., "source": ..., "lines": [...] }');
    }
    const checked = fileEntry.safeParse(entry, { reportInput: true });
    if (!checked.success) {
      const issue = checked.error.issues[0]!;
      return fail(index, issue.path, describeIssue(issue));
    }
    let ref: Reference;
    try {
      ref = normalizeReference(referenceFromEntry(checked.data));
    } catch (err) {
      if (err instanceof EntryProblem) return fail(index, err.path, err.message);
      if (isInputError(err)) return fail(index, [], err.message);
      throw err;
    }
    const key = ref.name.toLowerCase();
    const earlier = seen.get(key);
    if (earlier !== undefined) fail(index, ['name'], `the name "${ref.name}" was already used by entry ${earlier + 1}; each reference needs its own name`);
    seen.set(key, index);
    return ref;
  });
}

function referenceFromEntry(entry: FileEntry): Reference {
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

  if (entry.lines && entry.lines.length > 0) {
    const lambda = entry.wavelength === undefined ? undefined : wavelengthAngstrom(entry.wavelength);
    ref.lines = entry.lines.map((line, i) => lineFromEntry(line, i, lambda));
  } else if (entry.cell) {
    const computed = positionsFromCell(entry.cell, { name: entry.name });
    if (computed.lines.length === 0) throw new EntryProblem(['cell'], 'the cell gives no reflections; check its lengths');
    ref.lines = computed.lines;
    ref.cell = computed.cell ?? entry.cell;
    ref.intensityBasis ??= computed.intensityBasis;
    ref.notes ??= computed.notes;
  } else {
    throw new EntryProblem(entry.lines ? ['lines'] : [], 'give "lines" (d or 2θ with intensity), or a "cell" to compute line positions from');
  }
  return ref;
}

function lineFromEntry(line: z.infer<typeof fileLine>, index: number, lambda: number | undefined): ReferenceLine {
  let d: number;
  if (line.d !== undefined && line.twoTheta !== undefined) {
    throw new EntryProblem(['lines', index], 'give either "d" or "twoTheta" for a line, not both');
  } else if (line.d !== undefined) {
    d = line.d;
  } else if (line.twoTheta !== undefined) {
    if (lambda === undefined) {
      throw new EntryProblem(['lines', index, 'twoTheta'], 'lines given in 2θ need the wavelength they were measured with: add "wavelength" (Å) to the reference');
    }
    d = dFromTwoTheta(line.twoTheta, lambda);
  } else {
    throw new EntryProblem(['lines', index], 'the line has neither "d" (Å) nor "twoTheta" (degrees)');
  }
  const out: ReferenceLine = { d, intensity: line.intensity ?? null };
  if (line.hkl) out.hkl = line.hkl;
  if (line.multiplicity !== undefined) out.multiplicity = line.multiplicity;
  return out;
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
