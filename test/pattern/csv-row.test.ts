import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import Papa from 'papaparse';
import { firstCsvRow } from '../../src/core/pattern/readers/csv-row.js';

/** The CSV package's first row, the behaviour the pattern reader's own splitter keeps. */
function packageFirstRow(text: string, delimiter: ',' | ';'): string[] {
  return Papa.parse<string[]>(text, { delimiter, quoteChar: '"' }).data[0] ?? [];
}

describe('first CSV row (header names)', () => {
  it('splits quoted names with delimiters, doubled quotes and spaces after the closing quote', () => {
    expect(firstCsvRow('"2theta, deg";"counts ""raw""" ;sigma', ';')).toEqual(['2theta, deg', 'counts "raw"', 'sigma']);
    expect(firstCsvRow('angle,"intensity",esd', ',')).toEqual(['angle', 'intensity', 'esd']);
    expect(firstCsvRow('', ',')).toEqual([]);
  });

  it('gives the same fields as the CSV package on random text, malformed quotes and line breaks included', () => {
    const piece = fc.constantFrom('a', 'b', ' ', '\t', ',', ';', '"', '""', '\r', '\n', '\r\n', '\uFEFF', 'θ');
    const text = fc.array(piece, { maxLength: 24 }).map((parts) => parts.join(''));
    fc.assert(
      fc.property(text, fc.constantFrom<',' | ';'>(',', ';'), (line, delimiter) => {
        expect(firstCsvRow(line, delimiter)).toEqual(packageFirstRow(line, delimiter));
      }),
      { numRuns: 5_000 },
    );
  });
});
