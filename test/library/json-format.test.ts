import { describe, expect, it } from 'vitest';
import { InputError } from '../../src/core/errors.js';
import { formatReferenceJson, parseReferenceJson } from '../../src/core/library/json-format.js';
import { silicon } from './helpers.js';

/** The InputError a parse throws (fails the test when it does not throw one). */
function problem(text: string, file = 'refs.json'): InputError {
  try {
    parseReferenceJson(text, file);
  } catch (err) {
    if (err instanceof InputError) return err;
    throw err;
  }
  throw new Error('expected an InputError');
}

const SOURCE = '"source": "test"';

describe('reading the reference JSON format', () => {
  it('reads one object or an array, with lines in d', () => {
    const one = parseReferenceJson(`{"name": "silicon", "formula": "Si", ${SOURCE}, "lines": [{"d": 3.1356, "intensity": 100, "hkl": [1,1,1]}]}`, 'a.json');
    expect(one).toEqual([{ name: 'silicon', formula: 'Si', tags: [], source: 'test', lines: [{ d: 3.1356, intensity: 100, hkl: [1, 1, 1] }] }]);
    const many = parseReferenceJson(`[{"name": "a", ${SOURCE}, "lines": [{"d": 2}]}, {"name": "b", ${SOURCE}, "lines": [{"d": 3, "intensity": null}]}]`, 'b.json');
    expect(many.map((r) => [r.name, r.lines[0]!.intensity])).toEqual([
      ['a', null],
      ['b', null],
    ]);
  });

  it('converts 2θ lines with the stated wavelength to d', () => {
    // NIST SRM 640d silicon (a = 5.43159 Å): 111 at 28.4388° 2θ with Cu Kα1 1.5405929 Å (CHECK-VALUES, Black et al. 2010).
    const [ref] = parseReferenceJson(`{"name": "Si", ${SOURCE}, "wavelength": 1.5405929, "lines": [{"twoTheta": 28.4388, "intensity": 100}]}`, 'a.json');
    expect(ref!.lines[0]!.d).toBeCloseTo(5.43159 / Math.sqrt(3), 4);
    const [byAnode] = parseReferenceJson(`{"name": "Si", ${SOURCE}, "wavelength": "Cu", "lines": [{"twoTheta": 28.4388}]}`, 'a.json');
    expect(byAnode!.lines[0]!.d).toBeCloseTo(ref!.lines[0]!.d, 9);
  });

  it('names file, entry and line for a negative d', () => {
    const text = `[
  {"name": "good", ${SOURCE}, "lines": [{"d": 2}]},
  {"name": "bad", ${SOURCE}, "lines": [
    {"d": 3.1, "intensity": 100},
    {"d": -1.5, "intensity": 20}
  ]}
]`;
    const err = problem(text);
    expect(err.file).toBe('refs.json');
    expect(err.line).toBe(5);
    expect(err.message).toMatch(/^refs\.json, line 5: entry 2 \("bad"\), lines item 2: d must be a positive number of Å \(got -1\.5\)/);
  });

  it('rejects intensity above 100, an empty name and a missing source, each at its line', () => {
    expect(problem(`{"name": "x", ${SOURCE},\n "lines": [\n{"d": 2, "intensity": 120}]}`)).toMatchObject({ line: 3 });
    expect(problem(`{"name": "x", ${SOURCE},\n "lines": [\n{"d": 2, "intensity": 120}]}`).message).toMatch(/between 0 and 100/);
    const empty = problem(`{\n"name": "  ",\n ${SOURCE}, "lines": [{"d": 2}]}`);
    expect([empty.line, /name is empty/.test(empty.message)]).toEqual([2, true]);
    const noSource = problem(`[\n{"name": "a", "lines": [{"d": 2}]},\n{"name": "b",\n "lines": [{"d": 2}]}\n]`);
    expect(noSource.line).toBe(2);
    expect(noSource.message).toMatch(/entry 1 \("a"\): source is missing/);
  });

  it('explains 2θ without a wavelength, a line with neither d nor 2θ, unknown fields and duplicate names', () => {
    expect(problem(`{"name": "x", ${SOURCE}, "lines": [\n{"twoTheta": 28.4}]}`)).toMatchObject({ line: 2 });
    expect(problem(`{"name": "x", ${SOURCE}, "lines": [{"twoTheta": 28.4}]}`).message).toMatch(/need the wavelength/);
    expect(problem(`{"name": "x", ${SOURCE}, "lines": [{"intensity": 5}]}`).message).toMatch(/neither "d" \(Å\) nor "twoTheta"/);
    expect(problem(`{"name": "x", ${SOURCE}, "lines": [{"d": 2, "intensty": 5}]}`).message).toMatch(/unknown field "intensty"/);
    expect(problem(`{"name": "x", ${SOURCE}}`).message).toMatch(/give "lines"/);
    const twin = problem(`[{"name": "x", ${SOURCE}, "lines": [{"d": 2}]},\n{"name": "X", ${SOURCE}, "lines": [{"d": 2}]}]`);
    expect([twin.line, /already used by entry 1/.test(twin.message)]).toEqual([2, true]);
  });

  it('gives the line of a JSON syntax error', () => {
    const err = problem(`[\n  {"name": "x", ${SOURCE}, "lines": [{"d": 2}]}\n  {"name": "y"}\n]`);
    expect(err.line).toBe(3);
    expect(err.message).toMatch(/not valid JSON: expected "," or "\]"/);
    expect(problem(`{"name": "x", "lines": [{"d": 2,5}]}`).message).toMatch(/not valid JSON/);
    expect(problem('').message).toMatch(/empty/);
    expect(problem('[]').message).toMatch(/no references/);
  });

  it('export then import gives the same references back', () => {
    const refs = [silicon({ notes: 'a "quoted" note', rir: 4.7 }), silicon({ name: 'silicon, positions only', lines: silicon().lines.map((l) => ({ d: l.d, intensity: null })) })];
    const again = parseReferenceJson(formatReferenceJson(refs), 'export.json');
    expect(again).toEqual(refs.map((r) => ({ ...r, lines: [...r.lines].sort((a, b) => b.d - a.d) })));
  });
});
