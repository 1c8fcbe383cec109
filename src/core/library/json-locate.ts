/**
 * Where things are in a JSON text: the line of any value by its path, and the line of a syntax
 * error. Only used when something is wrong (the values themselves come from JSON.parse, which is faster).
 */
export type JsonPath = readonly PropertyKey[];

interface PlaceNode {
  line: number;
  children: Map<string, PlaceNode> | null;
}

class JsonSyntaxProblem extends Error {
  constructor(
    message: string,
    readonly line: number,
  ) {
    super(message);
  }
}

/**
 * Where a JSON text nests deeper than maxDepth arrays and objects (a cheap scan that skips strings),
 * or null: the parser, the schema check and the line finder all recurse, so a text nested 100 000
 * deep overflowed the stack.
 */
export function findTooDeepNesting(text: string, maxDepth: number): { depth: number; line: number } | null {
  let depth = 0;
  let line = 1;
  let inString = false;
  for (let i = 0; i < text.length; i++) {
    const c = text.charCodeAt(i);
    if (c === 10) line++;
    if (inString) {
      if (c === 92) i++; // a backslash escapes the next character
      else if (c === 34 /* " */) inString = false;
    } else if (c === 34) inString = true;
    else if (c === 91 /* [ */ || c === 123 /* { */) {
      if (++depth > maxDepth) return { depth, line };
    } else if (c === 93 /* ] */ || c === 125 /* } */) depth--;
  }
  return null;
}

export class JsonPlaces {
  private readonly root: PlaceNode;

  constructor(text: string) {
    this.root = new Scanner(text).document();
  }

  /** Line (1-based) of the value at path, or of its nearest existing ancestor. */
  lineOf(path: JsonPath): number {
    let node = this.root;
    for (const key of path) {
      const child = node.children?.get(String(key));
      if (!child) break;
      node = child;
    }
    return node.line;
  }
}

/** The line and reason of a JSON syntax error, or null when the text is valid JSON. */
export function findJsonSyntaxError(text: string): JsonSyntaxProblem | null {
  try {
    new Scanner(text).document();
    return null;
  } catch (err) {
    if (err instanceof JsonSyntaxProblem) return err;
    throw err;
  }
}

class Scanner {
  private pos = 0;
  private line = 1;

  constructor(private readonly text: string) {}

  document(): PlaceNode {
    this.space();
    const root = this.value();
    this.space();
    if (this.pos < this.text.length) this.fail(`unexpected ${this.describe()} after the end of the JSON document`);
    return root;
  }

  private value(): PlaceNode {
    const line = this.line;
    const c = this.text[this.pos];
    if (c === '{') return { line, children: this.object() };
    if (c === '[') return { line, children: this.array() };
    if (c === '"') this.string();
    else if (c === '-' || (c !== undefined && c >= '0' && c <= '9')) this.number();
    else if (!this.word('true') && !this.word('false') && !this.word('null')) {
      this.fail(`expected a value (number, text in double quotes, true, false, null, object or array) but found ${this.describe()}`);
    }
    return { line, children: null };
  }

  private object(): Map<string, PlaceNode> {
    const children = new Map<string, PlaceNode>();
    this.pos++;
    this.space();
    if (this.text[this.pos] === '}') {
      this.pos++;
      return children;
    }
    for (;;) {
      this.space();
      if (this.text[this.pos] !== '"') this.fail(`expected a field name in double quotes but found ${this.describe()}`);
      const key = this.string();
      this.space();
      if (this.text[this.pos] !== ':') this.fail(`expected ":" after the field name "${key}" but found ${this.describe()}`);
      this.pos++;
      this.space();
      children.set(key, this.value());
      this.space();
      const c = this.text[this.pos];
      this.pos++;
      if (c === '}') return children;
      if (c !== ',') this.fail(`expected "," or "}" after the value of "${key}" but found ${this.describe(-1)}`);
    }
  }

  private array(): Map<string, PlaceNode> {
    const children = new Map<string, PlaceNode>();
    this.pos++;
    this.space();
    if (this.text[this.pos] === ']') {
      this.pos++;
      return children;
    }
    for (let index = 0; ; index++) {
      this.space();
      children.set(String(index), this.value());
      this.space();
      const c = this.text[this.pos];
      this.pos++;
      if (c === ']') return children;
      if (c !== ',') this.fail(`expected "," or "]" in a list but found ${this.describe(-1)}`);
    }
  }

  private string(): string {
    const start = ++this.pos;
    for (;;) {
      const c = this.text[this.pos];
      if (c === undefined || c === '\n') this.fail('text in double quotes is not closed on its line');
      if (c === '\\') this.pos += 2;
      else if (c === '"') break;
      else this.pos++;
    }
    const raw = this.text.slice(start, this.pos);
    this.pos++;
    try {
      return JSON.parse(`"${raw}"`) as string;
    } catch {
      this.fail(`the text "${raw}" has an invalid escape sequence`);
    }
  }

  private number(): void {
    const match = /-?(0|[1-9]\d*)(\.\d+)?([eE][+-]?\d+)?/y;
    match.lastIndex = this.pos;
    const found = match.exec(this.text);
    if (!found || found[0] === '-') this.fail(`"${this.text.slice(this.pos, this.pos + 12)}" is not a JSON number (use a decimal point, no leading zeros)`);
    this.pos += found[0].length;
    const next = this.text[this.pos];
    if (next !== undefined && /[\w.]/.test(next)) {
      this.fail(`"${this.text.slice(this.pos - found[0].length, this.pos + 6)}" is not a JSON number`);
    }
  }

  private word(w: string): boolean {
    if (this.text.startsWith(w, this.pos)) {
      this.pos += w.length;
      return true;
    }
    return false;
  }

  private space(): void {
    for (;;) {
      const c = this.text[this.pos];
      if (c === '\n') this.line++;
      else if (c !== ' ' && c !== '\t' && c !== '\r' && c !== '\uFEFF') return;
      this.pos++;
    }
  }

  private describe(offset = 0): string {
    const c = this.text[this.pos + offset];
    return c === undefined ? 'the end of the file' : `"${c}"`;
  }

  private fail(message: string): never {
    throw new JsonSyntaxProblem(message, this.line);
  }
}
