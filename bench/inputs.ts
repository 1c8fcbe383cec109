/**
 * Benchmark inputs, all simulated with fixed seeds and cached on disk so repeated runs read the same
 * bytes: patterns of 10 001 points (5–85° 2θ, Cu Kα1/Kα2) with 40–80 peaks, written as two-column
 * text; reference libraries of 1 000 and 100 000 synthetic phases (random d-lists) exported as JSON.
 */
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { patternToXyText, simulatePattern } from '../src/core/crystal/simulate.js';
import { seededUniform } from '../src/core/numeric/random.js';
import type { Reference, ReferenceLine, StoredReference } from '../src/core/model/reference.js';
import { dFromTwoTheta } from '../src/core/model/units.js';
import { anodeWavelength } from '../src/core/model/wavelengths.js';

/** Bump when the generator changes, so stale caches are not reused. */
const INPUTS_VERSION = 1;
export const BENCH_WAVELENGTH = anodeWavelength('Cu');
const TWO_THETA_MIN_DEG = 5;
const TWO_THETA_MAX_DEG = 85;
const STEP_DEG = 0.008;
/** Closest two lines of one synthetic phase may lie, degrees 2θ (keeps a phase's own peaks resolvable). */
const MIN_LINE_SPACING_DEG = 0.3;
const PATTERN_SEED = 7001;
const SMALL_LIBRARY_SEED = 1001;
const LARGE_LIBRARY_SEED = 100_001;

export interface PatternTruth {
  file: string;
  mainPhase: string;
  minorPhase: string | null;
  sizeNm: number;
}

export interface BenchInputs {
  dir: string;
  patternFiles: string[];
  truths: PatternTruth[];
  /** Flat JSON of the 1 000-phase library for the Python script ({names, offsets, d, intensity}). */
  smallLibraryFlatJson: string;
  /** Reference JSON (the `library import` format) of the 1 000-phase library. */
  smallLibraryJson: string;
  smallLibrary: Reference[];
}

const OCCUPANCY_STEP_DEG = 0.01;
const occupied = new Uint8Array(Math.ceil(78 / OCCUPANCY_STEP_DEG) + 1);

/** Deterministic synthetic phase: `lineCount` lines at random 2θ (Cu Kα1) in 6–84°, random intensities, strongest 100. */
function syntheticPhase(name: string, lineCount: number, uniform: () => number, source: string): Reference {
  const positions: number[] = [];
  occupied.fill(0);
  const guard = Math.round(MIN_LINE_SPACING_DEG / OCCUPANCY_STEP_DEG);
  let attempts = 0;
  while (positions.length < lineCount && attempts < lineCount * 50) {
    attempts++;
    const tt = 6 + 78 * uniform();
    const cell = Math.floor((tt - 6) / OCCUPANCY_STEP_DEG);
    if (occupied[cell]) continue;
    positions.push(tt);
    for (let c = Math.max(0, cell - guard); c <= Math.min(occupied.length - 1, cell + guard); c++) occupied[c] = 1;
  }
  positions.sort((a, b) => a - b);
  const raw = positions.map(() => 2 + 98 * uniform() ** 2);
  const strongest = Math.max(...raw);
  const lines: ReferenceLine[] = positions.map((tt, i) => ({
    d: Math.round(dFromTwoTheta(tt, BENCH_WAVELENGTH.lambda1) * 1e5) / 1e5,
    intensity: Math.round((1000 * raw[i]) / strongest) / 10,
  }));
  lines.sort((a, b) => b.d - a.d);
  return { name, formula: 'X', tags: ['simulated'], source, lines };
}

/**
 * `count` synthetic phases. The first 1 000 of any library are the same phases (the small library is
 * the head of the large one), so patterns made from the small library match in both.
 */
export function syntheticLibrary(count: number): Reference[] {
  const refs: Reference[] = [];
  const head = seededUniform(SMALL_LIBRARY_SEED);
  const tail = seededUniform(LARGE_LIBRARY_SEED);
  for (let i = 0; i < count; i++) {
    const small = i < 1000;
    const uniform = small ? head : tail;
    const lineCount = small ? 40 + Math.floor(26 * uniform()) : 20 + Math.floor(41 * uniform());
    const seed = small ? SMALL_LIBRARY_SEED : LARGE_LIBRARY_SEED;
    refs.push(syntheticPhase(`sim-phase-${String(i).padStart(6, '0')}`, lineCount, uniform, `simulated by Crystallog benchmark (seed ${seed})`));
  }
  return refs;
}

