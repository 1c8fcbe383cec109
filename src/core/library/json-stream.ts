import { InputError } from '../errors.js';
import { findJsonSyntaxError } from './json-locate.js';

/**
 * Reading a reference JSON file (one object, or a list of objects) from its bytes as they arrive,
 * one list item at a time, so that a 160 MB file never sits in memory as one text or one object tree.
 *
 * Each item is first read by a fast path that knows the shape of a plain reference (known field
 * names, line objects of numbers) and writes its lines into reused typed arrays. Anything else (an
 * unknown or escaped field name, a value out of range, a syntax error, deep nesting) sends the item
 * to the full path: its own JSON text, JSON.parse and the schema check, which give the exact message.
 */

/** Fields of a reference the fast path reads, in the order of the bit flags below. */
const HEAD_FIELDS = ['name', 'formula', 'tags', 'source', 'notes', 'rir', 'cell', 'intensityBasis', 'wavelength'] as const;
const LINE_FIELDS = ['d', 'twoTheta', 'intensity', 'hkl', 'multiplicity'] as const;

/** Which fields a line gave (bit i for LINE_FIELDS[i]; a null intensity counts as not given). */
export const LINE_HAS_D = 1;
export const LINE_HAS_TWO_THETA = 2;
export const LINE_HAS_INTENSITY = 4;
export const LINE_HAS_HKL = 8;
export const LINE_HAS_MULTIPLICITY = 16;

/**
 * The lines of a plain reference as the fast path read them. The arrays are reused for the next
 * item: read them before asking for it.
 */
export interface PlainLines {
  count: number;
  given: Uint8Array;
  d: Float64Array;
  twoTheta: Float64Array;
  intensity: Float64Array;
  /** h, k, l per line. */
  hkl: Int32Array;
  multiplicity: Int32Array;
}

/** One item of the list (or the file's one object). */
export interface ListItem {
  /** The file holds a list (entries are then named by their number). */
  several: boolean;
  /** Position in the list, from 0. */
  index: number;
  /** Line of the file on which the item starts. */
  line: number;
  /**
   * The item read by the fast path: its other fields as JSON.parse would give them and its lines;
   * null when it is not a plain reference (then only the full path can tell what is wrong).
   */
  plain: { head: Record<string, unknown>; lines: PlainLines | null } | null;
  /** The item's JSON text and value (an InputError naming the line when its JSON is broken). */
  full(): { text: string; value: unknown };
}

/** Levels a reference file uses at most: the list, a reference, its lines, a line, its hkl. */
const REFERENCE_NESTING = 5;
/** Deeper than this is no reference file (and would overflow the stack of the parser and checks). */
const MAX_NESTING = 64;
/** Head values (tags, a cell) nest little; deeper ones go to the full path, which checks depth. */
const MAX_PLAIN_NESTING = 4;

/** Zero bytes after the bytes read, so the fast path's reads past them stay in bounds (and fail). */
const PADDING = 64;
/** Thrown inside a step when the bytes read so far end before the step does. */
const NEED_MORE = Symbol('need more bytes');
/** Thrown by the fast path for anything but a plain reference. */
const NOT_PLAIN = Symbol('not a plain reference');

const utf8 = new TextDecoder('utf-8', { ignoreBOM: true });
const FIELD_BYTES = (names: readonly string[]) => names.map((n) => Uint8Array.from(n, (c) => c.charCodeAt(0)));
const HEAD_BYTES = FIELD_BYTES(HEAD_FIELDS);
const LINE_BYTES = FIELD_BYTES(LINE_FIELDS);
const LINES_BYTES = FIELD_BYTES(['lines'])[0]!;
/** Exact powers of ten (10^0 … 10^22 are exact doubles). */
const POW10 = Array.from({ length: 23 }, (_, k) => 10 ** k);
const MAX_EXACT = 2 ** 53;

const QUOTE = 34;
const BACKSLASH = 92;
const COMMA = 44;
const COLON = 58;
const OPEN_BRACE = 123;
const CLOSE_BRACE = 125;
const OPEN_BRACKET = 91;
const CLOSE_BRACKET = 93;
const NEWLINE = 10;

