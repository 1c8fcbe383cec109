import { InputError, isInputError } from '../../errors.js';
import { parseCif, requireCifNumber, cifItem, type CifBlock, type CifLoop, type CifProblem, problemInLoop } from '../../cif/syntax.js';
import { parseWavelength, singleWavelength, DEFAULT_KALPHA2_RATIO, type Wavelength } from '../../model/wavelengths.js';
import type { RawPattern } from './finish.js';
import { anodeSymbol } from './metadata.js';

/**
 * Powder CIF (pdCIF): Toby, "CIF applications. XV. pdCIF", J. Appl. Cryst. 36, 1290 (2003), and the
 * IUCr pdCIF dictionary. A block holds a loop of intensities, with 2θ either in the same loop or as
 * the min / max / increment items.
 */

/** Intensity tags, first found wins (measured counts before processed values). */
const INTENSITY_TAGS = ['_pd_meas_counts_total', '_pd_meas_intensity_total', '_pd_proc_intensity_total', '_pd_proc_intensity_net'];
const TWO_THETA_TAGS = ['_pd_meas_2theta_scan', '_pd_proc_2theta_corrected', '_pd_meas_angle_2theta', '_pd_meas_2theta'];
const RANGE_PREFIXES = ['_pd_meas_2theta_range', '_pd_proc_2theta_range'];
const OTHER_AXIS_TAGS = ['_pd_meas_time_of_flight', '_pd_proc_energy_incident', '_pd_proc_d_spacing', '_pd_meas_position'];

/** Does this text look like a CIF (a data_ block header and a tag or loop_ at the start of lines)? */
export function looksLikeCif(text: string): boolean {
  const head = text.slice(0, 200000);
  return /^[ \t]*data_\S/im.test(head) && /^[ \t]*(_[A-Za-z]|loop_)/im.test(head);
}

/**
 * Read the first block of a powder CIF that holds a pattern. Tolerant on metadata, strict on data: a
 * syntax problem elsewhere in the file becomes a reader note with its line, but one inside the
 * intensity loop (or a loop left incomplete) is an InputError.
 */
export function readPowderCif(text: string, fileName: string): RawPattern {
  const problems: CifProblem[] = [];
  const blocks = parseCif(text, fileName, { problems });
  const withData = blocks.filter((b) => intensityLoop(b) !== null);
  if (withData.length === 0 && problems.length > 0) {
    // With no pattern found, the first syntax problem is the likeliest reason (a quote that swallowed a loop_).
    throw new InputError(`${problems[0].message} (and no powder pattern was found in the file)`, { file: fileName, line: problems[0].line });
  }
  if (withData.length === 0) {
    const otherAxis = blocks.flatMap((b) => b.loops).find((l) => l.tags.some((t) => OTHER_AXIS_TAGS.includes(t)));
    if (otherAxis) {
      throw new InputError('this powder CIF holds data on another axis than 2θ (time of flight, energy, d or position); only 2θ scans are read', {
        file: fileName,
        line: otherAxis.line,
      });
    }
    throw new InputError(
      'this CIF holds no powder pattern (no loop of _pd_meas_counts_total, _pd_meas_intensity_total, _pd_proc_intensity_total or _pd_proc_intensity_net); a crystal structure CIF belongs in the reference library',
      { file: fileName, line: blocks[0]?.line ?? 1 },
    );
  }
  const block = withData[0];
  const notes: string[] = [];
  if (withData.length > 1) {
    notes.push(`the file holds ${withData.length} patterns; the first one (data_${block.name}) was read`);
  }
  const found = intensityLoop(block);
  if (!found) throw new Error('unreachable: block without intensity loop');
  const { loop, intensityColumn } = found;
  const inData = problemInLoop(loop, problems);
  if (inData) throw new InputError(`the intensity loop starting at line ${loop.line} cannot be read: ${inData.message}`, { file: fileName, line: inData.line });
  for (const p of problems) notes.push(`CIF metadata at line ${p.line} could not be read: ${p.message}; ${p.action}`);
  const xColumn = loop.tags.findIndex((t) => TWO_THETA_TAGS.includes(t));
  const sigmaColumn = loop.tags.indexOf(`${loop.tags[intensityColumn]}_su`);
  const twoThetaGrid = xColumn < 0 ? rangeGrid(block, loop, fileName) : null;

  const n = loop.rows.length;
  const x = new Float64Array(n);
  const y = new Float64Array(n);
  const sigma = new Float64Array(n);
  let kept = 0;
  let missing = 0;
  let withEsd = 0;
  for (let r = 0; r < n; r++) {
    const row = loop.rows[r];
    const intensity = requireCifNumber(row[intensityColumn], fileName, 'intensity');
    const twoTheta = twoThetaGrid ? { value: twoThetaGrid(r), esd: null } : requireCifNumber(row[xColumn], fileName, '2θ');
    if (intensity === null || twoTheta === null) {
      missing++;
      continue;
    }
    const su = sigmaColumn >= 0 ? requireCifNumber(row[sigmaColumn], fileName, 'intensity uncertainty') : null;
    const esd = su?.value ?? intensity.esd;
    x[kept] = twoTheta.value;
    y[kept] = intensity.value;
    sigma[kept] = esd ?? 0;
    if (esd !== null) withEsd++;
    kept++;
  }
  if (missing > 0) notes.push(`${missing} row(s) with unknown values ('?' or '.') were left out`);
  if (withEsd > 0 && withEsd < kept) notes.push('only some intensities carry an uncertainty; √counts was used for the others');

  return {
    x: x.slice(0, kept),
    y: y.slice(0, kept),
    sigma: withEsd > 0 ? sigma.slice(0, kept) : null,
    wavelength: cifWavelength(block, fileName, notes),
    meta: blockMeta(block),
    notes,
    format: 'pdcif',
    lastLine: loop.rows.length > 0 ? loop.rows[loop.rows.length - 1][0].line : loop.line,
  };
}

