import { describe, it, expect } from 'vitest';
import { fixtureText, readText, expectValidPattern } from './helpers.js';

describe('clean-up after reading', () => {
  it('reverses a descending scan and says so', () => {
    const p = readText('5 50\n4 40\n3 30\n2 20\n1 10\n');
    expect(Array.from(p.x)).toEqual([1, 2, 3, 4, 5]);
    expect(Array.from(p.y)).toEqual([10, 20, 30, 40, 50]);
    expect(p.readerNotes.join(' ')).toContain('descending');
  });

  it('reverses the descending fixture with its sigma column and reads the Kα1/Kα2 pair', () => {
    const p = readText(fixtureText('simulated-si111-descending.xy'), 'simulated-si111-descending.xy');
    expectValidPattern(p);
    expect(p.x[0]).toBe(28.2);
    expect(p.y[12]).toBe(1283);
    expect(p.sigma[12]).toBe(35.82);
    expect(p.wavelength).toMatchObject({ lambda1: 1.540593, lambda2: 1.544414 });
  });

  it('sorts stray rows by 2θ and says so', () => {
    const p = readText('1 10\n2 20\n4 40\n3 30\n5 50\n6 60\n');
    expect(Array.from(p.x)).toEqual([1, 2, 3, 4, 5, 6]);
    expect(Array.from(p.y)).toEqual([10, 20, 30, 40, 50, 60]);
    expect(p.readerNotes.join(' ')).toContain('sorted');
  });

  it('merges duplicate 2θ by averaging, with the uncertainty of the mean', () => {
    const p = readText('1 10\n2 16\n2 20\n2 24\n3 30\n4 40\n5 50\n');
    expect(Array.from(p.x)).toEqual([1, 2, 3, 4, 5]);
    expect(p.y[1]).toBe(20);
    // mean of three Poisson counts: σ = √(16 + 20 + 24) / 3 (common practice: propagation of variance)
    expect(p.sigma[1]).toBeCloseTo(Math.sqrt(60) / 3, 12);
    expect(p.readerNotes.join(' ')).toContain('2 point(s) repeated');
  });

  it('keeps zero and negative counts with a sigma floor of 1 and a note', () => {
    const p = readText('1 0\n2 -5\n3 0.5\n4 4\n5 9\n');
    expect(Array.from(p.y)).toEqual([0, -5, 0.5, 4, 9]);
    expect(Array.from(p.sigma)).toEqual([1, 1, 1, 2, 3]);
    expect(p.readerNotes.join(' ')).toContain('2 point(s) have zero or negative counts');
  });

  it('replaces a non-positive given sigma by √counts and says so', () => {
    const p = readText('1 4 0\n2 9 1\n3 16 -1\n4 25 1\n5 36 1\n');
    expect(Array.from(p.sigma)).toEqual([2, 1, 4, 1, 1]);
    expect(p.readerNotes.join(' ')).toContain('2 uncertainty value(s)');
  });

  it('keeps unevenly stepped 2θ as it is, with a note', () => {
    const p = readText('10 1\n10.01 2\n10.03 3\n10.1 4\n10.2 5\n');
    expect(Array.from(p.x)).toEqual([10, 10.01, 10.03, 10.1, 10.2]);
    expect(p.readerNotes.join(' ')).toContain('uneven');
  });

  it('adds no notes to a clean evenly stepped file', () => {
    const p = readText('10 1\n10.02 2\n10.04 3\n10.06 4\n10.08 5\n');
    expect(p.readerNotes).toEqual([]);
  });

  it('refuses a file that has fewer than 5 points once duplicates are merged', () => {
    expect(() => readText('1 1\n1 2\n2 3\n2 4\n3 5\n3 6\n4 7\n')).toThrow(/at least 5/);
  });
});

describe('2θ values no scan can have', () => {
  const rows = (count: number, from = 10, step = 0.02) => Array.from({ length: count }, (_, i) => `${(from + i * step).toFixed(2)} ${100 + (i % 7)}`);

  it('skips one typo row (1e9 instead of a 2θ) with a note that counts it, keeping the scan as it is', () => {
    const lines = rows(100);
    lines[40] = '1e9 100';
    const p = readText(lines.join('\n') + '\n');
    expect(p.x.length).toBe(99);
    expect(p.x[p.x.length - 1]).toBeCloseTo(11.98, 6);
    expect(p.readerNotes.join(' ')).toMatch(/1 row\(s\) with a 2θ that cannot belong to this scan .* skipped/);
  });

  it('skips a stray row far beyond the scan but inside 0–180°', () => {
    const lines = rows(300);
    lines[150] = '170 99';
    const p = readText(lines.join('\n') + '\n');
    expect(p.x.length).toBe(299);
    expect(Math.max(...p.x)).toBeLessThan(16.1);
  });

  it('refuses a first column that is no 2θ at all (negative, above 180° or absurd), naming the file and line', () => {
    for (const scale of [-1, 1e300, 200]) {
      const text = rows(50).map((r) => { const [a, b] = r.split(' '); return `${Number(a) * scale} ${b}`; }).join('\n') + '\n';
      expect(() => readText(text, 'odd.xy')).toThrow(/odd\.xy, line 50: .*(no diffraction angle|outside 0–180)/);
    }
  });

  it('refuses a first column whose values are all equal', () => {
    const text = Array.from({ length: 20 }, (_, i) => `25.0 ${100 + i}`).join('\n') + '\n';
    expect(() => readText(text, 'flat.xy')).toThrow(/flat\.xy, line 20: only 1 data point/);
  });
});

describe('line endings', () => {
  it('reads a file whose lines end with CR alone (old Mac exports)', () => {
    const p = readText('# 2theta counts\r10.00 100\r10.02 110\r10.04 120\r10.06 130\r10.08 140\r10.10 150\r');
    expect(Array.from(p.x)).toEqual([10, 10.02, 10.04, 10.06, 10.08, 10.1]);
  });
});

describe('messages about odd bytes', () => {
  it('shows control characters from the file as \\xNN, never raw', async () => {
    const { InputError } = await import('../../src/core/errors.js');
    const err = new InputError('cannot read "12\u001b[31m" as a number', { file: 'odd.xy', line: 3 });
    expect(err.message).toBe('odd.xy, line 3: cannot read "12\\x1b[31m" as a number');
    let caught: unknown;
    try {
      readText('10 100\n11 1\u0007x\n12 3\n13 4\n14 5\n15 6\n', 'bell.xy');
    } catch (e) {
      caught = e;
    }
    if (caught instanceof Error) expect(caught.message).not.toMatch(/[\u0000-\u0008\u000b-\u001f\u007f]/);
  });
});