/** The items of a reference JSON file given as byte chunks (any sizes, split anywhere). */
export function* readReferenceList(chunks: Iterable<Uint8Array>, fileName: string): Generator<ListItem> {
  const reader = new ListReader(chunks[Symbol.iterator](), fileName);
  yield* reader.items();
}

class ListReader {
  /** The bytes read and kept so far, then PADDING zero bytes. */
  private bytes = new Uint8Array(PADDING);
  /** How many of them are the file's. */
  private size = 0;
  private pos = 0;
  private line = 1;
  private ended = false;
  private lines: PlainLines = emptyLines(64);

  constructor(
    private readonly chunks: Iterator<Uint8Array>,
    private readonly fileName: string,
  ) {}

  *items(): Generator<ListItem> {
    this.step(() => {
      this.skipByteOrderMark();
      this.space();
    });
    if (this.at(this.pos) < 0) throw new InputError('the reference file is empty', { file: this.fileName });
    const several = this.at(this.pos) === OPEN_BRACKET;
    let index = 0;
    if (several) {
      this.pos++;
      const empty = this.step(() => {
        this.space();
        if (this.at(this.pos) !== CLOSE_BRACKET) return false;
        this.pos++;
        return true;
      });
      if (!empty) {
        for (;;) {
          yield this.item(several, index++);
          const more = this.step(() => {
            this.space();
            const c = this.at(this.pos);
            if (c === COMMA || c === CLOSE_BRACKET) {
              this.pos++;
              return c === COMMA;
            }
            return this.syntaxError(`expected "," or "]" in a list but found ${this.describe(this.pos)}`);
          });
          if (!more) break;
        }
      }
    } else {
      yield this.item(several, index++);
    }
    this.step(() => {
      this.space();
      if (this.at(this.pos) >= 0) this.syntaxError(`unexpected ${this.describe(this.pos)} after the end of the JSON document`);
    });
    if (index === 0) throw new InputError('the file holds an empty list: no references to import', { file: this.fileName });
  }

  /** One item: by the fast path when it is a plain reference, else its text for the full path. */
  private item(several: boolean, index: number): ListItem {
    this.step(() => this.space());
    const line = this.line;
    let plain = null as ListItem['plain'];
    let start = 0;
    this.step(() => {
      start = this.pos;
      try {
        plain = this.plainReference();
        return;
      } catch (err) {
        if (err !== NOT_PLAIN) throw err;
      }
      plain = null;
      this.pos = start;
      this.line = line;
      this.skipValue(several ? 1 : 0);
    });
    const bytes = this.bytes.subarray(start, this.pos);
    const fileName = this.fileName;
    return {
      several,
      index,
      line,
      plain,
      full: () => parseItemText(utf8.decode(bytes), line, fileName),
    };
  }

  /**
   * Run a step that may need more bytes than read so far: when it does, keep the bytes from where it
   * started, read more and run it again from there (so a step must only change state it resets).
   */
  private step<T>(work: () => T): T {
    for (;;) {
      const from = this.pos;
      const line = this.line;
      try {
        return work();
      } catch (err) {
        if (err !== NEED_MORE) throw err;
        this.pos = from;
        this.line = line;
        this.readMore(from);
      }
    }
  }

  /** Keep bytes from `from` on and append at least as many again (so a long item is read in few passes). */
  private readMore(from: number): void {
    const kept = this.bytes.subarray(from, this.size);
    const parts: Uint8Array[] = [kept];
    let size = kept.length;
    const wanted = Math.max(1, 2 * kept.length);
    while (size < wanted) {
      const next = this.chunks.next();
      if (next.done) {
        this.ended = true;
        break;
      }
      parts.push(next.value);
      size += next.value.length;
    }
    const joined = new Uint8Array(size + PADDING);
    let offset = 0;
    for (const part of parts) {
      joined.set(part, offset);
      offset += part.length;
    }
    this.bytes = joined;
    this.size = size;
    this.pos -= from;
  }