function intensityLoop(block: CifBlock): { loop: CifLoop; intensityColumn: number } | null {
  for (const tag of INTENSITY_TAGS) {
    const loop = block.loops.find((l) => l.tags.includes(tag));
    if (loop) return { loop, intensityColumn: loop.tags.indexOf(tag) };
  }
  return null;
}

/** 2θ of row r from _pd_*_2theta_range_min / _max / _inc, checked against the number of rows. */
function rangeGrid(block: CifBlock, loop: CifLoop, fileName: string): (row: number) => number {
  for (const prefix of RANGE_PREFIXES) {
    const minItem = cifItem(block, `${prefix}_min`);
    const incItem = cifItem(block, `${prefix}_inc`);
    if (!minItem || !incItem) continue;
    const min = requireCifNumber(minItem, fileName, '2θ range minimum');
    const inc = requireCifNumber(incItem, fileName, '2θ range increment');
    if (!min || !inc) continue;
    if (!(inc.value > 0)) {
      throw new InputError(`the 2θ increment ${incItem.text} must be positive`, { file: fileName, line: incItem.line });
    }
    const maxItem = cifItem(block, `${prefix}_max`);
    const max = maxItem ? requireCifNumber(maxItem, fileName, '2θ range maximum') : null;
    if (max && maxItem) {
      const expected = Math.round((max.value - min.value) / inc.value) + 1;
      if (Math.abs(expected - loop.rows.length) > 1) {
        throw new InputError(
          `the 2θ range ${min.value}–${max.value}° in steps of ${inc.value}° gives ${expected} points, but the intensity loop (line ${loop.line}) has ${loop.rows.length}`,
          { file: fileName, line: maxItem.line },
        );
      }
    }
    return (row) => min.value + row * inc.value;
  }
  throw new InputError(
    'the intensity loop has no 2θ column and the block gives no _pd_meas_2theta_range_min / _inc (or _pd_proc_2theta_range_*)',
    { file: fileName, line: loop.line },
  );
}

/** Wavelength from _diffrn_radiation_wavelength (item or loop with weights), else the anode in the radiation type. */
function cifWavelength(block: CifBlock, fileName: string, notes: string[]): Wavelength | null {
  try {
    const loop = block.loops.find((l) => l.tags.includes('_diffrn_radiation_wavelength'));
    if (loop) return wavelengthFromLoop(loop, fileName);
    const item = cifItem(block, '_diffrn_radiation_wavelength') ?? cifItem(block, '_pd_proc_wavelength');
    const value = item ? requireCifNumber(item, fileName, 'wavelength') : null;
    if (value) return singleWavelength(value.value);
    const type = cifItem(block, '_diffrn_radiation_type') ?? cifItem(block, '_diffrn_source_target') ?? cifItem(block, '_diffrn_radiation_source');
    const anode = type ? anodeSymbol(type.text) : undefined;
    return anode ? parseWavelength(anode) : null;
  } catch (err) {
    if (!isInputError(err)) throw err;
    notes.push(`the wavelength in the file was not usable and is ignored (${err.message})`);
    return null;
  }
}

function wavelengthFromLoop(loop: CifLoop, fileName: string): Wavelength | null {
  const at = loop.tags.indexOf('_diffrn_radiation_wavelength');
  const weightAt = loop.tags.indexOf('_diffrn_radiation_wavelength_wt');
  const lines: Array<{ lambda: number; weight: number }> = [];
  for (const row of loop.rows) {
    const lambda = requireCifNumber(row[at], fileName, 'wavelength');
    const weight = weightAt >= 0 ? requireCifNumber(row[weightAt], fileName, 'wavelength weight') : null;
    if (lambda) lines.push({ lambda: lambda.value, weight: weight?.value ?? 1 });
  }
  if (lines.length === 0) return null;
  const first = singleWavelength(lines[0].lambda);
  if (lines.length === 1) return first;
  const second = singleWavelength(lines[1].lambda);
  const ratio = lines[0].weight > 0 && weightAt >= 0 ? lines[1].weight / lines[0].weight : DEFAULT_KALPHA2_RATIO;
  return { label: `${first.lambda1} Å / ${second.lambda1} Å`, lambda1: first.lambda1, lambda2: second.lambda1, ratio };
}

/** Short single items of the block, without the leading underscore, plus the block name. */
function blockMeta(block: CifBlock): Record<string, string> {
  const meta: Record<string, string> = { block: block.name };
  for (const [tag, value] of block.items) if (value.text.length <= 200) meta[tag.slice(1)] = value.text;
  return meta;
}