/** Give plain references the identity fields of stored ones (for calling the matcher without a database). */
export function asStored(refs: Reference[]): StoredReference[] {
  return refs.map((r, i) => ({ ...r, id: i + 1, version: 1, createdAt: '2000-01-01T00:00:00.000Z' }));
}

/** The flat form the Python script reads: one array of all line d-spacings, offsets per phase. */
export function flatLibraryJson(refs: Reference[]): string {
  const names: string[] = [];
  const offsets: number[] = [0];
  const d: number[] = [];
  const intensity: number[] = [];
  for (const ref of refs) {
    names.push(ref.name);
    for (const line of ref.lines) {
      d.push(line.d);
      intensity.push(line.intensity ?? 10);
    }
    offsets.push(d.length);
  }
  return JSON.stringify({ names, offsets, d, intensity });
}

export function cacheDir(): string {
  return join(tmpdir(), `crystallog-bench-v${INPUTS_VERSION}`);
}

/** One simulated pattern file's text and truth (pattern i of the series). */
function simulateBenchPattern(i: number, library: Reference[], file: string): { text: string; truth: PatternTruth } {
  const uniform = seededUniform(PATTERN_SEED + i);
  const main = library[i % library.length];
  const withMinor = uniform() < 0.3;
  const minor = withMinor ? library[(i * 7 + 13) % library.length] : null;
  const sizeNm = Number((20 + 130 * uniform()).toFixed(1));
  const pattern = simulatePattern({
    phases: [{ lines: main.lines, scale: 1, sizeNm }, ...(minor ? [{ lines: minor.lines, scale: 0.12, sizeNm: 60 }] : [])],
    wavelength: BENCH_WAVELENGTH,
    twoThetaMinDeg: TWO_THETA_MIN_DEG,
    twoThetaMaxDeg: TWO_THETA_MAX_DEG,
    stepDeg: STEP_DEG,
    zeroShiftDeg: Number((0.04 * (uniform() - 0.5)).toFixed(4)),
    peakCounts: Math.round(3000 + 17000 * uniform()),
    noiseSeed: PATTERN_SEED * 13 + i,
    name: file,
  });
  const header = [
    'simulated by Crystallog benchmark; not a measurement',
    `phases: ${main.name}${minor ? ` + ${minor.name} (minor)` : ''}; size ${sizeNm} nm; Cu Kα1/Kα2`,
    '2theta counts',
  ];
  return { text: patternToXyText(pattern, header), truth: { file, mainPhase: main.name, minorPhase: minor?.name ?? null, sizeNm } };
}

/** Make (or reuse from the cache) `patternCount` pattern files and the small library's JSON files. */
export function prepareInputs(patternCount: number, log: (line: string) => void = () => {}): BenchInputs {
  const dir = cacheDir();
  const patternDir = join(dir, 'patterns');
  mkdirSync(patternDir, { recursive: true });
  const smallLibrary = syntheticLibrary(1000);
  const smallLibraryJson = join(dir, 'library-1k.json');
  const smallLibraryFlatJson = join(dir, 'library-1k.flat.json');
  if (!existsSync(smallLibraryJson)) writeFileSync(smallLibraryJson, JSON.stringify(smallLibrary));
  if (!existsSync(smallLibraryFlatJson)) writeFileSync(smallLibraryFlatJson, flatLibraryJson(smallLibrary));

  const truthFile = join(dir, 'truths.json');
  const known: PatternTruth[] = existsSync(truthFile) ? (JSON.parse(readFileSync(truthFile, 'utf8')) as PatternTruth[]) : [];
  const truths: PatternTruth[] = [];
  const patternFiles: string[] = [];
  let made = 0;
  for (let i = 0; i < patternCount; i++) {
    const file = join(patternDir, `simulated-${String(i).padStart(5, '0')}.xy`);
    patternFiles.push(file);
    if (known[i] && known[i].file === file && existsSync(file)) {
      truths.push(known[i]);
      continue;
    }
    const { text, truth } = simulateBenchPattern(i, smallLibrary, file);
    writeFileSync(file, text);
    truths.push(truth);
    made++;
    if (made % 100 === 0) log(`  simulated ${made} patterns`);
  }
  if (made > 0) {
    const merged = known.slice();
    truths.forEach((truth, i) => (merged[i] = truth));
    writeFileSync(truthFile, JSON.stringify(merged));
  }
  return { dir, patternFiles, truths, smallLibraryFlatJson, smallLibraryJson, smallLibrary };
}

/** Write the large library's flat JSON for the Python script (cached); returns its path. */
export function prepareLargeLibraryJson(large: Reference[]): string {
  const file = join(cacheDir(), `library-${large.length}.flat.json`);
  if (!existsSync(file)) writeFileSync(file, flatLibraryJson(large));
  return file;
}
