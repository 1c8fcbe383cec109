import { InputError } from '../../errors.js';
import type { RawPattern } from './finish.js';
import { firstCsvRow } from './csv-row.js';
import { readTextMetadata } from './metadata.js';
import { scanNumber, scanState } from '../../numeric/number-scan.js';

/**
 * Column text: "x y [sigma]" rows separated by blanks, tabs, commas or semicolons, with a decimal
 * comma where the separator allows it, comment lines (# ! ;), metadata lines and an optional header
 * of column names (CSV). The data rows are read by a hand-written scanner over the string.
 */

/** 'blank' is any run of spaces and tabs. */
export type Separator = 'blank' | ',' | ';';

const MAX_COLUMNS = 64;
const LF = 10;
const CR = 13;
const SPACE = 32;
const TAB = 9;
const DOUBLE_QUOTE = 34;

const isBlank = (c: number): boolean => c === SPACE || c === TAB || c === CR;
const isCommentMark = (c: number): boolean => c === 35 /* # */ || c === 33 /* ! */ || c === 59; /* ; */
const DECIMAL_COMMA_NUMBER = /^[-+]?(\d+(,\d*)?|,\d+)([eE][-+]?\d+)?$/;
const NON_FINITE_WORD = /^"?[-+]?(nan|inf|infinity|1\.#inf|1\.#ind|1\.#qnan|-?nan\(ind\))"?$/i;
const NUMBER_WORD = /^"?[-+]?(\d+([.,]\d*)?|[.,]\d+)([eE][-+]?\d+)?"?$/;

/** Separator of a data row: ';' if present, else ',' unless the commas are decimal commas between blanks. */
function detectSeparator(line: string): Separator {
  if (line.includes(';')) return ';';
  if (!line.includes(',')) return 'blank';
  const words = line.trim().split(/[ \t]+/);
  return words.length >= 2 && words.every((w) => DECIMAL_COMMA_NUMBER.test(w)) ? 'blank' : ',';
}

/**
 * Scans one row of numbers into a fixed buffer, up to the end of its line. Returns the number of
 * values (and sets lineEnd to the index of the line's "\n", or the text length), or -1 with failAt
 * set to where the bad text starts.
 */
class RowScanner {
  readonly values = new Float64Array(MAX_COLUMNS);
  failAt = 0;
  lineEnd = 0;
  private readonly separatorCode: number;
  private readonly decimalComma: boolean;

  constructor(separator: Separator) {
    this.separatorCode = separator === ',' ? 44 : separator === ';' ? 59 : -1;
    this.decimalComma = separator !== ',';
  }

  scan(text: string, from: number): number {
    const sep = this.separatorCode;
    const n = text.length;
    let i = from;
    let count = 0;
    for (;;) {
      let c = text.charCodeAt(i);
      while (isBlank(c)) c = text.charCodeAt(++i);
      if (c === LF || i >= n) return this.endRow(i, count);
      if (count > 0 && sep >= 0) {
        if (c !== sep) return this.fail(i);
        c = text.charCodeAt(++i);
        while (isBlank(c)) c = text.charCodeAt(++i);
        if (c === LF || i >= n) return this.endRow(i, count); // a trailing separator closes the row
      }
      const quoted = c === DOUBLE_QUOTE;
      if (quoted) i++;
      const value = scanNumber(text, i, this.decimalComma);
      if (value !== value || value === Infinity || value === -Infinity) return this.fail(i);
      i = scanState.end;
      c = text.charCodeAt(i);
      if (quoted) {
        if (c !== DOUBLE_QUOTE) return this.fail(i);
        c = text.charCodeAt(++i);
      }
      if (!(isBlank(c) || c === sep || c === LF || i >= n)) return this.fail(i);
      if (count >= MAX_COLUMNS) return this.fail(i);
      this.values[count++] = value;
    }
  }

  private endRow(at: number, count: number): number {
    this.lineEnd = at;
    return count;
  }

  private fail(at: number): number {
    this.failAt = at;
    return -1;
  }
}

/** The word of text starting at `at`, for messages. */
function wordAt(text: string, at: number, end: number): string {
  let j = at;
  while (j < end && !isBlank(text.charCodeAt(j)) && text.charCodeAt(j) !== 44 && text.charCodeAt(j) !== 59) j++;
  const word = text.slice(at, Math.max(j, Math.min(at + 1, end)));
  return word.length > 30 ? `${word.slice(0, 27)}...` : word;
}

function lineEnd(text: string, from: number): number {
  const at = text.indexOf('\n', from);
  return at < 0 ? text.length : at;
}

interface PreambleLine {
  text: string;
  line: number;
  comment: boolean;
}

