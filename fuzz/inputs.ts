/**
 * Fuzz inputs for the pattern readers and the analysis: mutations of real pattern files, each one made
 * from a fixed seed and its number alone, so any input of a run can be made again (`inputAt(seeds, seed, id)`).
 * Pure: the caller reads the seed files.
 */
import { seededUniform } from '../src/core/numeric/random.js';

/** A real pattern file to mutate: its name (the extension matters to the readers) and its text. */
export interface SeedFile {
  name: string;
  text: string;
}

export interface FuzzInput {
  id: number;
  /** File name the input is read as (the seed's extension, or another one from a format variant). */
  name: string;
  bytes: Uint8Array;
  /** The mutations applied, in order, for the report. */
  mutations: string[];
}

type Random = () => number;

const encoder = new TextEncoder();
const decoder = new TextDecoder('utf-8', { fatal: false });

/** Data lines: two or more numbers, the way the seed files write them (`28.20 80`, `28,20;80`, `0,28.20,80`). */
const DATA_LINE = /^\s*[-+0-9.]/;

/**
 * How large inputs may grow: large seed files are cut to a window of at most `windowRows` data rows most
 * of the time (so a run of 10 000 inputs takes minutes), `manyRows` bounds the repeated-data mutation and
 * `longLine` the appended line. The test suite runs a small scale; `npm run fuzz` the full one.
 */
export interface InputScale {
  windowRows: number;
  manyRows: number;
  longLine: number;
}
export const FULL_SCALE: InputScale = { windowRows: 2500, manyRows: 100_000, longLine: 2_000_000 };
export const SMALL_SCALE: InputScale = { windowRows: 400, manyRows: 6000, longLine: 60_000 };
const MIN_WINDOW_ROWS = 60;
/** No input grows beyond this many characters (about 40 MB of text). */
const MAX_TEXT_CHARACTERS = 40_000_000;
const WINDOW_SHARE = 0.85;

function pick<T>(random: Random, items: readonly T[]): T {
  return items[Math.floor(random() * items.length)]!;
}

function between(random: Random, min: number, max: number): number {
  return min + Math.floor(random() * (max - min + 1));
}

/** One generator per input, from the run's seed and the input's number (mixed so neighbours differ). */
function randomFor(seed: number, id: number): Random {
  return seededUniform(Math.imul(seed ^ 0x9e3779b9, 0x85ebca6b) ^ Math.imul(id + 1, 0xc2b2ae35));
}

interface Lines {
  lines: string[];
  /** The line break the file uses (the last one is kept as the file had it). */
  eol: string;
}

function splitLines(text: string): Lines {
  return { lines: text.split(/\r?\n/), eol: text.includes('\r\n') ? '\r\n' : '\n' };
}

function dataIndices(lines: readonly string[]): number[] {
  const out: number[] = [];
  for (let i = 0; i < lines.length; i++) if (DATA_LINE.test(lines[i]!) && /\d/.test(lines[i]!)) out.push(i);
  return out;
}

/** The separator between the first two numbers of a data line ('' when there is none). */
function fieldsOf(line: string): { fields: string[]; separator: string } {
  const trimmed = line.trim();
  for (const separator of [';', '\t', ',', ' ']) {
    if (separator === ',' && /^\S+,\d+\s/.test(trimmed)) continue;
    if (trimmed.includes(separator)) return { fields: trimmed.split(separator).filter((f) => f !== ''), separator: separator === ' ' ? ' ' : separator };
  }
  return { fields: [trimmed], separator: ' ' };
}

/** Which field is 2θ: the second in a CSV that starts with an index column, else the first. */
function angleField(fields: readonly string[], header: readonly string[]): number {
  return fields.length >= 3 && header.some((l) => /^\s*index\s*,/i.test(l)) ? 1 : 0;
}