  /** The byte at i, -1 at the end of the file (NEED_MORE when more may come). */
  private at(i: number): number {
    if (i < this.size) return this.bytes[i]!;
    if (this.ended) return -1;
    throw NEED_MORE;
  }

  private skipByteOrderMark(): void {
    if (this.at(0) === 0xef && this.at(1) === 0xbb && this.at(2) === 0xbf) this.pos = 3;
  }

  /** JSON white space (and a byte order mark, as the line finder takes it). */
  private space(): void {
    for (;;) {
      const c = this.at(this.pos);
      if (c === 32 || c === 9 || c === 13) this.pos++;
      else if (c === NEWLINE) {
        this.pos++;
        this.line++;
      } else if (c === 0xef && this.at(this.pos + 1) === 0xbb && this.at(this.pos + 2) === 0xbf) this.pos += 3;
      else return;
    }
  }

  private expect(byte: number): void {
    this.space();
    if (this.at(this.pos) !== byte) throw NOT_PLAIN;
    this.pos++;
    this.space();
  }

  /** After a value inside an object or list: true for ",", false for the closing byte. */
  private next(close: number): boolean {
    this.space();
    const c = this.at(this.pos++);
    if (c === COMMA) return true;
    if (c === close) return false;
    throw NOT_PLAIN;
  }

  // --- the fast path -------------------------------------------------------------------------

  private plainReference(): { head: Record<string, unknown>; lines: PlainLines | null } {
    if (this.at(this.pos) !== OPEN_BRACE) throw NOT_PLAIN;
    this.pos++;
    const head: Record<string, unknown> = {};
    let lines: PlainLines | null = null;
    this.space();
    if (this.at(this.pos) === CLOSE_BRACE) throw NOT_PLAIN;
    do {
      this.space();
      const start = this.fieldName();
      const end = this.pos - 1;
      this.expect(COLON);
      if (sameBytes(this.bytes, start, end, LINES_BYTES)) {
        if (lines) throw NOT_PLAIN;
        lines = this.plainLines();
      } else {
        const field = HEAD_FIELDS[fieldIndex(this.bytes, start, end, HEAD_BYTES)];
        if (field === undefined || field in head) throw NOT_PLAIN;
        head[field] = this.value(1);
      }
    } while (this.next(CLOSE_BRACE));
    return { head, lines };
  }

  /**
   * The lines of a plain reference into the reused arrays. The hot loop of a large import: it reads
   * the bytes directly, and a read past the bytes so far (into the zero padding, which no JSON
   * value takes) fails like any other surprise; the full path then asks for more bytes and the item
   * is read again.
   */
  private plainLines(): PlainLines {
    const b = this.bytes;
    let p = this.pos;
    this.lines.count = 0;
    if (b[p] !== OPEN_BRACKET) throw NOT_PLAIN;
    p = this.skipSpace(b, p + 1);
    if (b[p] === CLOSE_BRACKET) {
      this.pos = p + 1;
      return this.lines;
    }
    for (;;) {
      p = this.plainLine(b, this.skipSpace(b, p));
      p = this.skipSpace(b, p);
      const c = b[p++];
      if (c === CLOSE_BRACKET) break;
      if (c !== COMMA) throw NOT_PLAIN;
    }
    this.pos = p;
    return this.lines; // grown meanwhile when the reference has many lines
  }

