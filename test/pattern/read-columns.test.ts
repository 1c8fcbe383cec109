import { describe, it, expect } from 'vitest';
import { readPatternBytes } from '../../src/core/pattern/read.js';
import { ANODE_LINES } from '../../src/core/model/wavelengths.js';
import { patternToXyText, simulatePattern } from '../../src/core/crystal/simulate.js';
import { anodeWavelength } from '../../src/core/model/wavelengths.js';
import { fixtureText, readError, readText, rows, expectValidPattern } from './helpers.js';

describe('two- and three-column text', () => {
  it.each([
    ['blanks', '10.00 100\n10.02 101\n10.04 102\n10.06 103\n10.08 104\n'],
    ['tabs', '10.00\t100\n10.02\t101\n10.04\t102\n10.06\t103\n10.08\t104\n'],
    ['commas', '10.00,100\n10.02,101\n10.04,102\n10.06,103\n10.08,104\n'],
    ['commas with blanks and a trailing comma', '10.00, 100,\n10.02, 101,\n10.04, 102,\n10.06, 103,\n10.08, 104,\n'],
    ['semicolons', '10.00;100\n10.02;101\n10.04;102\n10.06;103\n10.08;104\n'],
    ['semicolons with decimal commas', '10,00;100\n10,02;101\n10,04;102\n10,06;103\n10,08;104\n'],
    ['blanks with decimal commas', '10,00 100\n10,02 101\n10,04 102\n10,06 103\n10,08 104\n'],
    ['tabs with decimal commas and Windows line ends', '10,00\t100\r\n10,02\t101\r\n10,04\t102\r\n10,06\t103\r\n10,08\t104\r\n'],
    ['quoted numbers', '"10.00","100"\n"10.02","101"\n"10.04","102"\n"10.06","103"\n"10.08","104"\n'],
  ])('reads rows separated by %s', (_label, text) => {
    const p = readText(text);
    expect(Array.from(p.x)).toEqual([10, 10.02, 10.04, 10.06, 10.08]);
    expect(Array.from(p.y)).toEqual([100, 101, 102, 103, 104]);
    expect(p.sigma[0]).toBeCloseTo(10, 12);
  });

  it('takes sigma from a third column, else √max(y, 1)', () => {
    const three = readText('1 4 0.5\n2 9 0.5\n3 16 0.5\n4 25 0.5\n5 36 0.5\n');
    expect(Array.from(three.sigma)).toEqual([0.5, 0.5, 0.5, 0.5, 0.5]);
    const two = readText('1 4\n2 9\n3 0.25\n4 25\n5 36\n');
    expect(Array.from(two.sigma)).toEqual([2, 3, 1, 5, 6]);
  });

  it('reads numbers exactly as JavaScript does, exponents and signs included', () => {
    const values = ['1e-3', '-2.5E+2', '+7', '.5', '3.', '123456789.123456789', '0.000000000000000000000000001234', '1.7976931348623157e308'];
    const text = values.map((v, i) => `${i + 1} ${v}`).join('\n');
    const p = readText(text);
    expect(Array.from(p.y)).toEqual(values.map(Number));
  });

  it('skips comment lines (# ! ;) and blank lines anywhere', () => {
    const p = readText('# one\n! two\n; three\n\n1 1\n# between\n2 2\n\n3 3\n! again\n4 4\n5 5\n# end\n');
    expect(Array.from(p.x)).toEqual([1, 2, 3, 4, 5]);
  });

  it('uses a header line of column names and keeps them in meta', () => {
    const p = readText('2theta intensity\n' + rows(5));
    expect(p.meta.columns).toBe('2theta, intensity');
    expect(p.x.length).toBe(5);
  });

  it('keeps text after the data as metadata when no data follows it', () => {
    const p = readText(rows(5) + 'End of scan\n');
    expect(p.meta.footer).toBe('End of scan');
    expect(p.readerNotes.join(' ')).toContain('after the data');
  });

  it('reads the simulated fixture with its metadata', () => {
    const p = readText(fixtureText('simulated-si111.xy'), 'simulated-si111.xy');
    expect(p.source.format).toBe('xy');
    expect(p.x.length).toBe(21);
    expect(p.meta.Sample).toBe('simulated silicon 111');
    expect(p.meta.comment).toContain('Simulated');
    expect(p.wavelength?.lambda1).toBe(ANODE_LINES.Cu.kAlpha1);
  });

  it('reads the semicolon / decimal comma fixture', () => {
    const p = readText(fixtureText('simulated-si111-decimal-comma.csv'), 'simulated-si111-decimal-comma.csv');
    expect(p.source.format).toBe('csv');
    expect(p.x[1]).toBe(28.22);
    expect(p.y[12]).toBe(1283);
    expect(p.wavelength?.lambda1).toBe(1.5406);
  });
});

