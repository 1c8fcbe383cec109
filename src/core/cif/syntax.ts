import { InputError } from '../errors.js';
import { scaleByPowerOfTen, scanNumber, scanState } from '../numeric/number-scan.js';

/**
 * CIF 1.1 syntax layer shared by powder CIF (pdCIF) and structure CIF readers.
 * Grammar: Hall, Allen & Brown, Acta Cryst. A47, 655 (1991); CIF 1.1 syntax as published in
 * International Tables for Crystallography Vol. G, section 2.2 (2006).
 * It knows data blocks, items, loops, quoted and semicolon-delimited strings and comments;
 * save frames and global_ blocks are skipped. It knows nothing of what the tags mean.
 */

/** One value as written in the file, with the line where it starts. */
export interface CifValue {
  text: string;
  line: number;
  /** True for '...', "..." and ;-delimited text: never the special '?' / '.' values. */
  quoted: boolean;
}

export interface CifLoop {
  /** Tags lower-cased, with the leading underscore. */
  tags: string[];
  rows: CifValue[][];
  /** Line of the loop_ keyword. */
  line: number;
  /**
   * Tolerant reading only: why the loop is incomplete (its last row was short and was left out). A
   * reader that takes data from this loop refuses it with this message and line.
   */
  problem?: CifProblem;
}

/** A syntax problem that a tolerant reading stepped over: what, where, and what was done instead. */
export interface CifProblem {
  message: string;
  line: number;
  /** What the reading did instead ("the tag was left out"). */
  action: string;
  /**
   * For values without a tag that hold a number: the last loop of the block before them. They may be
   * rows of that loop cut off by a stray tag, so a reader taking data from it refuses them.
   */
  numbersAfter?: CifLoop;
}

export interface CifParseOptions {
  /**
   * Read tolerantly: problems that leave the rest of the file readable (a tag without value, values
   * without tag, a tag given twice, content before the first data_, a quote not closed on its line, a
   * loop whose last row is short, stop_) are pushed here instead of thrown. Unclosed text fields and
   * save frames stay errors: where they end cannot be known.
   */
  problems?: CifProblem[];
}

type Report = (message: string, line: number, action: string, numbersAfter?: CifLoop) => void;

function reporter(fileName: string, options: CifParseOptions): Report {
  const problems = options.problems;
  return (message, line, action, numbersAfter) => {
    if (!problems) throw new InputError(message, { file: fileName, line });
    problems.push(numbersAfter ? { message, line, action, numbersAfter } : { message, line, action });
  };
}

export interface CifBlock {
  /** The name after data_, as written. */
  name: string;
  line: number;
  /** Single items by tag (lower-cased, with the leading underscore). */
  items: Map<string, CifValue>;
  loops: CifLoop[];
}

type TokenKind = 'data' | 'loop' | 'save' | 'global' | 'stop' | 'tag' | 'value';

/**
 * Tokens as two parallel lists, so a value token is the very CifValue the blocks keep (one object
 * per value: large powder loops allocate half as much). For other kinds, text is the tag name or
 * the block / frame name.
 */
class Tokens {
  readonly kinds: TokenKind[] = [];
  readonly items: CifValue[] = [];
  get length(): number {
    return this.kinds.length;
  }
  push(kind: TokenKind, text: string, line: number, quoted: boolean): void {
    this.kinds.push(kind);
    this.items.push({ text, line, quoted });
  }
}

const LF = 10;
const CR = 13;
const SPACE = 32;
const TAB = 9;
const HASH = 35;
const SEMICOLON = 59;
const QUOTE = 39;
const DOUBLE_QUOTE = 34;

function isBlank(code: number): boolean {
  return code === SPACE || code === TAB || code === CR || code === LF || code === 11 || code === 12;
}