const BAD_NUMBERS = ['NaN', 'nan', 'Inf', '-Inf', 'Infinity', '-Infinity', 'inf', '1e999', '-1e999', '1e308', '--1', '1.2.3', '', '?', '.'];
const TWO_THETA_VALUES = [
  (r: Random) => (-r() * 90).toFixed(3),
  (r: Random) => (180 + r() * 800).toFixed(3),
  () => '1e9',
  () => '-1e9',
  () => '1e300',
  () => '0',
  () => '180',
  (r: Random) => (r() * 1e-9).toExponential(3),
  (r: Random) => pick(r, BAD_NUMBERS),
];
const CONTROL = ['\u0000', '\u0001', '\u0007', '\u001b', '\u007f', '\ufeff', '\u00a0', '\u2028', '\ufffd', '\r'];

type Mutation = (state: MutableFile, random: Random, scale: InputScale) => string;

interface MutableFile {
  name: string;
  text: string;
  /** Raw bytes, once a mutation worked on bytes rather than text. */
  bytes: Uint8Array | null;
}

function textOf(file: MutableFile): string {
  if (file.bytes) {
    file.text = decoder.decode(file.bytes);
    file.bytes = null;
  }
  return file.text;
}

function bytesOf(file: MutableFile): Uint8Array {
  file.bytes ??= encoder.encode(file.text);
  return file.bytes;
}

/** Change the data lines chosen by `which` with `change(fields, angleIndex)`. */
function mapData(file: MutableFile, which: (k: number, count: number) => boolean, change: (fields: string[], angle: number, k: number) => void): void {
  const { lines, eol } = splitLines(textOf(file));
  const data = dataIndices(lines);
  const header = lines.slice(0, data[0] ?? 0);
  data.forEach((lineIndex, k) => {
    if (!which(k, data.length)) return;
    const { fields, separator } = fieldsOf(lines[lineIndex]!);
    change(fields, angleField(fields, header), k);
    lines[lineIndex] = fields.join(separator);
  });
  file.text = lines.join(eol);
}

function someRows(random: Random, share: number): (k: number, count: number) => boolean {
  return () => random() < share;
}

