import { describe, it, expect } from 'vitest';
import { fixtureText, readError, readText, expectValidPattern } from './helpers.js';
import { ANODE_LINES } from '../../src/core/model/wavelengths.js';

const loopOf = (tags: string[], rows: string[]): string => ['loop_', ...tags, ...rows].join('\n') + '\n';
const fivePoints = ['10.00 100', '10.02 121', '10.04 144', '10.06 169', '10.08 196'];

describe('powder CIF', () => {
  it('reads the measured-scan fixture: 2θ, counts with esd as sigma, a Kα1/Kα2 wavelength loop', () => {
    const p = readText(fixtureText('simulated-si111-meas.cif'), 'simulated-si111-meas.cif');
    expectValidPattern(p);
    expect(p.source.format).toBe('pdcif');
    expect(p.x.length).toBe(21);
    expect(p.y[12]).toBe(1283);
    expect(p.sigma[12]).toBe(36);
    expect(p.wavelength).toMatchObject({ lambda1: 1.540593, lambda2: 1.544414, ratio: 0.5 });
    expect(p.meta.pd_block_id).toBe('simulated|si111|reader-test');
    expect(p.meta.block).toBe('simulated_si111');
  });

  it('reads the min/max/increment fixture with an intensity-only loop', () => {
    const p = readText(fixtureText('simulated-si111-range.cif'), 'simulated-si111-range.cif');
    expectValidPattern(p);
    expect(p.x.length).toBe(21);
    expect(p.x[0]).toBe(28.2);
    expect(p.x[20]).toBeCloseTo(28.6, 12);
    expect(p.y[12]).toBe(1283);
    expect(p.sigma[12]).toBeCloseTo(Math.sqrt(1283), 12);
    expect(p.wavelength).toMatchObject({ lambda1: 1.540593, lambda2: null });
    expect(p.meta.pd_meas_info_author_name).toBe('simulated for reader tests');
  });

  it.each([
    ['_pd_meas_2theta_scan', '_pd_meas_counts_total'],
    ['_pd_proc_2theta_corrected', '_pd_proc_intensity_total'],
    ['_pd_meas_angle_2theta', '_pd_meas_intensity_total'],
    ['_pd_proc_2theta_corrected', '_pd_proc_intensity_net'],
  ])('reads a loop of %s with %s', (xTag, yTag) => {
    const p = readText('data_t\n' + loopOf([xTag, yTag], fivePoints), 't.cif');
    expect(Array.from(p.y)).toEqual([100, 121, 144, 169, 196]);
    expect(p.x[4]).toBe(10.08);
  });

  it('reads the processed 2θ range form', () => {
    const text = 'data_r\n_pd_proc_2theta_range_min 5\n_pd_proc_2theta_range_max 5.4\n_pd_proc_2theta_range_inc 0.1\n' + loopOf(['_pd_proc_intensity_net'], ['1 2 3 4 5']);
    const x = readText(text, 'r.cif').x;
    [5, 5.1, 5.2, 5.3, 5.4].forEach((expected, i) => expect(x[i]).toBeCloseTo(expected, 12));
  });

  it('takes a separate _su column as sigma, and Mo from the radiation type', () => {
    const text = "data_s\n_diffrn_radiation_type 'Mo K\\a'\n" + loopOf(['_pd_meas_2theta_scan', '_pd_meas_intensity_total', '_pd_meas_intensity_total_su'], fivePoints.map((r) => `${r} 2.5`));
    const p = readText(text, 's.cif');
    expect(Array.from(p.sigma)).toEqual([2.5, 2.5, 2.5, 2.5, 2.5]);
    expect(p.wavelength?.lambda1).toBe(ANODE_LINES.Mo.kAlpha1);
  });

  it("leaves out rows with '?' and says so, and reads the first of several patterns", () => {
    const text = 'data_a\n' + loopOf(['_pd_meas_2theta_scan', '_pd_meas_counts_total'], [...fivePoints, '10.10 ?']) + 'data_b\n' + loopOf(['_pd_meas_2theta_scan', '_pd_meas_counts_total'], fivePoints);
    const p = readText(text, 'two.cif');
    expect(p.x.length).toBe(5);
    expect(p.readerNotes.join(' ')).toContain("unknown values ('?' or '.')");
    expect(p.readerNotes.join(' ')).toContain('holds 2 patterns');
  });

  it('is recognised by content whatever the file is called', () => {
    const p = readText('data_t\n' + loopOf(['_pd_meas_2theta_scan', '_pd_meas_counts_total'], fivePoints), 'export.txt');
    expect(p.source.format).toBe('pdcif');
  });

  it.each([
    ['a structure CIF', 'data_nacl\n_cell_length_a 5.64\n', 1, 'no powder pattern'],
    ['non-numeric counts', 'data_t\n' + loopOf(['_pd_meas_2theta_scan', '_pd_meas_counts_total'], ['10.00 100', '10.02 lots', '10.04 1', '10.06 1', '10.08 1']), 6, 'not a number'],
    ['NaN counts', 'data_t\n' + loopOf(['_pd_meas_2theta_scan', '_pd_meas_counts_total'], ['10.00 100', '10.02 1', '10.04 NaN', '10.06 1', '10.08 1']), 7, 'not a number'],
    ['a range that does not fit the loop', 'data_r\n_pd_meas_2theta_range_min 5\n_pd_meas_2theta_range_max 50\n_pd_meas_2theta_range_inc 0.1\n' + loopOf(['_pd_meas_counts_total'], ['1 2 3 4 5']), 3, 'gives 451 points'],
    ['an intensity loop without 2θ', 'data_r\n' + loopOf(['_pd_meas_counts_total'], ['1 2 3 4 5']), 2, 'no 2θ column'],
    ['broken CIF syntax', "data_t\n_pd_block_id 'open\n", 2, 'not closed'],
    ['time-of-flight data', 'data_t\n' + loopOf(['_pd_meas_time_of_flight', '_pd_meas_counts_total_x'], fivePoints), 2, 'time of flight'],
    ['too few points', 'data_t\n' + loopOf(['_pd_meas_2theta_scan', '_pd_meas_counts_total'], fivePoints.slice(0, 3)), 7, 'at least 5'],
  ])('refuses %s with file and line', (_label, text, line, words) => {
    const err = readError(text, 'bad.cif');
    expect(err.line).toBe(line);
    expect(err.message).toContain(words);
  });

  describe('tolerant on metadata, strict on data (files written by refinement programs)', () => {
    /** A header of n-1 metadata lines, then line n as given, then a 2θ/counts loop. */
    const withLine = (n: number, line: string, rowsText = fivePoints): string => {
      const head = ['data_refined', ...Array.from({ length: n - 2 }, (_, k) => `_pd_proc_info_item_${k} ?`), line];
      return head.join('\n') + '\n' + loopOf(['_pd_meas_2theta_scan', '_pd_meas_counts_total'], rowsText);
    };

    it('reads the pattern when a tag and its "?" run together at line 41, and names the line in a note', () => {
      const p = readText(withLine(41, '_diffrn_measurement_device_type?'), 'refined.cif');
      expect(Array.from(p.y)).toEqual([100, 121, 144, 169, 196]);
      const note = p.readerNotes.find((n) => n.includes('_diffrn_measurement_device_type?'));
      expect(note).toContain('line 41');
      expect(note).toContain('has no value');
    });

    it.each([
      ['values without a tag', '_diffrn_source rotating anode tube', 'has no tag'],
      ['a quote not closed on its line', "_diffrn_source 'rotating anode", 'not closed'],
      ['a tag given twice', '_pd_proc_info_item_3 again', 'given twice'],
      ['stop_', 'stop_', 'reserved'],
    ])('reads the pattern past %s in the metadata, with a note naming the line', (_label, line, words) => {
      const p = readText(withLine(12, line), 'refined.cif');
      expect(p.x.length).toBe(5);
      const note = p.readerNotes.find((n) => n.includes(words));
      expect(note).toContain('line 12');
    });

    it.each([
      ['a short last row', ['10.00 100', '10.02 121', '10.04 144', '10.06 169', '10.08 196', '10.10'], 21, 'one value per tag'],
      ['a valueless tag inside the rows', ['10.00 100', '10.02 121', '_stray', '10.04 144', '10.06 169', '10.08 196'], 19, 'cannot be read'],
    ])('refuses %s in the intensity loop with file and line', (_label, rowsText, line, words) => {
      const err = readError(withLine(12, '_pd_proc_info_other ?', rowsText), 'refined.cif');
      expect(err.line).toBe(line);
      expect(err.message).toContain(words);
    });
  });
});
