import { describe, expect, it } from 'vitest';
import { InputError } from '../../src/core/errors.js';
import { parseReferenceCsv } from '../../src/core/library/csv-format.js';

function problem(text: string, meta = { source: 'test' }): InputError {
  try {
    parseReferenceCsv(text, 'peaks.csv', meta);
  } catch (err) {
    if (err instanceof InputError) return err;
    throw err;
  }
  throw new Error('expected an InputError');
}

describe('reading a CSV peak list', () => {
  it('reads d, intensity and hkl columns with the details from "# key: value" lines', () => {
    const text = '# name: sodium chloride\n# source: NBS Circular 539 (from memory)\n# tags: standard, Target\nd,intensity,h,k,l\n3.258,13,1,1,1\n2.821,100,2,0,0\n\n1.994,55,2,2,0\n';
    const ref = parseReferenceCsv(text, 'nacl.csv');
    expect(ref.name).toBe('sodium chloride');
    expect(ref.tags).toEqual(['standard', 'target']);
    expect(ref.lines).toEqual([
      { d: 3.258, intensity: 13, hkl: [1, 1, 1] },
      { d: 2.821, intensity: 100, hkl: [2, 0, 0] },
      { d: 1.994, intensity: 55, hkl: [2, 2, 0] },
    ]);
  });

  it('converts a 2θ column with the given wavelength and reads semicolons with decimal commas', () => {
    // NIST SRM 640d silicon 111 at 28.4388° 2θ with Cu Kα1 (CHECK-VALUES, Black et al. 2010): d = 5.43159/√3 Å.
    const ref = parseReferenceCsv('2θ (deg);I\n28,4388;100\n47,2966;55\n', 'si.csv', { source: 'test', wavelengthAngstrom: 1.5405929 });
    expect(ref.name).toBe('si');
    expect(ref.lines[0]!.d).toBeCloseTo(5.43159 / Math.sqrt(3), 4);
    expect(ref.lines[1]!.d).toBeCloseTo(5.43159 / Math.sqrt(8), 4);
    expect(parseReferenceCsv('# wavelength: Cu\n2theta,intensity\n28.4388,100\n', 'si.csv', { source: 'x' }).lines[0]!.d).toBeCloseTo(ref.lines[0]!.d, 9);
  });

  it('names the line of a bad value: negative d, intensity above 100, text in a number column', () => {
    expect(problem('d,intensity\n3.1,100\n-2.0,40\n')).toMatchObject({ file: 'peaks.csv', line: 3 });
    expect(problem('d,intensity\n3.1,100\n-2.0,40\n').message).toBe('peaks.csv, line 3: d must be a positive number of Å (got -2)');
    expect(problem('# comment\nd,intensity\n3.1,100\n\n2.0,140\n')).toMatchObject({ line: 5 });
    expect(problem('d,intensity\n3.1,abc\n').message).toMatch(/line 2: "abc" in column intensity is not a number/);
  });

  it('requires a header, one position column, a source and a wavelength for 2θ', () => {
    expect(problem('3.1,100\n2.0,50\n').message).toMatch(/line 1: the first line must name the columns/);
    expect(problem('d,2theta,intensity\n3.1,28,100\n').message).toMatch(/exactly one position column/);
    expect(problem('d,intensity,colour\n3.1,100,red\n').message).toMatch(/unknown column "colour"/);
    expect(problem('d,intensity\n3.1,100\n', {} as { source: string }).message).toMatch(/no source/);
    expect(problem('2theta,intensity\n28.4,100\n').message).toMatch(/say which wavelength/);
    expect(problem('d,intensity\n').message).toMatch(/no lines/);
  });
});