/** Split CIF text into tokens, each with the line where it starts. */
function tokenize(source: string, fileName: string, report: Report): Tokens {
  const text = source.charCodeAt(0) === 0xfeff ? source.slice(1) : source;
  const n = text.length;
  const tokens = new Tokens();
  let i = 0;
  let line = 1;
  while (i < n) {
    const c = text.charCodeAt(i);
    if (c === LF) {
      line++;
      i++;
      continue;
    }
    if (isBlank(c)) {
      i++;
      continue;
    }
    if (c === HASH) {
      while (i < n && text.charCodeAt(i) !== LF) i++;
      continue;
    }
    if (c === SEMICOLON && (i === 0 || text.charCodeAt(i - 1) === LF)) {
      const start = line;
      const close = findTextFieldEnd(text, i + 1);
      if (close < 0) {
        throw new InputError(`the text field opened with ";" here is never closed; add a line starting with ";"`, {
          file: fileName,
          line: start,
        });
      }
      let body = text.slice(i + 1, close);
      for (let k = i + 1; k <= close; k++) if (text.charCodeAt(k) === LF) line++;
      const firstBreak = body.indexOf('\n');
      if (firstBreak >= 0 && body.slice(0, firstBreak).trim() === '') body = body.slice(firstBreak + 1);
      tokens.push('value', body.replace(/\r$/, ''), start, true);
      i = close + 2;
      continue;
    }
    if (c === QUOTE || c === DOUBLE_QUOTE) {
      let j = i + 1;
      let closed = true;
      for (;;) {
        if (j >= n || text.charCodeAt(j) === LF || (text.charCodeAt(j) === CR && text.charCodeAt(j + 1) === LF)) {
          report(`a quoted string starting with ${String.fromCharCode(c)} is not closed on its line`, line, 'it was read to the end of its line');
          closed = false;
          break;
        }
        if (text.charCodeAt(j) === c && (j + 1 >= n || isBlank(text.charCodeAt(j + 1)))) break;
        j++;
      }
      tokens.push('value', text.slice(i + 1, j), line, true);
      i = closed ? j + 1 : j;
      continue;
    }
    let j = i + 1;
    while (j < n && !isBlank(text.charCodeAt(j))) j++;
    const word = text.slice(i, j);
    const kind = classifyWord(word);
    tokens.push(kind, wordText(kind, word), line, false);
    i = j;
  }
  return tokens;
}

/** Index of the "\n" that precedes the closing ";" of a text field, or -1. */
function findTextFieldEnd(text: string, from: number): number {
  return text.indexOf('\n;', from);
}

function classifyWord(word: string): TokenKind {
  const first = word.charCodeAt(0);
  if ((first >= 48 && first <= 57) || first === 45 || first === 43 || first === 46) return 'value';
  if (first === 95 /* _ */) return 'tag';
  const lower = word.toLowerCase();
  if (lower.startsWith('data_')) return 'data';
  if (lower === 'loop_') return 'loop';
  if (lower.startsWith('save_')) return 'save';
  if (lower === 'global_') return 'global';
  if (lower === 'stop_') return 'stop';
  return 'value';
}

/** Tags are kept lower-cased; data_ and save_ keep the name after the keyword. */
function wordText(kind: TokenKind, word: string): string {
  if (kind === 'tag') return word.toLowerCase();
  if (kind === 'data' || kind === 'save') return word.slice(5);
  return word;
}

/**
 * Parse CIF 1.1 text into its data blocks. Throws InputError naming the file and line for
 * malformed syntax (unclosed strings or text fields, a tag without value, a value without tag,
 * a loop whose values do not fill whole rows, duplicate tags, content before the first data_),
 * unless options.problems asks for a tolerant reading (see CifParseOptions).
 */