interface DataStart {
  offset: number;
  line: number;
  separator: Separator;
  columns: number;
}

/** Split a header line into column names (quoted CSV names allowed). */
function headerNames(line: string, separator: Separator): string[] {
  if (separator === 'blank') return line.trim().split(/[ \t]+/).map((w) => w.replace(/^"|"$/g, ''));
  const names = firstCsvRow(line, separator).map((w) => w.trim());
  while (names.length > 0 && names[names.length - 1] === '') names.pop();
  return names;
}

const X_NAME = /(^|[^a-z])(2\s*[-_ ]?\s*(θ|theta|th)\b|2θ|two\s*[-_ ]?\s*theta|angle|position|pos\b)|^x\b/i;
const Y_NAME = /(intens|count|cps|^y\b|^i\b|yobs|y_obs|signal|^int\b|^obs)/i;
const SIGMA_NAME = /(sigma|σ|esd|e\.s\.d|\berr|error|uncert|std|^s$|^dy$|^su$|^u\()/i;

interface ColumnChoice {
  x: number;
  y: number;
  sigma: number | null;
}

/** Pick the 2θ, intensity and uncertainty columns by header name, or by position for 2–3 columns. */
function chooseColumns(names: string[] | null, columns: number, place: { file: string; line: number }): ColumnChoice {
  if (names) {
    const sigma = names.findIndex((n) => SIGMA_NAME.test(n));
    const x = names.findIndex((n, i) => i !== sigma && X_NAME.test(n));
    const y = names.findIndex((n, i) => i !== sigma && i !== x && Y_NAME.test(n));
    if (x >= 0 && y >= 0) return { x, y, sigma: sigma >= 0 ? sigma : null };
    if (columns > 3) {
      throw new InputError(
        `the header names ${names.map((n) => `"${n}"`).join(', ')} do not show which column is 2θ and which is intensity; name them e.g. "2theta" and "counts"`,
        place,
      );
    }
  }
  if (columns > 3) {
    throw new InputError(
      `the data rows have ${columns} columns; expected 2θ, intensity and optionally its uncertainty, or a header line naming the columns`,
      place,
    );
  }
  return { x: 0, y: 1, sigma: columns === 3 ? 2 : null };
}

/** Find the first data row (two or more numbers) and keep the lines before it. */
function findDataStart(text: string, fileName: string, preamble: PreambleLine[]): DataStart {
  let pos = 0;
  let line = 1;
  while (pos < text.length) {
    const end = lineEnd(text, pos);
    const content = text.slice(pos, end).trim();
    if (content !== '') {
      if (isCommentMark(content.charCodeAt(0))) {
        preamble.push({ text: content, line, comment: true });
      } else {
        const separator = detectSeparator(content);
        const scanner = new RowScanner(separator);
        const columns = scanner.scan(text, pos);
        if (columns >= 2) return { offset: pos, line, separator, columns };
        rejectBrokenRow(content, separator, fileName, line);
        preamble.push({ text: content, line, comment: false });
      }
    }
    pos = end + 1;
    line++;
  }
  const firstLine = preamble.length > 0 ? preamble[0].line : 1;
  throw new InputError(
    'no line holds two or more numbers (2θ and intensity); this does not look like a pattern file',
    { file: fileName, line: firstLine },
  );
}

/** A row of numbers with a NaN or infinity among them is a broken data row, not metadata. */
function rejectBrokenRow(content: string, separator: Separator, fileName: string, line: number): void {
  const words = separator === 'blank' ? content.split(/[ \t]+/) : content.split(separator).map((w) => w.trim());
  if (words.length < 2) return;
  const bad = words.find((w) => NON_FINITE_WORD.test(w));
  if (bad && words.every((w) => NON_FINITE_WORD.test(w) || NUMBER_WORD.test(w) || w === '')) {
    throw new InputError(`"${bad}" is not a finite number; every data value must be a number`, { file: fileName, line });
  }
}

/** The last non-comment line before the data, if it names the columns; or a comment line naming 2θ and intensity. */
function findHeader(preamble: PreambleLine[], start: DataStart): { names: string[]; index: number } | null {
  for (let k = preamble.length - 1; k >= 0; k--) {
    const candidate = preamble[k];
    const body = candidate.comment ? candidate.text.replace(/^[#!;]+\s*/, '') : candidate.text;
    const names = headerNames(body, start.separator);
    const wordsOnly = !/[:=]/.test(body) && names.length === start.columns && names.every((n) => n !== '' && !NUMBER_WORD.test(n));
    if (!candidate.comment) return wordsOnly ? { names, index: k } : null;
    if (wordsOnly && namesTwoThetaAndIntensity(names)) return { names, index: k };
  }
  return null;
}

function namesTwoThetaAndIntensity(names: string[]): boolean {
  const sigma = names.findIndex((n) => SIGMA_NAME.test(n));
  return names.some((n, i) => i !== sigma && X_NAME.test(n)) && names.some((n, i) => i !== sigma && Y_NAME.test(n));
}

class GrowingColumn {
  data: Float64Array;
  length = 0;
  constructor(capacity: number) {
    this.data = new Float64Array(capacity);
  }
  push(value: number): void {
    if (this.length === this.data.length) {
      const bigger = new Float64Array(this.data.length * 2);
      bigger.set(this.data);
      this.data = bigger;
    }
    this.data[this.length++] = value;
  }
  toArray(): Float64Array {
    return this.data.slice(0, this.length);
  }
}

/** Read column text into raw arrays (see the module comment for what is understood). */
export function readColumnText(text: string, fileName: string): RawPattern {
  const preamble: PreambleLine[] = [];
  const start = findDataStart(text, fileName, preamble);
  const header = findHeader(preamble, start);
  const choice = chooseColumns(header?.names ?? null, start.columns, { file: fileName, line: start.line });
  const metadata = readTextMetadata(preamble.filter((_, k) => k !== header?.index).map((p) => p.text));

  const firstLineLength = lineEnd(text, start.offset) - start.offset + 1;
  const capacity = Math.max(16, Math.ceil(((text.length - start.offset) / firstLineLength) * 1.1) + 16);
  const xs = new GrowingColumn(capacity);
  const ys = new GrowingColumn(capacity);
  const sigmas = choice.sigma === null ? null : new GrowingColumn(capacity);
  const scanner = new RowScanner(start.separator);
  const values = scanner.values;
  const footer: string[] = [];
  let footerError: InputError | null = null;
  let lastLine = start.line;
  let pos = start.offset;
  let line = start.line;
  const n = text.length;

  while (pos < n) {
    let i = pos;
    let c = text.charCodeAt(i);
    while (isBlank(c)) c = text.charCodeAt(++i);
    if (c === LF || i >= n || isCommentMark(c)) {
      pos = c === LF ? i + 1 : lineEnd(text, i) + 1;
      line++;
      continue;
    }
    const count = scanner.scan(text, i);
    if (footerError) {
      if (count === start.columns) throw footerError;
      footer.push(text.slice(i, lineEnd(text, i)).trim());
    } else if (count === start.columns) {
      xs.push(values[choice.x]);
      ys.push(values[choice.y]);
      if (sigmas && choice.sigma !== null) sigmas.push(values[choice.sigma]);
      lastLine = line;
    } else {
      const place = { file: fileName, line };
      if (count >= 0) {
        throw new InputError(
          `this row has ${count} value(s) but the rows above have ${start.columns}; every data row needs the same columns`,
          place,
        );
      }
      const word = wordAt(text, scanner.failAt, lineEnd(text, scanner.failAt));
      const error = new InputError(
        `"${word}" is not ${isNonFiniteWord(word) ? 'a finite number' : 'a number'}; data rows must hold numbers only (2θ, intensity, optional uncertainty)`,
        place,
      );
      if (!isFooterStart(c, word)) throw error;
      footerError = error;
      footer.push(text.slice(i, lineEnd(text, i)).trim());
    }
    pos = count >= 0 ? scanner.lineEnd + 1 : lineEnd(text, i) + 1;
    line++;
  }

  const meta = metadata.meta;
  const notes = metadata.notes;
  if (header) meta.columns = header.names.join(', ');
  if (footer.length > 0) {
    meta.footer = footer.join('\n');
    notes.push(`${footer.length} line(s) of text after the data were kept as metadata`);
  }
  return {
    x: xs.toArray(),
    y: ys.toArray(),
    sigma: sigmas ? sigmas.toArray() : null,
    wavelength: metadata.wavelength,
    meta,
    notes,
    format: start.separator === 'blank' ? 'xy' : 'csv',
    lastLine,
  };
}

function isNonFiniteWord(word: string): boolean {
  return NON_FINITE_WORD.test(word) || Math.abs(Number(word.replace(/"/g, '').replace(',', '.'))) === Infinity;
}

/** Text after the data (a letter or bracket first, not "nan"/"inf") may be a footer. */
function isFooterStart(firstChar: number, word: string): boolean {
  const letterOrBracket = (firstChar >= 65 && firstChar <= 90) || (firstChar >= 97 && firstChar <= 122) || firstChar === 91 || firstChar === 60;
  return letterOrBracket && !NON_FINITE_WORD.test(word);
}
