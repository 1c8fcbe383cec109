/**
 * A reference file reader keeps a plain reference's lines packed (core/library/packed-lines.ts): no
 * line objects until `lines` is read, and the store takes the packed values as they are. Read or
 * changed lines are the reference's lines from then on.
 */
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { parseReferenceJson } from '../../src/core/library/json-format.js';
import { packedValuesOf } from '../../src/core/library/packed-lines.js';
import { ReferenceLibrary } from '../../src/node/library/store.js';
import { useTempDir } from './helpers.js';

const tempDir = useTempDir();

const text = JSON.stringify([
  { name: 'plain', source: 'test', tags: ['standard'], lines: [{ d: 3.1, intensity: 100 }, { d: 2.5, intensity: null }, { d: 2.5, intensity: 7 }, { d: 1.2 }] },
  { name: 'with hkl', source: 'test', lines: [{ d: 3.1, intensity: 100, hkl: [1, 1, 1] }] },
  { name: 'unsorted', source: 'test', lines: [{ d: 1.2, intensity: 5 }, { d: 3.1, intensity: 100 }] },
  { name: 'in 2θ', source: 'test', wavelength: 1.5406, lines: [{ twoTheta: 28.44, intensity: 100 }, { twoTheta: 47.3, intensity: 55 }] },
]);

describe('lines kept packed by the reference file reader', () => {
  it('are the lines the line objects would be, where no line has hkl and d comes by decreasing value', () => {
    const [plain, withHkl, unsorted, twoTheta] = parseReferenceJson(text, 'refs.json');
    expect(packedValuesOf(plain!)).toBeDefined();
    expect(packedValuesOf(twoTheta!)).toBeDefined();
    expect(packedValuesOf(withHkl!)).toBeUndefined();
    expect(packedValuesOf(unsorted!)).toBeUndefined();
    expect(plain).toEqual({ name: 'plain', formula: '', tags: ['standard'], source: 'test', lines: [{ d: 3.1, intensity: 100 }, { d: 2.5, intensity: null }, { d: 2.5, intensity: 7 }, { d: 1.2, intensity: null }] });
    expect(packedValuesOf(plain!)).toBeUndefined(); // read: the objects are its lines now
    expect(unsorted!.lines.map((l) => l.d)).toEqual([3.1, 1.2]);
    expect(twoTheta!.lines[0]!.d).toBeCloseTo(1.5406 / (2 * Math.sin((28.44 * Math.PI) / 360)), 12);
  });

  it('are stored as read, or as changed after they were read', () => {
    const path = join(tempDir(), 'lib.sqlite');
    const library = ReferenceLibrary.open(path);
    const [untouched] = parseReferenceJson(text, 'refs.json');
    library.importReferences([untouched!]);
    expect(library.get('plain')!.lines).toEqual([{ d: 3.1, intensity: 100 }, { d: 2.5, intensity: null }, { d: 2.5, intensity: 7 }, { d: 1.2, intensity: null }]);
    const [changed] = parseReferenceJson(text, 'refs.json');
    changed!.lines[0]!.intensity = 90;
    expect(library.importReferences([changed!])).toEqual({ added: [], updated: ['plain'], unchanged: [] });
    expect(library.get('plain')!.lines[0]).toEqual({ d: 3.1, intensity: 90 });
    const [again] = parseReferenceJson(text, 'refs.json');
    again!.lines = [{ d: 4, intensity: 100 }];
    library.importReferences([again!]);
    expect(library.get('plain')!.lines).toEqual([{ d: 4, intensity: 100 }]);
    library.close();
  });
});
