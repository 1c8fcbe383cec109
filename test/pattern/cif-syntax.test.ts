import { describe, it, expect } from 'vitest';
import { parseCif, cifNumber, findLoop, cifItem, requireCifNumber, type CifProblem, type CifValue } from '../../src/core/cif/syntax.js';
import { InputError } from '../../src/core/errors.js';

const value = (text: string, quoted = false): CifValue => ({ text, line: 1, quoted });

function errorOf(run: () => unknown): InputError {
  try {
    run();
  } catch (err) {
    expect(err).toBeInstanceOf(InputError);
    return err as InputError;
  }
  throw new Error('expected an InputError');
}

describe('parseCif', () => {
  it('reads blocks, items with lower-cased tags, and the line of every value', () => {
    const text = ['# a comment', 'data_First', '_Cell_Length_A  5.431 # trailing comment', "_name 'silicon standard'", 'data_second', '_x 1'].join('\n');
    const blocks = parseCif(text, 'a.cif');
    expect(blocks.map((b) => [b.name, b.line])).toEqual([
      ['First', 2],
      ['second', 5],
    ]);
    expect(blocks[0].items.get('_cell_length_a')).toEqual({ text: '5.431', line: 3, quoted: false });
    expect(blocks[0].items.get('_name')).toEqual({ text: 'silicon standard', line: 4, quoted: true });
    expect(cifItem(blocks[0], 'CELL_length_a')?.text).toBe('5.431');
    expect(blocks[1].items.get('_x')?.line).toBe(6);
  });

  it('reads loops into rows, values spread over lines in any layout', () => {
    const text = ['data_p', 'loop_', '_pd_meas_2theta_scan', '_pd_meas_counts_total', '10.0 100', '10.1', '120 10.2 140(12)', '_after 3'].join('\n');
    const [block] = parseCif(text, 'p.cif');
    const loop = findLoop(block, '_PD_MEAS_COUNTS_TOTAL');
    expect(loop?.tags).toEqual(['_pd_meas_2theta_scan', '_pd_meas_counts_total']);
    expect(loop?.line).toBe(2);
    expect(loop?.rows.map((r) => r.map((v) => v.text))).toEqual([
      ['10.0', '100'],
      ['10.1', '120'],
      ['10.2', '140(12)'],
    ]);
    expect(loop?.rows[1].map((v) => v.line)).toEqual([6, 7]);
    expect(block.items.get('_after')?.text).toBe('3');
    expect(findLoop(block, '_missing')).toBeUndefined();
  });

  it('keeps quotes inside quoted strings when not followed by a blank', () => {
    const [block] = parseCif(`data_q\n_a 'it's fine'\n_b "a"b c"\n_c 'x'`, 'q.cif');
    expect(block.items.get('_a')?.text).toBe("it's fine");
    expect(block.items.get('_b')?.text).toBe('a"b c');
    expect(block.items.get('_c')?.text).toBe('x');
  });

  it('reads semicolon text fields over several lines and counts lines after them', () => {
    const text = ['data_t', '_note', ';', 'first line', '  second; line', ';', '_next 7'].join('\n');
    const [block] = parseCif(text, 't.cif');
    expect(block.items.get('_note')).toEqual({ text: 'first line\n  second; line', line: 3, quoted: true });
    expect(block.items.get('_next')?.line).toBe(7);
  });

  it('treats # inside a word or a quoted string as text, not a comment', () => {
    const [block] = parseCif("data_h\n_a abc#def\n_b '# not a comment'", 'h.cif');
    expect(block.items.get('_a')?.text).toBe('abc#def');
    expect(block.items.get('_b')?.text).toBe('# not a comment');
  });

  it('skips save frames and global_ blocks', () => {
    const text = ['global_', '_g 1', 'data_s', '_a 1', 'save_frame', '_inside 2', 'loop_ _z 1 2', 'save_', '_b 3'].join('\n');
    const [block] = parseCif(text, 's.cif');
    expect([...block.items.keys()]).toEqual(['_a', '_b']);
    expect(block.loops).toHaveLength(0);
  });

  it('accepts Windows line ends and a byte order mark', () => {
    const [block] = parseCif('\ufeffdata_w\r\n_a 1\r\n_b\r\n;\r\nline\r\n;\r\n_c "q"\r\n', 'w.cif');
    expect(block.items.get('_a')?.text).toBe('1');
    expect(block.items.get('_b')?.text).toBe('line');
    expect(block.items.get('_c')).toEqual({ text: 'q', line: 7, quoted: true });
  });

  it('gives no blocks for a file of comments only', () => {
    expect(parseCif('# nothing here\n\n', 'c.cif')).toEqual([]);
  });

  it.each([
    ["data_x\n_a 'open", 2, 'not closed'],
    ['data_x\n_a\n;\nnever closed', 3, 'never closed'],
    ['data_x\n_a\n_b 2', 2, 'no value'],
    ['data_x\n_a 1\n2', 3, 'no tag'],
    ['data_x\nloop_\n_a\n_b\n1 2\n3', 6, 'one value per tag'],
    ['data_x\nloop_\n1 2', 2, 'no tags'],
    ['_a 1\ndata_x', 1, 'before the first data_'],
    ['data_x\n_a 1\n_A 2', 3, 'twice'],
    ['data_\n_a 1', 1, 'block name'],
    ['data_x\nsave_f\n_a 1', 2, 'never closed'],
    ['data_x\nsave_\n', 2, 'never opened'],
  ])('rejects malformed syntax %j at the line where it is', (text, line, words) => {
    const err = errorOf(() => parseCif(text, 'bad.cif'));
    expect(err.file).toBe('bad.cif');
    expect(err.line).toBe(line);
    expect(err.message).toContain('bad.cif');
    expect(err.message).toContain(words);
  });
});

