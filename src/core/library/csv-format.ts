import Papa from 'papaparse';
import { baseName, extensionOf } from '../model/file-name.js';
import { InputError } from '../errors.js';
import type { Hkl } from '../model/cell.js';
import { dFromTwoTheta } from '../model/units.js';
import { parseWavelength } from '../model/wavelengths.js';
import type { Reference, ReferenceLine } from '../model/reference.js';
import { checkReferences } from './validate.js';

/** What a CSV peak list cannot say in its columns: given by the caller or by "# key: value" lines at its top. */
export interface CsvReferenceMeta {
  name?: string;
  formula?: string;
  tags?: string[];
  source?: string;
  notes?: string;
  rir?: number | null;
  intensityBasis?: string;
  /** Wavelength of a 2θ column, Å. */
  wavelengthAngstrom?: number;
}

type Column = 'd' | 'twoTheta' | 'intensity' | 'h' | 'k' | 'l' | 'multiplicity';

/** Header names understood for each column (compared in lower case, without spaces and units in brackets). */
const COLUMN_NAMES: Record<Column, readonly string[]> = {
  d: ['d', 'd-spacing', 'dspacing', 'd_spacing', 'dspacings'],
  twoTheta: ['2θ', '2theta', 'twotheta', '2-theta', '2th', '2thetadeg'],
  intensity: ['intensity', 'i', 'int', 'irel', 'i/i0', 'i/imax', 'relativeintensity', 'rel.intensity'],
  h: ['h'],
  k: ['k'],
  l: ['l'],
  multiplicity: ['multiplicity', 'mult', 'm'],
};

/**
 * Read a reference from a CSV peak list: a header naming the columns (d or 2θ, intensity, h, k, l,
 * multiplicity), then one line per reflection. Lines starting with # are comments; "# name: ...",
 * "# source: ...", "# formula: ...", "# tags: a, b", "# wavelength: 1.5406" give the reference's
 * details unless meta gives them. One bad line rejects the file with its line number.
 */
export function parseReferenceCsv(text: string, fileName: string, meta: CsvReferenceMeta = {}): Reference {
  const sourceLines = text.replace(/^\uFEFF/, '').split(/\r\n|\n|\r/);
  const fromComments: Record<string, string> = {};
  const body = sourceLines.map((line) => {
    const comment = /^\s*#(.*)$/.exec(line);
    if (!comment) return line;
    const pair = /^\s*([A-Za-z ]+?)\s*:\s*(.*?)\s*$/.exec(comment[1]!);
    if (pair) fromComments[pair[1]!.toLowerCase()] = pair[2]!;
    return '';
  });
  const delimiter = delimiterOfHeader(body.find((line) => line.trim() !== '') ?? '');
  const parsed = Papa.parse<string[]>(body.join('\n'), { header: false, skipEmptyLines: false, delimiter });
  const rows = parsed.data;
  if (rows.length !== body.length && rows.length !== body.length - 1) {
    throw new InputError('a quoted field spans several lines; put one reflection per line', { file: fileName });
  }
  const decimalComma = delimiter !== ',';
  const isBlank = (row: string[] | undefined) => !row || row.every((cell) => cell.trim() === '');

  const headerIndex = rows.findIndex((row) => !isBlank(row));
  if (headerIndex < 0) throw new InputError('the CSV file has no header and no lines', { file: fileName });
  const columns = readHeader(rows[headerIndex]!, fileName, headerIndex + 1);
  const wavelength = meta.wavelengthAngstrom ?? wavelengthFromComment(fromComments['wavelength'], fileName);
  if (columns.has('twoTheta') && wavelength === undefined) {
    throw new InputError('the file gives 2θ: say which wavelength with a "# wavelength: 1.5406" line (Å or an anode such as Cu) or the --wavelength option', {
      file: fileName,
      line: headerIndex + 1,
    });
  }

  const lines: ReferenceLine[] = [];
  for (let r = headerIndex + 1; r < rows.length; r++) {
    const row = rows[r]!;
    if (isBlank(row)) continue;
    lines.push(readRow(row, columns, wavelength, decimalComma, { file: fileName, line: r + 1 }));
  }
  if (lines.length === 0) throw new InputError('the CSV file has a header but no lines', { file: fileName });

  const tags = meta.tags ?? (fromComments['tags'] ? fromComments['tags'].split(',') : []);
  const ref: Reference = {
    name: meta.name ?? fromComments['name'] ?? baseName(fileName).slice(0, baseName(fileName).length - extensionOf(fileName).length),
    formula: meta.formula ?? fromComments['formula'] ?? '',
    tags,
    source: meta.source ?? fromComments['source'] ?? '',
    lines,
  };
  const notes = meta.notes ?? fromComments['notes'];
  if (notes) ref.notes = notes;
  const rir = meta.rir ?? (fromComments['rir'] !== undefined ? Number(fromComments['rir']) : undefined);
  if (rir !== undefined && rir !== null) ref.rir = rir;
  const basis = meta.intensityBasis ?? fromComments['intensity basis'];
  if (basis) ref.intensityBasis = basis;
  if (!ref.source.trim()) {
    throw new InputError('the reference has no source: add a line "# source: where the values come from" at the top, or give --source', { file: fileName });
  }
  return checkReferences([ref], fileName)[0]!;
}

