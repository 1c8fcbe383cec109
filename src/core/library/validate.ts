import { z } from 'zod';
import type { UnitCell } from '../model/cell.js';
import { InputError } from '../errors.js';
import { STANDARD_TAGS, type Reference, type ReferenceLine } from '../model/reference.js';

/** Building blocks shared by the reference file format and the store's own check. */
export const positiveD = z.number().positive('d must be a positive number of Å');
export const relativeIntensity = z
  .number()
  .min(0, 'intensity must be between 0 and 100 (relative to the strongest line)')
  .max(100, 'intensity must be between 0 and 100 (relative to the strongest line)')
  .nullable();
export const millerIndices = z.tuple([z.number().int(), z.number().int(), z.number().int()], {
  error: 'hkl must be three whole numbers, e.g. [1, 1, 1]',
});
export const multiplicity = z.number().int().positive('multiplicity must be a whole number of 1 or more');

const cellLength = z.number().positive('cell lengths a, b, c must be positive numbers of Å');
const cellAngle = z.number().gt(0, 'cell angles must lie between 0 and 180 degrees').lt(180, 'cell angles must lie between 0 and 180 degrees');
export const unitCell = z.strictObject({
  a: cellLength,
  b: cellLength,
  c: cellLength,
  alpha: cellAngle,
  beta: cellAngle,
  gamma: cellAngle,
  spaceGroup: z.string().trim().min(1, 'spaceGroup is empty: give a Hermann–Mauguin symbol or number, or leave it out').optional(),
});

export const referenceName = z.string().trim().min(1, 'name is empty: give the phase a name');
export const referenceSource = z
  .string()
  .trim()
  .min(1, 'source is empty: say where the values come from (paper, database entry, own measurement)');
export const tagList = z.array(z.string().trim().min(1, 'a tag is empty'));
export const rirValue = z.number().positive('rir (I/Ic) must be a positive number').nullable();

/** The check every reference passes before the store writes it (extra fields such as id are ignored). */
const storedLine = z.object({
  d: positiveD,
  intensity: relativeIntensity,
  hkl: millerIndices.optional(),
  multiplicity: multiplicity.optional(),
});
const referenceSchema = z.object({
  name: referenceName,
  formula: z.string(),
  tags: tagList,
  source: referenceSource,
  notes: z.string().optional(),
  rir: rirValue.optional(),
  cell: unitCell.nullable().optional(),
  intensityBasis: z.string().optional(),
  lines: z.array(storedLine).min(1, 'the reference has no lines'),
});

/** Reason of one zod issue, as a sentence part a chemist can act on. */
export function describeIssue(issue: z.core.$ZodIssue): string {
  const key = issue.path[issue.path.length - 1];
  if (issue.code === 'invalid_type' && issue.input === undefined) {
    if (key === 'source') return 'source is missing: every reference must say where its values come from (paper, database entry, own measurement)';
    return `"${String(key)}" is missing`;
  }
  if (issue.code === 'unrecognized_keys') {
    return `unknown field${issue.keys.length > 1 ? 's' : ''} ${issue.keys.map((k) => `"${k}"`).join(', ')} (check the spelling)`;
  }
  if (issue.code === 'invalid_type') {
    const got = issue.input === null ? 'null' : Array.isArray(issue.input) ? 'a list' : typeof issue.input;
    return `"${String(key)}" must be ${article(issue.expected)}, not ${got}${showValue(issue.input)}`;
  }
  return `${issue.message}${showValue(issue.input)}`;
}

/**
 * Where in a reference a path points, e.g. `lines item 4` for ["lines", 3, "d"]: a final field name is
 * left out because the reason names it.
 */
export function describeField(path: readonly PropertyKey[]): string {
  const parts: string[] = [];
  const end = typeof path[path.length - 1] === 'string' ? path.length - 1 : path.length;
  for (let i = 0; i < end; i++) {
    const key = path[i];
    if (key === 'lines' && typeof path[i + 1] === 'number') {
      parts.push(`lines item ${(path[i + 1] as number) + 1}`);
      i++;
    } else if (typeof key === 'number') parts.push(`item ${key + 1}`);
    else parts.push(`"${String(key)}"`);
  }
  return parts.join(', ');
}

/** "entry 3 ("silicon")" when the file holds several, the name alone when it holds one. */
export function describeEntry(index: number, name: unknown, several: boolean): string {
  const named = typeof name === 'string' && name.trim() !== '' ? `"${name.trim()}"` : '';
  if (!several) return named ? `reference ${named}` : 'the reference';
  return named ? `entry ${index + 1} (${named})` : `entry ${index + 1}`;
}