export function parseCif(text: string, fileName: string, options: CifParseOptions = {}): CifBlock[] {
  const report = reporter(fileName, options);
  const tokens = tokenize(text, fileName, report);
  const blocks: CifBlock[] = [];
  let block: CifBlock | null = null;
  let inGlobal = false;
  let i = 0;
  const fail = (message: string, line: number): never => {
    throw new InputError(message, { file: fileName, line });
  };
  while (i < tokens.length) {
    const t = tokens.items[i];
    switch (tokens.kinds[i]) {
      case 'data': {
        if (t.text === '') report('data_ needs a block name right after it (e.g. data_sample1)', t.line, 'the block was read without a name');
        block = { name: t.text, line: t.line, items: new Map(), loops: [] };
        blocks.push(block);
        inGlobal = false;
        i++;
        break;
      }
      case 'global': {
        inGlobal = true;
        i++;
        break;
      }
      case 'save': {
        if (t.text === '') fail('save_ closes a save frame that was never opened', t.line);
        let j = i + 1;
        while (j < tokens.length && !(tokens.kinds[j] === 'save' && tokens.items[j].text === '')) {
          if (tokens.kinds[j] === 'data') fail(`save frame save_${t.text} is not closed before the next data_ block`, t.line);
          j++;
        }
        if (j >= tokens.length) fail(`save frame save_${t.text} is never closed with save_`, t.line);
        i = j + 1;
        break;
      }
      case 'stop': {
        report('stop_ is reserved in CIF 1.1 and cannot be used', t.line, 'it was left out');
        i++;
        break;
      }
      case 'loop': {
        const loop = readLoop(tokens, i, fileName, report);
        i = loop.next;
        if (inGlobal || !loop.loop) break;
        if (!block) report('loop_ appears before the first data_ block header', t.line, 'the loop was left out');
        else block.loops.push(loop.loop);
        break;
      }
      case 'tag': {
        const value = tokens.items[i + 1];
        if (!value || tokens.kinds[i + 1] !== 'value') {
          report(`tag ${t.text} has no value`, t.line, 'the tag was left out');
          i++;
          break;
        }
        i += 2;
        if (inGlobal) break;
        if (!block) report(`tag ${t.text} appears before the first data_ block header`, t.line, 'the item was left out');
        else if (block.items.has(t.text)) report(`tag ${t.text} is given twice in block data_${block.name}`, t.line, 'the first value was kept');
        else block.items.set(t.text, value);
        break;
      }
      case 'value': {
        let j = i + 1;
        while (j < tokens.length && tokens.kinds[j] === 'value') j++;
        const more = j - i > 1 ? ` (and ${j - i - 1} more value(s) after it)` : '';
        let numeric = false;
        for (let k = i; k < j && !numeric; k++) numeric = cifNumber(tokens.items[k]) !== null;
        const lastLoop = numeric && block ? block.loops[block.loops.length - 1] : undefined;
        report(`value "${shorten(t.text)}"${more} has no tag before it`, t.line, 'the value(s) were left out', lastLoop);
        i = j;
      }
    }
  }
  return blocks;
}

function readLoop(tokens: Tokens, at: number, fileName: string, report: Report): { loop: CifLoop | null; next: number } {
  const start = tokens.items[at];
  const tags: string[] = [];
  let i = at + 1;
  while (i < tokens.length && tokens.kinds[i] === 'tag') {
    const tag = tokens.items[i];
    if (tags.includes(tag.text)) throw new InputError(`tag ${tag.text} is listed twice in the loop`, { file: fileName, line: tag.line });
    tags.push(tag.text);
    i++;
  }
  if (tags.length === 0) {
    let j = i;
    while (j < tokens.length && tokens.kinds[j] === 'value') j++;
    report('loop_ has no tags after it', start.line, 'the loop and its values were left out');
    return { loop: null, next: j };
  }
  const rows: CifValue[][] = [];
  let row: CifValue[] = [];
  while (i < tokens.length && tokens.kinds[i] === 'value') {
    row.push(tokens.items[i]);
    if (row.length === tags.length) {
      rows.push(row);
      row = [];
    }
    i++;
  }
  const loop: CifLoop = { tags, rows, line: start.line };
  if (row.length > 0) {
    const message = `the loop starting at line ${start.line} has ${tags.length} tags but its last row has only ${row.length} value(s); each row needs one value per tag`;
    const line = row[row.length - 1].line;
    const action = 'the short row was left out';
    report(message, line, action);
    loop.problem = { message, line, action };
  }
  return { loop, next: i };
}