/** The separator that splits the header (column names hold no decimal commas) into the most columns. */
function delimiterOfHeader(header: string): string {
  let best = ',';
  let most = 1;
  for (const candidate of [',', '\t', ';', '|']) {
    const fields = header.split(candidate).length;
    if (fields > most) {
      best = candidate;
      most = fields;
    }
  }
  return best;
}

function readHeader(row: string[], file: string, line: number): Map<Column, number> {
  const columns = new Map<Column, number>();
  row.forEach((cell, index) => {
    const key = cell.trim().toLowerCase().replace(/\s*[([].*?[)\]]\s*/g, '').replace(/\s+/g, '');
    if (key === '') return;
    const column = (Object.keys(COLUMN_NAMES) as Column[]).find((c) => COLUMN_NAMES[c].includes(key));
    if (!column) {
      if (Number.isFinite(Number(key.replace(',', '.')))) {
        throw new InputError('the first line must name the columns, e.g. "d,intensity,h,k,l" or "2theta,intensity"', { file, line });
      }
      throw new InputError(`unknown column "${cell.trim()}"; use d or 2theta, intensity, h, k, l, multiplicity`, { file, line });
    }
    if (columns.has(column)) throw new InputError(`the column "${cell.trim()}" appears twice`, { file, line });
    columns.set(column, index);
  });
  if (columns.has('d') === columns.has('twoTheta')) {
    throw new InputError('the header needs exactly one position column: d (Å) or 2theta (degrees)', { file, line });
  }
  const indexCount = ['h', 'k', 'l'].filter((c) => columns.has(c as Column)).length;
  if (indexCount !== 0 && indexCount !== 3) throw new InputError('give all three columns h, k, l or none of them', { file, line });
  return columns;
}

function readRow(
  row: string[],
  columns: Map<Column, number>,
  wavelength: number | undefined,
  decimalComma: boolean,
  place: { file: string; line: number },
): ReferenceLine {
  const number = (column: Column): number | null => {
    const index = columns.get(column);
    const raw = index === undefined ? '' : (row[index] ?? '').trim();
    if (raw === '') return null;
    const value = Number(decimalComma ? raw.replace(',', '.') : raw);
    if (!Number.isFinite(value)) throw new InputError(`"${raw}" in column ${column} is not a number`, place);
    return value;
  };
  const required = (column: Column, what: string): number => {
    const value = number(column);
    if (value === null) throw new InputError(`${what} is missing`, place);
    return value;
  };
  let d: number;
  if (columns.has('d')) {
    d = required('d', 'd');
    if (!(d > 0)) throw new InputError(`d must be a positive number of Å (got ${d})`, place);
  } else {
    const twoTheta = required('twoTheta', '2θ');
    if (!(twoTheta > 0 && twoTheta < 180)) throw new InputError(`2θ must lie between 0 and 180 degrees (got ${twoTheta})`, place);
    d = dFromTwoTheta(twoTheta, wavelength!);
  }
  const intensity = number('intensity');
  if (intensity !== null && !(intensity >= 0 && intensity <= 100)) {
    throw new InputError(`intensity must be between 0 and 100, relative to the strongest line (got ${intensity})`, place);
  }
  const line: ReferenceLine = { d, intensity };
  if (columns.has('h')) {
    const hkl = [number('h'), number('k'), number('l')];
    if (hkl.some((v) => v !== null)) {
      if (!hkl.every((v) => v !== null && Number.isInteger(v))) throw new InputError('h, k, l must be three whole numbers', place);
      line.hkl = hkl as Hkl;
    }
  }
  const m = number('multiplicity');
  if (m !== null) {
    if (!(Number.isInteger(m) && m >= 1)) throw new InputError(`multiplicity must be a whole number of 1 or more (got ${m})`, place);
    line.multiplicity = m;
  }
  return line;
}

function wavelengthFromComment(text: string | undefined, file: string): number | undefined {
  if (text === undefined) return undefined;
  try {
    return parseWavelength(text).lambda1;
  } catch (err) {
    throw new InputError(`the "# wavelength:" line: ${err instanceof Error ? err.message : String(err)}`, { file });
  }
}