  /** One line object at p; returns the position after it. */
  private plainLine(b: Uint8Array, p: number): number {
    let lines = this.lines;
    if (lines.count === lines.d.length) lines = this.lines = grownLines(lines);
    const i = lines.count++;
    let given = 0;
    if (b[p] !== OPEN_BRACE) throw NOT_PLAIN;
    p = this.skipSpace(b, p + 1);
    if (b[p] === CLOSE_BRACE) {
      lines.given[i] = 0;
      return p + 1;
    }
    for (;;) {
      if (b[p] !== QUOTE) throw NOT_PLAIN;
      const field = lineField(b, p + 1);
      if (field < 0 || given & (1 << field)) throw NOT_PLAIN;
      given |= 1 << field;
      p = this.skipSpace(b, p + 2 + LINE_BYTES[field]!.length);
      if (b[p] !== COLON) throw NOT_PLAIN;
      p = this.skipSpace(b, p + 1);
      // The ranges of the file format's line schema (json-format.ts), as a test that lets only valid lines through.
      if (field === 0) {
        const d = this.numberAt(b, p);
        if (!(d > 0)) throw NOT_PLAIN;
        lines.d[i] = d;
      } else if (field === 2) {
        if (b[p] === 110 /* n */) {
          if (b[p + 1] !== 117 || b[p + 2] !== 108 || b[p + 3] !== 108) throw NOT_PLAIN;
          this.numberEnd = p + 4;
          given &= ~LINE_HAS_INTENSITY;
        } else {
          const intensity = this.numberAt(b, p);
          if (!(intensity >= 0 && intensity <= 100)) throw NOT_PLAIN;
          lines.intensity[i] = intensity;
        }
      } else if (field === 1) {
        const twoTheta = this.numberAt(b, p);
        if (!(twoTheta > 0 && twoTheta < 180)) throw NOT_PLAIN;
        lines.twoTheta[i] = twoTheta;
      } else if (field === 3) {
        if (b[p] !== OPEN_BRACKET) throw NOT_PLAIN;
        let q = p + 1;
        for (let k = 0; k < 3; k++) {
          q = this.skipSpace(b, q);
          const index = this.numberAt(b, q);
          if (!Number.isSafeInteger(index) || index < -2147483647 || index > 2147483647) throw NOT_PLAIN;
          lines.hkl[3 * i + k] = index;
          q = this.skipSpace(b, this.numberEnd);
          if (b[q++] !== (k < 2 ? COMMA : CLOSE_BRACKET)) throw NOT_PLAIN;
        }
        this.numberEnd = q;
      } else {
        const multiplicity = this.numberAt(b, p);
        if (!Number.isSafeInteger(multiplicity) || multiplicity < 1 || multiplicity > 2147483647) throw NOT_PLAIN;
        lines.multiplicity[i] = multiplicity;
      }
      p = this.skipSpace(b, this.numberEnd);
      const c = b[p++];
      if (c === CLOSE_BRACE) break;
      if (c !== COMMA) throw NOT_PLAIN;
      p = this.skipSpace(b, p);
    }
    lines.given[i] = given;
    return p;
  }

  /** Past JSON white space from p (counting lines). */
  private skipSpace(b: Uint8Array, p: number): number {
    for (;;) {
      const c = b[p];
      if (c === 32 || c === 9 || c === 13) p++;
      else if (c === NEWLINE) {
        p++;
        this.line++;
      } else return p;
    }
  }

  /** Where the last value read by the fast line reader ends. */
  private numberEnd = 0;

  /**
   * A JSON number at p (its end in numberEnd). Up to 2^53 in its digits and no exponent:
   * digits / 10^k, the correctly rounded value because both are exact doubles (Clinger, "How to read
   * floating point numbers accurately", PLDI 1990); else Number() of its text.
   */
  private numberAt(b: Uint8Array, p: number): number {
    const start = p;
    let c = b[p]!;
    const negative = c === 45; /* - */
    if (negative) c = b[++p]!;
    if (!(c >= 48 && c <= 57)) throw NOT_PLAIN;
    let mantissa = 0;
    let fraction = 0;
    if (c === 48) c = b[++p]!;
    else {
      do {
        mantissa = mantissa * 10 + (c - 48);
        c = b[++p]!;
      } while (c >= 48 && c <= 57);
    }
    if (c === 46 /* . */) {
      c = b[++p]!;
      if (!(c >= 48 && c <= 57)) throw NOT_PLAIN;
      do {
        mantissa = mantissa * 10 + (c - 48);
        fraction++;
        c = b[++p]!;
      } while (c >= 48 && c <= 57);
    }
    let simple = true;
    if (c === 101 || c === 69 /* e E */) {
      simple = false;
      c = b[++p]!;
      if (c === 43 || c === 45) c = b[++p]!;
      if (!(c >= 48 && c <= 57)) throw NOT_PLAIN;
      do c = b[++p]!;
      while (c >= 48 && c <= 57);
    }
    if (p >= this.size) throw NOT_PLAIN; // the number may go on in the bytes not read yet
    this.numberEnd = p;
    if (simple && mantissa < MAX_EXACT && fraction < POW10.length) {
      const value = mantissa / POW10[fraction]!;
      return negative ? -value : value;
    }
    const value = Number(String.fromCharCode(...b.subarray(start, p)));
    if (!Number.isFinite(value)) throw NOT_PLAIN;
    return value;
  }