const MUTATIONS: Record<string, Mutation> = {
  'byte flips': (file, random) => {
    const bytes = bytesOf(file).slice();
    const flips = between(random, 1, 12);
    for (let f = 0; f < flips && bytes.length > 0; f++) {
      const at = Math.floor(random() * bytes.length);
      bytes[at] = random() < 0.5 ? bytes[at]! ^ (1 << between(random, 0, 7)) : between(random, 0, 255);
    }
    file.bytes = bytes;
    return `${flips} byte flips`;
  },
  truncate: (file, random) => {
    const bytes = bytesOf(file);
    const at = Math.floor(random() * bytes.length);
    file.bytes = bytes.slice(0, at);
    return `truncated at byte ${at}`;
  },
  'angle outliers': (file, random) => {
    const share = pick(random, [0.0005, 0.005, 0.02, 0.3, 1]);
    const value = pick(random, TWO_THETA_VALUES);
    mapData(file, someRows(random, share), (fields, angle) => {
      if (fields.length > angle) fields[angle] = value(random);
    });
    return `2θ of about ${share * 100} % of rows replaced`;
  },
  'one huge angle': (file, random) => {
    const { lines } = splitLines(textOf(file));
    const count = dataIndices(lines).length;
    const target = Math.floor(random() * count);
    const value = pick(random, ['1e9', '9e15', '-1e9', '1e300', '179.999999', '0.0000001', '1e-300']);
    mapData(file, (k) => k === target, (fields, angle) => {
      if (fields.length > angle) fields[angle] = value;
    });
    return `one 2θ set to ${value}`;
  },
  'intensity values': (file, random) => {
    const share = pick(random, [0.001, 0.05, 1]);
    const value = pick(random, [...BAD_NUMBERS, '-5', '-1e9', '1e300', '1e-300', '0', '4.9e-324']);
    mapData(file, someRows(random, share), (fields, angle) => {
      if (fields.length > angle + 1) fields[angle + 1] = value;
    });
    return `intensity of about ${share * 100} % of rows set to ${JSON.stringify(value)}`;
  },
  'all angles equal': (file, random) => {
    const value = pick(random, ['28.44', '10', '0.5', '179.5']);
    mapData(file, () => true, (fields, angle) => {
      if (fields.length > angle) fields[angle] = value;
    });
    return `every 2θ set to ${value}`;
  },
  'angles scaled': (file, random) => {
    const factor = pick(random, [1e-6, 1e-3, 0.01, 100, 1e6, -1]);
    mapData(file, () => true, (fields, angle) => {
      const v = Number(fields[angle]?.replace(',', '.'));
      if (Number.isFinite(v)) fields[angle] = String(v * factor);
    });
    return `every 2θ times ${factor}`;
  },
  'intensities scaled': (file, random) => {
    const factor = pick(random, [1e-6, 1 / 3, 1e-3 * Math.PI, 1e5, 1e200, -1]);
    mapData(file, () => true, (fields, angle) => {
      const v = Number(fields[angle + 1]?.replace(',', '.'));
      if (Number.isFinite(v)) fields[angle + 1] = String(v * factor);
    });
    return `every intensity times ${factor}`;
  },
  'rows reversed': (file) => {
    const { lines, eol } = splitLines(textOf(file));
    const data = dataIndices(lines);
    const reversed = data.map((i) => lines[i]!).reverse();
    data.forEach((i, k) => (lines[i] = reversed[k]!));
    file.text = lines.join(eol);
    return 'data rows reversed';
  },
  'rows shuffled': (file, random) => {
    const { lines, eol } = splitLines(textOf(file));
    const data = dataIndices(lines);
    const swaps = between(random, 1, Math.max(1, data.length));
    for (let s = 0; s < swaps && data.length > 1; s++) {
      const a = data[Math.floor(random() * data.length)]!;
      const b = data[Math.floor(random() * data.length)]!;
      [lines[a], lines[b]] = [lines[b]!, lines[a]!];
    }
    file.text = lines.join(eol);
    return `${swaps} row swaps`;
  },
  'rows duplicated': (file, random) => {
    const { lines, eol } = splitLines(textOf(file));
    const share = pick(random, [0.01, 0.5, 1]);
    const out: string[] = [];
    for (const line of lines) {
      out.push(line);
      if (DATA_LINE.test(line) && random() < share) out.push(line);
    }
    file.text = out.join(eol);
    return `about ${share * 100} % of rows duplicated`;
  },
  'columns dropped or added': (file, random) => {
    const kind = pick(random, ['drop', 'add', 'empty']);
    mapData(file, someRows(random, pick(random, [0.01, 1])), (fields) => {
      if (kind === 'drop') fields.splice(fields.length - 1, 1);
      else if (kind === 'add') fields.push(String(between(random, -5, 500)), 'x');
      else fields.push('');
    });
    return `columns: ${kind}`;
  },
  'CR line ends': (file) => {
    file.text = textOf(file).replace(/\r?\n/g, '\r');
    return 'CR-only line ends';
  },
  'mixed line ends': (file, random) => {
    file.text = textOf(file).replace(/\r?\n/g, () => pick(random, ['\n', '\r\n', '\r', '\n\r', '\r\r\n']));
    return 'mixed line ends';
  },
  'control bytes': (file, random) => {
    let text = textOf(file);
    const count = between(random, 1, 20);
    for (let c = 0; c < count; c++) {
      const at = Math.floor(random() * (text.length + 1));
      text = text.slice(0, at) + pick(random, CONTROL) + text.slice(at);
    }
    file.text = text;
    return `${count} control characters inserted`;
  },
  'NUL padding': (file, random) => {
    const bytes = bytesOf(file);
    const padding = between(random, 1, 4096);
    const out = new Uint8Array(bytes.length + padding);
    if (random() < 0.5) out.set(bytes, 0);
    else out.set(bytes, padding);
    file.bytes = out;
    return `${padding} NUL bytes added`;
  },
  'UTF-16': (file) => {
    const text = textOf(file);
    const out = new Uint8Array(2 + 2 * text.length);
    out[0] = 0xff;
    out[1] = 0xfe;
    for (let i = 0; i < text.length; i++) {
      out[2 + 2 * i] = text.charCodeAt(i) & 0xff;
      out[3 + 2 * i] = text.charCodeAt(i) >> 8;
    }
    file.bytes = out;
    return 'UTF-16LE with BOM';
  },
  empty: (file, random) => {
    file.bytes = null;
    file.text = pick(random, ['', ' ', '\n', '\r\n\r\n', '\ufeff', '#\n', '# only a comment\n', 'data_x\n', 'loop_\n_pd_meas_2theta_scan\n_pd_meas_counts_total\n']);
    return 'empty or blank file';
  },
  'long line': (file, random, scale) => {
    const length = between(random, scale.longLine / 20, scale.longLine);
    const digit = pick(random, ['1', '9', ' ', '1 ', '.', 'e']);
    file.text = textOf(file) + digit.repeat(Math.ceil(length / digit.length));
    return `a ${length}-character line appended`;
  },
  'many rows': (file, random, scale) => {
    const { lines, eol } = splitLines(textOf(file));
    const data = dataIndices(lines).map((i) => lines[i]!);
    const target = between(random, scale.manyRows / 4, scale.manyRows);
    // Bounded in characters too (a long line among the rows must not make a string no engine can hold).
    const characters = data.reduce((sum, line) => sum + line.length + 1, 0);
    const copies = Math.max(1, Math.min(Math.ceil(target / Math.max(1, data.length)), Math.floor(MAX_TEXT_CHARACTERS / Math.max(1, characters))));
    file.text = lines.join(eol) + eol + Array.from({ length: copies }, () => data.join(eol)).join(eol);
    return `data repeated to about ${copies * data.length} rows`;
  },
  'as CSV': (file, random) => {
    const separator = pick(random, [',', ';', '\t']);
    const decimalComma = separator !== ',' && random() < 0.5;
    const header = pick(random, ['2theta,counts', '"2θ (deg)","Intensity (cps)"', 'Angle,Intensity,ESD', 'x,y', '']);
    const { lines, eol } = splitLines(textOf(file));
    const rows = dataIndices(lines).map((i) => {
      const { fields } = fieldsOf(lines[i]!);
      const out = fields.map((f) => (decimalComma ? f.replace('.', ',') : f));
      return random() < 0.002 ? out.map((f) => `"${f}"`).join(separator) : out.join(separator);
    });
    file.text = (header ? header.replaceAll(',', separator) + eol : '') + rows.join(eol) + eol;
    file.name = file.name.replace(/\.[^.]*$/, '') + '.csv';
    return `as CSV (separator ${JSON.stringify(separator)}${decimalComma ? ', decimal comma' : ''})`;
  },
  'as pdCIF': (file, random) => {
    const { lines } = splitLines(textOf(file));
    const rows = dataIndices(lines).map((i) => fieldsOf(lines[i]!).fields);
    const withEsd = random() < 0.5;
    const body = rows.map((f) => `${f[0] ?? '?'} ${f[1] ?? '.'}${withEsd ? `(${between(random, 1, 99)})` : ''}`);
    const tag = pick(random, ['_pd_meas_counts_total', '_pd_proc_intensity_total', '_pd_meas_intensity_total']);
    file.text = `data_fuzz\n_diffrn_radiation_wavelength 1.540593\nloop_\n_pd_meas_2theta_scan\n${tag}\n${body.join('\n')}\n`;
    file.name = file.name.replace(/\.[^.]*$/, '') + '.cif';
    return `as pdCIF loop (${tag})`;
  },
  'as pdCIF range': (file, random) => {
    const { lines } = splitLines(textOf(file));
    const rows = dataIndices(lines).map((i) => fieldsOf(lines[i]!).fields);
    const min = pick(random, ['10', '28.20', '-5', '0', '1e9', 'NaN', '?', '200']);
    const max = pick(random, ['100', '28.60', '1e9', '1e300', '10', 'Inf', '?', String(10 + rows.length * 0.02)]);
    const inc = pick(random, ['0.02', '0.01', '1e-12', '0', '-0.02', '1e-300', 'NaN', '5e-324', '100']);
    const values = rows.map((f) => f[1] ?? '0');
    file.text = `data_fuzz\n_pd_meas_2theta_range_min ${min}\n_pd_meas_2theta_range_max ${max}\n_pd_meas_2theta_range_inc ${inc}\nloop_\n_pd_proc_intensity_total\n${values.join('\n')}\n`;
    file.name = file.name.replace(/\.[^.]*$/, '') + '.cif';
    return `as pdCIF range (min ${min}, max ${max}, inc ${inc})`;
  },
  'CIF tag mutation': (file, random) => {
    let text = textOf(file);
    const edits = [
      () => text.replace(/_pd_meas_2theta_range_inc\s+\S+/, `_pd_meas_2theta_range_inc ${pick(random, ['1e-12', '0', '-1', 'NaN', '1e-300'])}`),
      () => text.replace(/_pd_meas_2theta_range_max\s+\S+/, `_pd_meas_2theta_range_max ${pick(random, ['1e9', '1e300', 'Inf', '-1'])}`),
      () => text.replace(/_pd_meas_2theta_range_min\s+\S+/, `_pd_meas_2theta_range_min ${pick(random, ['-1e9', '-1e300', '1e9', '?'])}`),
      () => text.replace('loop_', 'loop_\nloop_'),
      () => text.replace(/_pd_meas_2theta_scan/, '_pd_meas_2theta_scan\n_pd_meas_2theta_scan'),
      () => text.replace(/_diffrn_radiation_wavelength\s+[\d.]+/, `_diffrn_radiation_wavelength ${pick(random, ['0', '-1.5', '1e9', 'NaN', '1e-9'])}`),
      () => text.replace(/^(\s*[\d.]+)\s+/m, '$1 '.repeat(between(random, 2, 5))),
      () => text.replace(/data_\S*/, pick(random, ['data_', 'data_a\ndata_b', 'global_'])),
      () => `${text}\n${pick(random, ['_pd_meas_2theta_range_min 1\n_pd_meas_2theta_range_max 1e9\n_pd_meas_2theta_range_inc 1e-9\n', ';\nunterminated text field\n', "'unterminated"])}`,
    ];
    const edit = Math.floor(random() * edits.length);
    file.text = edits[edit]!();
    return `CIF edit ${edit}`;
  },
  'header words': (file, random) => {
    const header = pick(random, ['# 2theta cps', '# counts per second', '# normalised intensity', '# Wavelength: 1.5406', '# Wavelength: 0', '# Wavelength: -3', '# Wavelength: 1e9', 'Wavelength: NaN', '# lambda = 0.70930', '2Theta Intensity']);
    file.text = `${header}\n${textOf(file)}`;
    return `header line ${JSON.stringify(header)}`;
  },
};

