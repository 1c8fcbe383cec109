import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { readPatternBytes } from '../../src/core/pattern/read.js';
import { parseCif } from '../../src/core/cif/syntax.js';
import { InputError } from '../../src/core/errors.js';
import { fixtureText, expectValidPattern } from './helpers.js';

/** Reading must give a valid Pattern or an InputError naming the file, never anything else. */
function readsOrRefuses(bytes: Uint8Array, fileName: string): void {
  let pattern;
  try {
    pattern = readPatternBytes(bytes, fileName);
  } catch (err) {
    if (!(err instanceof InputError)) throw err;
    expect(err.file).toBe(fileName);
    return;
  }
  expectValidPattern(pattern);
}

const utf8 = (text: string): Uint8Array => new TextEncoder().encode(text);

const SEEDS = [
  ['fuzz.xy', fixtureText('simulated-si111.xy')],
  ['fuzz.csv', fixtureText('simulated-si111-decimal-comma.csv')],
  ['fuzz.csv', fixtureText('simulated-si111-header.csv')],
  ['fuzz.xy', fixtureText('simulated-si111-descending.xy')],
  ['fuzz.cif', fixtureText('simulated-si111-meas.cif')],
  ['fuzz.cif', fixtureText('simulated-si111-range.cif')],
] as const;

/** Characters that matter to the readers, so random text reaches the interesting branches. */
const TOKEN = fc.constantFrom(
  '0', '1', '5', '9', '.', ',', ';', ' ', '\t', '\n', '\r\n', '-', '+', 'e', 'E', '#', '!', '"', "'", ':', '=', '_',
  'nan', 'inf', 'Infinity', 'data_x', 'loop_', '_pd_meas_counts_total', '_pd_meas_2theta_scan', '?', '(3)', 'Cu', 'Wavelength',
  '\u0000', '\ufeff', 'θ', '1e999', '12,5', '10.02 120\n',
);

/** A mutation of a valid file: delete, duplicate, insert or replace a slice. */
const mutation = fc.record({
  kind: fc.constantFrom('delete', 'insert', 'replace', 'duplicate'),
  at: fc.nat(),
  length: fc.nat({ max: 40 }),
  insert: fc.array(TOKEN, { maxLength: 6 }).map((t) => t.join('')),
});

function mutate(text: string, changes: Array<{ kind: string; at: number; length: number; insert: string }>): string {
  let out = text;
  for (const m of changes) {
    const at = out.length === 0 ? 0 : m.at % out.length;
    const end = Math.min(out.length, at + m.length);
    if (m.kind === 'delete') out = out.slice(0, at) + out.slice(end);
    else if (m.kind === 'insert') out = out.slice(0, at) + m.insert + out.slice(at);
    else if (m.kind === 'replace') out = out.slice(0, at) + m.insert + out.slice(end);
    else out = out.slice(0, end) + out.slice(at, end) + out.slice(end);
  }
  return out;
}

describe('reader fuzzing', () => {
  it('random text from reader-relevant tokens gives a pattern or an InputError', () => {
    fc.assert(
      fc.property(fc.array(TOKEN, { maxLength: 80 }), fc.constantFrom('r.xy', 'r.csv', 'r.cif', 'r.txt'), (tokens, name) => {
        readsOrRefuses(utf8(tokens.join('')), name);
      }),
      { numRuns: 1500 },
    );
  });

  it('arbitrary bytes give a pattern or an InputError', () => {
    fc.assert(
      fc.property(fc.uint8Array({ maxLength: 300 }), (bytes) => readsOrRefuses(bytes, 'bytes.dat')),
      { numRuns: 500 },
    );
  });

  it('random mutations of valid files give a pattern or an InputError', () => {
    fc.assert(
      fc.property(fc.constantFrom(...SEEDS), fc.array(mutation, { minLength: 1, maxLength: 4 }), ([name, text], changes) => {
        readsOrRefuses(utf8(mutate(text, changes)), name);
      }),
      { numRuns: 1500 },
    );
  });

  it('the CIF syntax layer either parses or throws InputError', () => {
    fc.assert(
      fc.property(fc.array(TOKEN, { maxLength: 60 }), (tokens) => {
        try {
          parseCif(tokens.join(''), 'f.cif');
        } catch (err) {
          if (!(err instanceof InputError)) throw err;
          expect(err.line).toBeGreaterThanOrEqual(1);
        }
      }),
      { numRuns: 1000 },
    );
  });
});

/** Inputs that once broke a reader, kept as fixed regression cases. */
describe('reader fuzz regressions', () => {
  it.each([
    ['huge values whose sigma overflows when merged', 'fuzz.xy', '1 1e300\n1 1e300\n2 1\n3 1\n4 1\n5 1\n'],
  ])('%s', (_label, name, text) => {
    readsOrRefuses(utf8(text), name);
  });
});