function article(expected: string): string {
  const names: Record<string, string> = { number: 'a number', string: 'text', array: 'a list', object: 'an object', int: 'a whole number' };
  return names[expected] ?? expected;
}

function showValue(input: unknown): string {
  return typeof input === 'number' || (typeof input === 'string' && input.length < 40) ? ` (got ${JSON.stringify(input)})` : '';
}

/**
 * Check references about to be stored (the same rules as the file format: positive d, intensity
 * 0–100 or null, a name and a source) and return them in the store's normal form.
 */
export function checkReferences(refs: readonly Reference[], origin = 'import'): Reference[] {
  return refs.map((ref, index) => {
    if (checkedReferences.has(ref)) return ref;
    const result = referenceSchema.safeParse(ref, { reportInput: true });
    if (!result.success) {
      const issue = result.error.issues[0]!;
      const field = describeField(issue.path);
      throw new InputError(
        `${origin}: ${describeEntry(index, (ref as { name?: unknown })?.name, refs.length > 1)}${field ? `, ${field}` : ''}: ${describeIssue(issue)}`,
      );
    }
    return markChecked(normalizeReference(result.data as Reference));
  });
}

/**
 * References known to be checked and in normal form (made by checkReferences, or read from a
 * reference file, whose format is at least as strict): checkReferences passes them as they are.
 * Treat them as read-only.
 */
const checkedReferences = new WeakSet<Reference>();

export function markChecked(ref: Reference): Reference {
  checkedReferences.add(ref);
  return ref;
}

/** Trimmed text, tags without duplicates (standard tags in lower case), lines by decreasing d. */
export function normalizeReference(ref: Reference): Reference {
  return normalizeReferenceOwningLines({ ...ref, lines: copyLines(ref.lines) });
}

/**
 * normalizeReference for a reference whose lines are fresh objects of its own in the stored form
 * (d, intensity or null, hkl, multiplicity): they are sorted in place rather than copied.
 */
export function normalizeReferenceOwningLines(ref: Reference): Reference {
  const out: Reference = {
    name: ref.name.trim(),
    formula: ref.formula.trim(),
    tags: normalizeTags(ref.tags),
    source: ref.source.trim(),
    lines: sortLines(ref.lines),
  };
  const notes = ref.notes?.trim();
  if (notes) out.notes = notes;
  if (ref.rir !== undefined && ref.rir !== null) out.rir = ref.rir;
  if (ref.cell) out.cell = canonicalCell(ref.cell);
  const basis = ref.intensityBasis?.trim();
  if (basis) out.intensityBasis = basis;
  return out;
}

function canonicalCell(cell: UnitCell): UnitCell {
  const out: UnitCell = { a: cell.a, b: cell.b, c: cell.c, alpha: cell.alpha, beta: cell.beta, gamma: cell.gamma };
  const group = cell.spaceGroup?.trim();
  if (group) out.spaceGroup = group;
  return out;
}

function normalizeTags(tags: readonly string[]): string[] {
  const seen = new Set<string>();
  const out: string[] = [];
  for (const raw of tags) {
    const spaced = raw.trim().replace(/\s+/g, ' ');
    const lower = spaced.toLowerCase();
    if (!spaced || seen.has(lower)) continue;
    seen.add(lower);
    out.push((STANDARD_TAGS as readonly string[]).includes(lower) ? lower : spaced);
  }
  return out;
}

function copyLines(lines: readonly ReferenceLine[]): ReferenceLine[] {
  return lines.map((line) => {
    const out: ReferenceLine = { d: line.d, intensity: line.intensity ?? null };
    if (line.hkl) out.hkl = [line.hkl[0], line.hkl[1], line.hkl[2]];
    if (line.multiplicity !== undefined) out.multiplicity = line.multiplicity;
    return out;
  });
}

/** By decreasing d, in place (a stable sort: lines of equal d keep their order). */
function sortLines(lines: ReferenceLine[]): ReferenceLine[] {
  for (let i = 1; i < lines.length; i++) {
    if (lines[i]!.d > lines[i - 1]!.d) return lines.sort((a, b) => b.d - a.d);
  }
  return lines;
}

/** The content of a normalised reference as one text, to tell a real change from a re-import of the same. */
export function canonicalContent(ref: Reference): string {
  return JSON.stringify([ref.name, ref.formula, ref.tags, ref.source, ref.notes ?? null, ref.rir ?? null, ref.cell ?? null, ref.intensityBasis ?? null, ref.lines]);
}