describe('wavelength and metadata lines', () => {
  it.each([
    ['# Wavelength: 1.5406\n', 1.5406, null],
    ['# lambda=1.54056 A\n', 1.54056, null],
    ['Wavelength (nm) = 0.15406 nm\n', 1.5406, null],
    ['Kalpha1 1.5406\n', 1.5406, null],
    ['Kalpha1 1.540593\nKalpha2 1.544414\nratio K-Alpha2/K-Alpha1 0.497\n', 1.540593, 1.544414],
    ['Anode: Cu\n', ANODE_LINES.Cu.kAlpha1, ANODE_LINES.Cu.kAlpha2],
    ['# Radiation = CoKa\n', ANODE_LINES.Co.kAlpha1, ANODE_LINES.Co.kAlpha2],
    ['# Wavelength: 1.5406\n# Anode: Cu\n', ANODE_LINES.Cu.kAlpha1, ANODE_LINES.Cu.kAlpha2],
  ])('finds the wavelength in %j', (lines, lambda1, lambda2) => {
    const p = readText(lines + rows(5));
    expect(p.wavelength?.lambda1).toBeCloseTo(lambda1, 9);
    expect(p.wavelength?.lambda2 ?? null).toBe(lambda2);
  });

  it('takes the Kα2/Kα1 ratio from the file when given', () => {
    const p = readText('Kalpha1 1.540593\nKalpha2 1.544414\nratio K-Alpha2/K-Alpha1 0.497\n' + rows(5));
    expect(p.wavelength?.ratio).toBe(0.497);
  });

  it('ignores an unusable wavelength with a note, and has none when the file names none', () => {
    const bad = readText('# Wavelength: 99 A\n' + rows(5));
    expect(bad.wavelength).toBeNull();
    expect(bad.readerNotes.join(' ')).toContain('not understood');
    expect(readText(rows(5)).wavelength).toBeNull();
  });

  it('puts key: value lines into meta', () => {
    const p = readText('# Sample: batch 7, washed\nOperator = A. Chemist\n# Date: 2024-05-01 10:00\n' + rows(5));
    expect(p.meta).toMatchObject({ Sample: 'batch 7, washed', Operator: 'A. Chemist', Date: '2024-05-01 10:00' });
  });
});

describe('CSV with a header', () => {
  it('picks the 2θ, counts and esd columns by name among others', () => {
    const p = readText(fixtureText('simulated-si111-header.csv'), 'simulated-si111-header.csv');
    expect(p.source.format).toBe('csv');
    expect(p.x[0]).toBe(28.2);
    expect(p.y[12]).toBe(1283);
    expect(p.sigma[12]).toBe(35.82);
  });

  it('follows the names when intensity comes before angle', () => {
    const p = readText('Counts,Angle\n' + rows(5, { separator: ',' }).replace(/^([^,]+),(.+)$/gm, '$2,$1'));
    expect(p.x[0]).toBe(10);
    expect(p.y[0]).toBe(100);
  });

  it('refuses many unnamed columns with a message that asks for names', () => {
    const err = readError('a,b,c,d\n1,2,3,4\n2,2,3,4\n3,2,3,4\n4,2,3,4\n5,2,3,4\n', 'wide.csv');
    expect(err.line).toBe(2);
    expect(err.message).toContain('2θ');
    const noHeader = readError('1 2 3 4\n2 2 3 4\n3 2 3 4\n4 2 3 4\n5 2 3 4\n');
    expect(noHeader.message).toContain('4 columns');
  });
});

describe('bad column text', () => {
  it.each([
    ['nan', '1 2\n2 3\n3 nan\n4 5\n5 6\n', 3, 'finite'],
    ['NaN first', '1 2\nNaN 3\n3 4\n4 5\n5 6\n', 2, 'finite'],
    ['inf', '1 2\n2 3\n3 4\n4 -inf\n5 6\n', 4, 'finite'],
    ['Infinity before the data', '1 Infinity\n2 3\n3 4\n4 5\n5 6\n6 7\n', 1, 'finite'],
    ['overflow', '1 2\n2 3\n3 1e999\n4 5\n5 6\n', 3, 'finite'],
    ['a word inside the data', '1 2\n2 3\n3 4\n4 x5\n5 6\n', 4, 'not a number'],
    ['text between data rows', '1 2\n2 3\nhello\n4 5\n5 6\n', 3, 'not a number'],
    ['a column that appears', '1 2\n2 3\n3 4 5\n4 5\n5 6\n', 3, 'same columns'],
    ['a column that disappears', '1 2 1\n2 3 1\n3 4\n', 3, 'same columns'],
    ['glued text', '1 2\n2 3\n3 4abc\n4 5\n5 6\n', 3, 'not a number'],
    ['too few points', '1 2\n2 3\n3 4\n4 5\n', 4, 'at least 5'],
    ['no numbers', 'just some\nwords here\n', 1, 'two or more numbers'],
    ['one column', '1\n2\n3\n4\n5\n', 1, 'two or more numbers'],
  ])('rejects %s with file and line', (_label, text, line, words) => {
    const err = readError(text);
    expect(err.line).toBe(line);
    expect(err.message).toContain(words);
  });
});

describe('round trip', () => {
  it('reads back what patternToXyText wrote', () => {
    const simulated = simulatePattern({
      phases: [{ lines: [{ d: 3.1356, intensity: 100 }, { d: 1.9201, intensity: 55 }], scale: 1 }],
      wavelength: anodeWavelength('Cu'),
      twoThetaMinDeg: 20,
      twoThetaMaxDeg: 60,
      stepDeg: 0.02,
      peakCounts: 5000,
      noiseSeed: 7,
      name: 'simulated',
    });
    const text = patternToXyText(simulated, ['simulated by Crystallog for a reader test', 'Anode: Cu']);
    const p = readPatternBytes(new TextEncoder().encode(text), 'roundtrip.xy');
    expectValidPattern(p);
    expect(p.x.length).toBe(simulated.x.length);
    for (let i = 0; i < p.x.length; i++) {
      expect(p.x[i]).toBeCloseTo(simulated.x[i], 4);
      expect(p.y[i]).toBe(simulated.y[i]);
      expect(p.sigma[i]).toBe(simulated.sigma[i]);
    }
    expect(p.wavelength).toEqual(simulated.wavelength);
  });
});
