/**
 * The reference JSON file read as a stream (issue 15): the same references whatever the chunk sizes,
 * the fast path for plain entries giving exactly what the schema-checked path gives (same
 * references, same message), and a problem deep in a large file named by its line.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { InputError } from '../../src/core/errors.js';
import { formatReferenceJson, parseReferenceJson, readReferenceJson } from '../../src/core/library/json-format.js';
import type { Reference } from '../../src/core/model/reference.js';
import { silicon, syntheticPhase } from './helpers.js';

const encoder = new TextEncoder();

/** The text's bytes in chunks of `size` (the last one shorter). */
function chunked(text: string, size: number): Uint8Array[] {
  const bytes = encoder.encode(text);
  const chunks: Uint8Array[] = [];
  for (let at = 0; at < bytes.length; at += size) chunks.push(bytes.slice(at, at + size));
  return chunks;
}

/** The references, or the InputError's message and line. */
function outcome(read: () => Reference[]): Reference[] | { message: string; line: number | undefined } {
  try {
    return read();
  } catch (err) {
    if (err instanceof InputError) return { message: err.message, line: err.line };
    throw err;
  }
}

/** Line (1-based) of the first occurrence of `needle` in text. */
function lineOf(text: string, needle: string): number {
  const at = text.indexOf(needle);
  expect(at).toBeGreaterThanOrEqual(0);
  return text.slice(0, at).split('\n').length;
}

function many(count: number): Reference[] {
  return Array.from({ length: count }, (_, i) => syntheticPhase(`phase ${String(i).padStart(5, '0')}`, 12, ['simulated']));
}

describe('reading a reference JSON file as a stream', () => {
  const text = formatReferenceJson([silicon({ notes: 'a "quoted" note, ünïcode', rir: 4.7 }), ...many(40)]);

  it('gives the same references in chunks of any size as in one piece', () => {
    const whole = parseReferenceJson(text, 'refs.json');
    expect(whole).toHaveLength(41);
    for (const size of [1, 2, 3, 7, 64, 1000, 65536]) {
      expect([...readReferenceJson(chunked(text, size), 'refs.json')]).toEqual(whole);
    }
  });

  it('names the same line for a problem in chunks of any size', () => {
    const broken = text.replace(/("name": "phase 00030"[\s\S]*?"lines": \[\n\s*)\{"d":10,/, '$1{"d":"ten",');
    expect(broken).not.toBe(text);
    const expected = outcome(() => parseReferenceJson(broken, 'refs.json'));
    expect(expected).toMatchObject({ line: lineOf(broken, '"ten"') });
    expect((expected as { message: string }).message).toMatch(/entry 32 \("phase 00030"\), lines item 1: "d" must be a number, not string/);
    for (const size of [1, 5, 333, 4096]) expect(outcome(() => [...readReferenceJson(chunked(broken, size), 'refs.json')])).toEqual(expected);
  });

  it('names the line of a malformed reference deep in a large file (20 000 references)', () => {
    const large = formatReferenceJson(many(20_000));
    const broken = large.replace(/("name": "phase 19990"[\s\S]*?"lines": \[[\s\S]*?\n[\s\S]*?\n)(\s*)\{"d":([\d.]+),"intensity":(\d+)\}/, '$1$2{"d":$3,"intensity":$4, "intensty": 5}');
    expect(broken).not.toBe(large);
    const err = outcome(() => [...readReferenceJson(chunked(broken, 64 << 10), 'large.json')]);
    expect(err).toEqual({
      message: expect.stringMatching(/^large\.json, line \d+: entry 19991 \("phase 19990"\), lines item 2: unknown field "intensty"/),
      line: lineOf(broken, '"intensty"'),
    });
  });

  it('names the line of a JSON syntax error deep in a large file, and of text after the list', () => {
    const large = formatReferenceJson(many(5000));
    const missingComma = large.replace('  },\n  {\n    "name": "phase 04321"', '  }\n  {\n    "name": "phase 04321"');
    expect(outcome(() => [...readReferenceJson(chunked(missingComma, 4096), 'large.json')])).toEqual({
      message: expect.stringMatching(/this is not valid JSON: expected "," or "\]" in a list but found "\{"/),
      line: lineOf(missingComma, '"phase 04321"') - 1,
    });
    expect(outcome(() => [...readReferenceJson(chunked(`${large}x\n`, 4096), 'large.json')])).toEqual({
      message: expect.stringMatching(/unexpected "x" after the end of the JSON document/),
      line: large.split('\n').length,
    });
    const cut = large.slice(0, large.length - 400);
    expect(outcome(() => [...readReferenceJson(chunked(cut, 4096), 'large.json')])).toMatchObject({ message: expect.stringMatching(/the end of the file/) });
  });

  it('reads a reference only as far as it has been asked for', () => {
    const references = readReferenceJson(chunked(formatReferenceJson(many(3)) + ' garbage', 16), 'refs.json');
    expect(references.next().value).toMatchObject({ name: 'phase 00000' });
    expect(references.next().value).toMatchObject({ name: 'phase 00001' });
    expect(references.next().value).toMatchObject({ name: 'phase 00002' });
    expect(() => references.next()).toThrow(/after the end of the JSON document/);
  });
});

/**
 * A line object as text: field names plain (the fast path reads them) or written with a \u escape
 * (the fast path declines those, so the schema-checked path reads the same values).
 */
const fieldNames = (escaped: boolean) => (name: string) => (escaped ? `"\\u00${name.charCodeAt(0).toString(16)}${name.slice(1)}"` : `"${name}"`);

const numberText = fc.oneof(
  fc.double({ min: -5, max: 200, noNaN: true }).map(String),
  fc.integer({ min: -3, max: 120 }).map(String),
  fc.constantFrom('0', '-0', '1e2', '2.5E-1', '100.0', '1e400', '"3"', 'null', 'true', '[1, 1, 1]'),
);
const lineFields = fc.record(
  {
    d: numberText,
    twoTheta: numberText,
    intensity: numberText,
    hkl: fc.oneof(fc.tuple(fc.integer({ min: -9, max: 9 }), fc.integer({ min: -9, max: 9 }), fc.integer({ min: -9, max: 9 })).map((h) => `[${h.join(', ')}]`), fc.constantFrom('[1, 2]', '[1.5, 0, 0]', '"111"')),
    multiplicity: fc.oneof(fc.integer({ min: -1, max: 48 }).map(String), fc.constantFrom('2.5', 'null')),
    extra: fc.constant('1'),
  },
  { requiredKeys: [] },
);
const entryText = (lines: Array<Record<string, string>>, wavelength: string | null, escaped: boolean) => {
  const name = fieldNames(escaped);
  const lineText = lines.map((line) => `{${Object.entries(line).map(([k, v]) => `${name(k)}: ${v}`).join(', ')}}`);
  return `[{"name": "p", "source": "test"${wavelength === null ? '' : `, "wavelength": ${wavelength}`},\n "lines": [\n${lineText.join(',\n')}\n]}]`;
};

describe('the fast path for plain references', () => {
  it('gives the references and messages of the schema-checked path, for any line values', () => {
    fc.assert(
      fc.property(fc.array(lineFields, { minLength: 0, maxLength: 5 }), fc.constantFrom(null, '1.5406', '"Cu"', '"X"', '-1'), (lines, wavelength) => {
        const fast = outcome(() => parseReferenceJson(entryText(lines, wavelength, false), 'p.json'));
        const full = outcome(() => parseReferenceJson(entryText(lines, wavelength, true), 'p.json'));
        expect(fast).toEqual(full);
      }),
      { numRuns: 600 },
    );
  });
});