  /** A field name in double quotes, without escapes: returns where its bytes start (pos ends after it). */
  private fieldName(): number {
    if (this.at(this.pos) !== QUOTE) throw NOT_PLAIN;
    const start = ++this.pos;
    for (;;) {
      const c = this.at(this.pos++);
      if (c === QUOTE) return start;
      if (c === BACKSLASH || c < 32) throw NOT_PLAIN;
    }
  }

  /** A JSON value as JSON.parse gives it (the few small values of a reference's other fields). */
  private value(depth: number): unknown {
    if (depth > MAX_PLAIN_NESTING) throw NOT_PLAIN;
    const c = this.at(this.pos);
    if (c === QUOTE) return this.string();
    if (c === OPEN_BRACKET) {
      this.pos++;
      const list: unknown[] = [];
      this.space();
      if (this.at(this.pos) === CLOSE_BRACKET) {
        this.pos++;
        return list;
      }
      do {
        this.space();
        list.push(this.value(depth + 1));
      } while (this.next(CLOSE_BRACKET));
      return list;
    }
    if (c === OPEN_BRACE) {
      this.pos++;
      const object: Record<string, unknown> = {};
      this.space();
      if (this.at(this.pos) === CLOSE_BRACE) {
        this.pos++;
        return object;
      }
      do {
        this.space();
        const key = this.string();
        if (key === '__proto__' || Object.prototype.hasOwnProperty.call(object, key)) throw NOT_PLAIN;
        this.expect(COLON);
        object[key] = this.value(depth + 1);
      } while (this.next(CLOSE_BRACE));
      return object;
    }
    if (c === 110) return this.word('null');
    if (c === 116) return this.word('true');
    if (c === 102) return this.word('false');
    const value = this.numberAt(this.bytes, this.pos);
    this.pos = this.numberEnd;
    return value;
  }

  private word(word: 'null' | 'true' | 'false'): null | boolean {
    for (let k = 0; k < word.length; k++) if (this.at(this.pos + k) !== word.charCodeAt(k)) throw NOT_PLAIN;
    this.pos += word.length;
    return word === 'null' ? null : word === 'true';
  }

  private string(): string {
    if (this.at(this.pos) !== QUOTE) throw NOT_PLAIN;
    const start = ++this.pos;
    let escaped = false;
    for (;;) {
      const c = this.at(this.pos++);
      if (c === QUOTE) break;
      if (c < 32) throw NOT_PLAIN;
      if (c === BACKSLASH) {
        escaped = true;
        this.at(this.pos++);
      }
    }
    const text = utf8.decode(this.bytes.subarray(start, this.pos - 1));
    if (!escaped) return text;
    try {
      return JSON.parse(`"${text}"`) as string;
    } catch {
      throw NOT_PLAIN;
    }
  }

  // --- the full path -------------------------------------------------------------------------