describe('parseCif, tolerant reading', () => {
  it.each([
    ["data_x\n_a 'open\n_b 2", 2, 'not closed'],
    ['data_x\n_a\n_b 2', 2, 'no value'],
    ['data_x\n_a 1\n2\n_b 2', 3, 'no tag'],
    ['data_x\nloop_\n1 2\n_b 2', 2, 'no tags'],
    ['_a 1\ndata_x\n_b 2', 1, 'before the first data_'],
    ['data_x\n_A 1\n_a 2\n_b 2', 3, 'twice'],
  ])('records %j as a problem at its line and reads the rest', (text, line, words) => {
    const problems: CifProblem[] = [];
    const [block] = parseCif(text, 'odd.cif', { problems });
    expect(problems).toHaveLength(1);
    expect(problems[0].line).toBe(line);
    expect(problems[0].message).toContain(words);
    expect(block.items.get('_b')?.text).toBe('2');
  });

  it('keeps the whole rows of a loop with a short last row, and marks the loop', () => {
    const problems: CifProblem[] = [];
    const [block] = parseCif('data_x\nloop_\n_a\n_b\n1 2\n3', 'odd.cif', { problems });
    expect(block.loops[0].rows.map((r) => r.map((v) => v.text))).toEqual([['1', '2']]);
    expect(block.loops[0].problem?.line).toBe(6);
    expect(problems[0].message).toContain('one value per tag');
  });

  it('still refuses what has no safe reading: an unclosed text field', () => {
    expect(() => parseCif('data_x\n_a\n;\nnever closed', 'odd.cif', { problems: [] })).toThrow(/never closed/);
  });
});

describe('cifNumber', () => {
  it('reads plain numbers and numbers with an uncertainty in the last digits', () => {
    expect(cifNumber(value('1234(35)'))).toEqual({ value: 1234, esd: 35 });
    expect(cifNumber(value('0.123(4)'))?.esd).toBeCloseTo(0.004, 12);
    expect(cifNumber(value('0.123(4)'))?.value).toBe(0.123);
    expect(cifNumber(value('-5.25'))).toEqual({ value: -5.25, esd: null });
    expect(cifNumber(value('.5'))).toEqual({ value: 0.5, esd: null });
    expect(cifNumber(value('7.'))).toEqual({ value: 7, esd: null });
    expect(cifNumber(value('1.5e3(2)'))).toEqual({ value: 1500, esd: 200 });
    expect(cifNumber(value('2E-2'))).toEqual({ value: 0.02, esd: null });
  });

  it("gives null for '?' and '.', and for text that is no number", () => {
    expect(cifNumber(value('?'))).toBeNull();
    expect(cifNumber(value('.'))).toBeNull();
    expect(cifNumber(value('abc'))).toBeNull();
    expect(cifNumber(value('1.2.3'))).toBeNull();
    expect(cifNumber(value('-'))).toBeNull();
    expect(cifNumber(value('Infinity'))).toBeNull();
    expect(cifNumber(value('1e999'))).toBeNull();
  });

  it('requireCifNumber names file and line for text that is no number', () => {
    expect(requireCifNumber(value('?'), 'n.cif', 'cell length a')).toBeNull();
    const err = errorOf(() => requireCifNumber({ text: 'abc', line: 12, quoted: false }, 'n.cif', 'cell length a'));
    expect(err.message).toBe('n.cif, line 12: cell length a "abc" is not a number');
  });
});