const MUTATION_NAMES = Object.keys(MUTATIONS);

/** A window of a large seed's lines (its header kept), so most inputs are quick to analyse. */
function windowOf(text: string, random: Random, maxRows: number): { text: string; note: string | null } {
  const { lines, eol } = splitLines(text);
  const data = dataIndices(lines);
  if (data.length <= maxRows || random() >= WINDOW_SHARE) return { text, note: null };
  const length = between(random, MIN_WINDOW_ROWS, maxRows);
  const start = between(random, 0, data.length - length);
  const header = lines.slice(0, data[0]);
  const body = lines.slice(data[start], data[start + length - 1]! + 1);
  return { text: [...header, ...body].join(eol) + eol, note: `window of ${length} rows from row ${start + 1}` };
}

/** Input number `id` of the run with this seed: a seed file, perhaps cut to a window, with 1 to 3 mutations. */
export function inputAt(seeds: readonly SeedFile[], seed: number, id: number, scale: InputScale = FULL_SCALE): FuzzInput {
  if (seeds.length === 0) throw new Error('no seed files to mutate');
  const random = randomFor(seed, id);
  const source = seeds[id % seeds.length]!;
  const window = windowOf(source.text, random, scale.windowRows);
  const file: MutableFile = { name: source.name, text: window.text, bytes: null };
  const mutations = [source.name, ...(window.note ? [window.note] : [])];
  const count = random() < 0.6 ? 1 : random() < 0.7 ? 2 : 3;
  for (let m = 0; m < count; m++) mutations.push(MUTATIONS[pick(random, MUTATION_NAMES)]!(file, random, scale));
  return { id, name: file.name.replace(/^.*[\\/]/, ''), bytes: bytesOf(file), mutations };
}

/** Names of every mutation the generator applies (documented in the run's output). */
export function mutationNames(): readonly string[] {
  return MUTATION_NAMES;
}