  /**
   * Move past one JSON value without reading it: to its closing bracket, or where it first goes
   * wrong (a text in quotes not closed on its line, the end of the file) so that the line finder
   * names that place; refuses nesting deeper than MAX_NESTING (outer levels counted from `depth`).
   */
  private skipValue(depth: number): void {
    const first = this.at(this.pos);
    if (first !== OPEN_BRACE && first !== OPEN_BRACKET && first !== QUOTE) {
      // A number, a word, or a stray byte: up to the next separator (one byte when it is one).
      const start = this.pos;
      for (;;) {
        const c = this.at(this.pos);
        if (c < 0 || c === COMMA || c === CLOSE_BRACKET || c === CLOSE_BRACE || c === 32 || c === 9 || c === 13 || c === NEWLINE) break;
        this.pos++;
      }
      if (this.pos === start && first >= 0) this.pos++;
      return;
    }
    let level = depth;
    let inString = false;
    for (;;) {
      const c = this.at(this.pos);
      if (c < 0) return;
      this.pos++;
      if (inString) {
        if (c === BACKSLASH) {
          if (this.at(this.pos) === NEWLINE) return;
          if (this.at(this.pos) >= 0) this.pos++;
        } else if (c === QUOTE) {
          inString = false;
          if (level === depth) return;
        } else if (c === NEWLINE) {
          this.pos--;
          return;
        }
      } else if (c === QUOTE) inString = true;
      else if (c === NEWLINE) this.line++;
      else if (c === OPEN_BRACE || c === OPEN_BRACKET) {
        if (++level > MAX_NESTING) {
          throw new InputError(
            `the JSON nests arrays and objects more than ${MAX_NESTING} deep here; a reference file needs ${REFERENCE_NESTING} levels (list, reference, lines, line, hkl)`,
            { file: this.fileName, line: this.line },
          );
        }
      } else if (c === CLOSE_BRACE || c === CLOSE_BRACKET) {
        if (--level === depth) return;
      }
    }
  }

  private describe(i: number): string {
    const c = this.at(i);
    if (c < 0) return 'the end of the file';
    const char = utf8.decode(this.bytes.subarray(i, Math.min(this.size, i + 4)))[0];
    return `"${char}"`;
  }

  private syntaxError(message: string): never {
    throw new InputError(`this is not valid JSON: ${message}`, { file: this.fileName, line: this.line });
  }
}

/** An item's value by JSON.parse; when its JSON is broken, the reason at its line of the file. */
function parseItemText(text: string, firstLine: number, fileName: string): { text: string; value: unknown } {
  try {
    return { text, value: JSON.parse(text) };
  } catch (err) {
    const problem = findJsonSyntaxError(text);
    if (problem) throw new InputError(`this is not valid JSON: ${problem.message}`, { file: fileName, line: firstLine + problem.line - 1 });
    throw new InputError(`this is not valid JSON (${err instanceof Error ? err.message : String(err)})`, { file: fileName, line: firstLine });
  }
}

/** Which line field a name in quotes at p is (LINE_FIELDS index), or -1. */
function lineField(b: Uint8Array, p: number): number {
  const first = b[p];
  const field = first === 100 ? 0 : first === 105 ? 2 : first === 116 ? 1 : first === 104 ? 3 : first === 109 ? 4 : -1;
  if (field < 0) return -1;
  const name = LINE_BYTES[field]!;
  for (let k = 1; k < name.length; k++) if (b[p + k] !== name[k]) return -1;
  return b[p + name.length] === QUOTE ? field : -1;
}

function sameBytes(bytes: Uint8Array, start: number, end: number, name: Uint8Array): boolean {
  if (end - start !== name.length) return false;
  for (let k = 0; k < name.length; k++) if (bytes[start + k] !== name[k]) return false;
  return true;
}

function fieldIndex(bytes: Uint8Array, start: number, end: number, names: readonly Uint8Array[]): number {
  for (let f = 0; f < names.length; f++) if (sameBytes(bytes, start, end, names[f]!)) return f;
  return -1;
}

function emptyLines(capacity: number): PlainLines {
  return {
    count: 0,
    given: new Uint8Array(capacity),
    d: new Float64Array(capacity),
    twoTheta: new Float64Array(capacity),
    intensity: new Float64Array(capacity),
    hkl: new Int32Array(3 * capacity),
    multiplicity: new Int32Array(capacity),
  };
}

function grownLines(lines: PlainLines): PlainLines {
  const grown = emptyLines(2 * lines.d.length);
  grown.count = lines.count;
  grown.given.set(lines.given);
  grown.d.set(lines.d);
  grown.twoTheta.set(lines.twoTheta);
  grown.intensity.set(lines.intensity);
  grown.hkl.set(lines.hkl);
  grown.multiplicity.set(lines.multiplicity);
  return grown;
}