/**
 * The problem of a tolerant reading that touches this loop's data: the loop left incomplete, a
 * problem inside its lines, or numbers without a tag after it (rows cut off by a stray tag).
 */
export function problemInLoop(loop: CifLoop, problems: readonly CifProblem[]): CifProblem | undefined {
  if (loop.problem) return loop.problem;
  const last = loop.rows.length > 0 ? loop.rows[loop.rows.length - 1][loop.tags.length - 1].line : loop.line;
  return problems.find((p) => (p.line >= loop.line && p.line <= last) || p.numbersAfter === loop);
}

/** Is this value the CIF "unknown" or "not applicable" (written as ?, ., or a quoted or text-field ? / . alone)? */
export function isUnknownValue(v: CifValue): boolean {
  const text = v.quoted ? v.text.trim() : v.text;
  return text === '?' || text === '.' || (v.quoted && text === '');
}

function shorten(text: string): string {
  return text.length > 40 ? `${text.slice(0, 37)}...` : text;
}

function normalizeTag(tag: string): string {
  const lower = tag.toLowerCase();
  return lower.startsWith('_') ? lower : `_${lower}`;
}

/** The loop of a block that holds this tag (with or without the leading underscore, any case). */
export function findLoop(block: CifBlock, tag: string): CifLoop | undefined {
  const wanted = normalizeTag(tag);
  return block.loops.find((loop) => loop.tags.includes(wanted));
}

/** A single item of a block (any case, with or without the leading underscore). */
export function cifItem(block: CifBlock, tag: string): CifValue | undefined {
  return block.items.get(normalizeTag(tag));
}

/**
 * A CIF number with its standard uncertainty: "1234(35)" → 1234 ± 35, "0.123(4)" → 0.123 ± 0.004,
 * "1.5e3(2)" → 1500 ± 200. '?' (unknown) and '.' (not applicable) give null, and so does any text
 * that is not a number (use requireCifNumber to treat that as the user's error).
 */
export function cifNumber(v: CifValue): { value: number; esd: number | null } | null {
  const text = v.text;
  const value = scanNumber(text, 0, false);
  if (!Number.isFinite(value)) return null;
  const end = scanState.end;
  const length = text.length;
  if (end === length) return { value, esd: null };
  if (text.charCodeAt(end) !== 40 /* ( */ || text.charCodeAt(length - 1) !== 41 /* ) */ || length - end < 3) return null;
  let esdDigits = 0;
  for (let k = end + 1; k < length - 1; k++) {
    const c = text.charCodeAt(k);
    if (c < 48 || c > 57) return null;
    esdDigits = esdDigits * 10 + (c - 48);
  }
  // The uncertainty counts in units of the last written digit of the mantissa (times its power of ten).
  let dot = -1;
  let exponentAt = end;
  for (let k = 0; k < end; k++) {
    const c = text.charCodeAt(k);
    if (c === 46) dot = k;
    else if (c === 101 || c === 69) {
      exponentAt = k;
      break;
    }
  }
  const decimals = dot < 0 ? 0 : exponentAt - dot - 1;
  const exponent = exponentAt < end ? Number(text.slice(exponentAt + 1, end)) : 0;
  const esd = scaleByPowerOfTen(esdDigits, exponent - decimals);
  return { value, esd: Number.isFinite(esd) ? esd : null };
}

/** Like cifNumber, but text that is neither a number nor '?' / '.' is an InputError naming file and line. */
export function requireCifNumber(
  v: CifValue,
  fileName: string,
  what: string,
): { value: number; esd: number | null } | null {
  const parsed = cifNumber(v);
  if (parsed !== null) return parsed;
  if (!v.quoted && (v.text === '?' || v.text === '.')) return null;
  throw new InputError(`${what} "${shorten(v.text)}" is not a number`, { file: fileName, line: v.line });
}
