/**
 * `npm run bench [-- --quick] [--files N] [--step-files N] [--repeats N] [--whole-job-repeats N]
 *   [--large-library N] [--python-files N] [--peer-rounds N] [--no-python] [--no-modules]`
 *
 * Generates simulated inputs (fixed seeds, cached), times each step of the job on the same files as
 * a committed numpy/scipy script that does the same steps (bench/python/whole_job_scipy.py), runs
 * `crystallog analyze` over all files as a child process (wall time and peak RSS), then the whole job
 * against the scipy peer on the same files, the peer over as many processes as our workers, interleaved
 * over rounds, CPU and wall of each process tree (bench/peer.ts) with an agreement check; runs every
 * area's bench module, prints the tables and writes bench/results.json.
 * Nothing is installed: without scipy the Python column is skipped with the command to install it.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { availableParallelism, cpus, totalmem } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { setFlagsFromString } from 'node:v8';
import { runInNewContext } from 'node:vm';
import { analyzePattern, createAnalysisContext } from '../src/core/analysis/analyse.js';
import type { StoredReference } from '../src/core/model/reference.js';
import { ReferenceLibrary } from '../src/node/library/store.js';
import { buildReferenceIndex, type ReferenceIndex } from '../src/core/match/reference-index.js';
import { matchPhases } from '../src/core/match/match.js';
import type { Pattern } from '../src/core/model/pattern.js';
import { readPatternFile } from '../src/node/files.js';
import { findPeaks } from '../src/core/process/peaks.js';
import { fitWork, resetFitWork } from '../src/core/process/fit.js';
import type { PeakSearchResult } from '../src/core/model/peak.js';
import { seriesSamplesFromAnalyses } from '../src/core/analysis/series-from-analysis.js';
import { analyzeSeries } from '../src/core/series/series.js';
import { crystalliteSizes } from '../src/core/size/sizes.js';
import { asStored, BENCH_WAVELENGTH, prepareInputs, prepareLargeLibraryJson, syntheticLibrary, type BenchInputs } from './inputs.js';
import { timeStats, type BenchRow } from './types.js';
import { agreement, findPython, interleavedRounds, ONLY_OURS, ONLY_PEER, summariseRounds, type Agreement, type PeerRound } from './peer.js';

interface BenchConfig {
  quick: boolean;
  patterns: number;
  /** Files each per-step timing runs over (per-file time = total / files). */
  stepFiles: number;
  repeats: number;
  largeLibrary: number;
  wholeJobRepeats: number;
  seriesRepeats: number;
  /** Files the interleaved whole-job comparison runs over, both sides (the first N of the same list). */
  pythonFiles: number;
  /** Rounds of ours, peer (alternating which goes first). */
  peerRounds: number;
  python: boolean;
  modules: boolean;
}

interface Comparison {
  step: string;
  oursMs: number;
  theirsMs: number | null;
  /** ours / theirs (below 1: ours is faster). */
  ratio: number | null;
  note: string;
}

const ROOT = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
let PYTHON = 'python3';
const PYTHON_SCRIPT = join(ROOT, 'bench', 'python', 'whole_job_scipy.py');
const RESULTS_FILE = join(ROOT, 'bench', 'results.json');
const CLI = join(ROOT, 'bin', 'crystallog.js');
const AREA_MODULES = ['read', 'process', 'engine', 'crystal', 'library', 'match', 'scale', 'size', 'app', 'plot'];

function parseArgs(argv: string[]): BenchConfig {
  const quick = argv.includes('--quick');
  const valueOf = (name: string): number | undefined => {
    const i = argv.indexOf(name);
    return i >= 0 && argv[i + 1] !== undefined ? Number(argv[i + 1]) : undefined;
  };
  const patterns = valueOf('--files') ?? (quick ? 20 : 1000);
  return {
    quick,
    patterns,
    stepFiles: Math.min(patterns, valueOf('--step-files') ?? (quick ? 5 : 20)),
    repeats: valueOf('--repeats') ?? (quick ? 3 : 5),
    largeLibrary: valueOf('--large-library') ?? (quick ? 20_000 : 100_000),
    wholeJobRepeats: valueOf('--whole-job-repeats') ?? (quick ? 1 : 3),
    seriesRepeats: quick ? 1 : 3,
    pythonFiles: Math.min(patterns, valueOf('--python-files') ?? (quick ? 10 : 100)),
    peerRounds: valueOf('--peer-rounds') ?? (quick ? 2 : 3),
    python: !argv.includes('--no-python'),
    modules: !argv.includes('--no-modules') && !quick,
  };
}

const log = (line: string): void => void process.stderr.write(`${line}\n`);

/** Time `work` over all items, `repeats` times; one per-item time per repeat. */
function perItemMs<T>(items: T[], repeats: number, work: (item: T) => unknown): number[] {
  const runs: number[] = [];
  for (let r = 0; r < repeats; r++) {
    const start = performance.now();
    for (const item of items) work(item);
    runs.push((performance.now() - start) / items.length);
  }
  return runs;
}

function row(name: string, runs: number[], extra: Partial<BenchRow> = {}): BenchRow {
  return { name, ...timeStats(runs), ...extra };
}

/** A full garbage collection, so memory figures count what is kept, not what is waiting to be collected. */
function collectGarbage(): void {
  setFlagsFromString('--expose-gc');
  (runInNewContext('gc') as () => void)();
}

function rssMb(): number {
  return process.memoryUsage().rss / 2 ** 20;
}

interface StepData {
  pattern: Pattern;
  search: PeakSearchResult;
}

/** Each step alone, single thread, on the first `stepFiles` files. */
function measureSteps(inputs: BenchInputs, config: BenchConfig): { rows: BenchRow[]; perFile: Record<string, number[]> } {
  const files = inputs.patternFiles.slice(0, config.stepFiles);
  const wavelength = BENCH_WAVELENGTH;
  const rows: BenchRow[] = [];
  const perFile: Record<string, number[]> = {};
  const small = asStored(inputs.smallLibrary);
  const smallIndex = buildReferenceIndex(small);

  log(`steps: read, peaks, match, size on ${files.length} files, ${config.repeats} repeats`);
  perFile.read = perItemMs(files, config.repeats, (f) => readPatternFile(f));
  rows.push(row('read 10 001-point text pattern (per file)', perFile.read));

  const patterns = files.map((f) => readPatternFile(f));
  resetFitWork();
  const data: StepData[] = patterns.map((pattern) => ({ pattern, search: findPeaks(pattern, { wavelength }) }));
  const work = `fit work per file: ${(fitWork.evaluations / files.length).toFixed(0)} model + Jacobian evaluations, ${(fitWork.profilePoints / files.length).toFixed(0)} profile points, ${(fitWork.lmSteps / files.length).toFixed(0)} LM steps`;
  const peakCounts = data.map((d) => d.search.peaks.length);
  perFile.peaks = perItemMs(patterns, config.repeats, (p) => findPeaks(p, { wavelength }));
  rows.push(row('peaks: search + profile fit (per file)', perFile.peaks, { note: `${Math.min(...peakCounts)}–${Math.max(...peakCounts)} peaks per pattern; ${work}` }));

  const matchWith = (index: ReferenceIndex) => (d: StepData) =>
    matchPhases(d.search.peaks, index.references, {
      wavelength,
      index,
      background: { x: d.pattern.x, y: d.search.background, sigma: d.search.noiseSigma },
      twoThetaRangeDeg: { min: d.pattern.x[0], max: d.pattern.x[d.pattern.x.length - 1] },
    });
  perFile.match1k = perItemMs(data, config.repeats, matchWith(smallIndex));
  const found1k = data.filter((d, i) => matchWith(smallIndex)(d).phases[0]?.name === inputs.truths[i].mainPhase).length;
  rows.push(row('match against 1 000 references (per file)', perFile.match1k, { note: `main phase ranked first in ${found1k}/${data.length}` }));

  const sizeRefs = new Map(small.map((r) => [r.name, r]));
  perFile.size = perItemMs(data, config.repeats, (d) => {
    const phase = sizeRefs.get(inputs.truths[patterns.indexOf(d.pattern)].mainPhase)!;
    return crystalliteSizes(d.search.peaks, { wavelength, phase: { name: phase.name, version: 1, lines: phase.lines } });
  });
  rows.push(row('size: Scherrer + Williamson–Hall (per file)', perFile.size));

  // The large library: index build time, its memory, and matching against it.
  collectGarbage();
  const rssBefore = rssMb();
  const heapBefore = process.memoryUsage().heapUsed;
  let large: StoredReference[] | null = asStored(syntheticLibrary(config.largeLibrary));
  const lineCount = large.reduce((s, r) => s + r.lines.length, 0);
  const builds: number[] = [];
  let largeIndex: ReferenceIndex | null = null;
  for (let r = 0; r < Math.min(3, config.repeats); r++) {
    largeIndex = null;
    const start = performance.now();
    largeIndex = buildReferenceIndex(large);
    builds.push(performance.now() - start);
  }
  const indexBytes = largeIndex!.d.byteLength + largeIndex!.referenceOf.byteLength + largeIndex!.intensity.byteLength;
  collectGarbage();
  const rssGrowth = rssMb() - rssBefore;
  const retainedMb = (process.memoryUsage().heapUsed - heapBefore + indexBytes) / 2 ** 20;
  rows.push(
    row(`index build, ${config.largeLibrary.toLocaleString('en')} references (${lineCount.toLocaleString('en')} lines)`, builds, {
      target: config.largeLibrary === 100_000 ? '< 10 s' : '(100 000 in full run)',
      note: `index arrays ${(indexBytes / 2 ** 20).toFixed(0)} MB; library objects + index retained ${retainedMb.toFixed(0)} MB, RSS growth ${rssGrowth.toFixed(0)} MB (target < 500 MB)`,
    }),
  );
  perFile.match100k = perItemMs(data, config.repeats, matchWith(largeIndex!));
  const foundLarge = data.filter((d, i) => matchWith(largeIndex!)(d).phases[0]?.name === inputs.truths[i].mainPhase).length;
  rows.push(
    row(`match against ${config.largeLibrary.toLocaleString('en')} references (per file)`, perFile.match100k, {
      target: '< 250 ms',
      note: `main phase ranked first in ${foundLarge}/${data.length}`,
    }),
  );
  large = null;
  largeIndex = null;

  // A series: 50 patterns analysed end to end in one thread (the screens' path).
  const seriesFiles = inputs.patternFiles.slice(0, Math.min(50, inputs.patternFiles.length));
  const context = createAnalysisContext(small, null, {});
  const seriesRuns: number[] = [];
  const comparisonRuns: number[] = [];
  for (let r = 0; r < config.seriesRepeats; r++) {
    const start = performance.now();
    const analyses = seriesFiles.map((f) => analyzePattern(readPatternFile(f), context));
    const compared = performance.now();
    analyzeSeries(seriesSamplesFromAnalyses(analyses, { target: null }));
    const end = performance.now();
    seriesRuns.push(end - start);
    comparisonRuns.push(end - compared);
  }
  rows.push(
    row(`series of ${seriesFiles.length}: analyse each (one thread) + series comparison (whole series)`, seriesRuns, {
      note: `series comparison alone ${formatMs(timeStats(comparisonRuns).medianMs)}`,
    }),
  );
  perFile.analyze = seriesRuns.map((ms) => ms / seriesFiles.length);
  return { rows, perFile };
}

/** `crystallog analyze` over all files as a child process: wall time and peak RSS (GNU time). */
function measureWholeJob(inputs: BenchInputs, config: BenchConfig): { row: BenchRow; runs: number[]; peakRssMb: number | null; db: string } {
  // A fresh library file each run, made by the current code (cheap for 1 000 references).
  const db = join(inputs.dir, 'library-1k.db');
  for (const file of [db, `${db}-wal`, `${db}-shm`]) rmSync(file, { force: true });
  const store = ReferenceLibrary.open(db);
  store.importReferences(inputs.smallLibrary);
  store.close();
  const list = join(inputs.dir, `files-${config.patterns}.txt`);
  writeFileSync(list, inputs.patternFiles.join('\n') + '\n');
  const out = join(inputs.dir, 'analyze-output.json');
  const hasGnuTime = existsSync('/usr/bin/time');
  const runs: number[] = [];
  let peakRssMb: number | null = null;
  log(`whole job: crystallog analyze over ${config.patterns} files, ${config.wholeJobRepeats} run(s), ${availableParallelism()} workers`);
  for (let r = 0; r < config.wholeJobRepeats; r++) {
    const args = [CLI, 'analyze', '--files-from', list, '--library', db, '--json'];
    const command = hasGnuTime ? '/usr/bin/time' : process.execPath;
    const start = performance.now();
    const child = spawnSync(command, hasGnuTime ? ['-f', 'maxrss_kb=%M', process.execPath, ...args] : args, {
      stdio: ['ignore', 'pipe', 'pipe'],
      maxBuffer: 2 ** 31 - 1,
    });
    runs.push(performance.now() - start);
    if (child.status !== 0) throw new Error(`crystallog analyze failed (exit ${child.status}): ${child.stderr.toString().slice(-500)}`);
    writeFileSync(out, child.stdout);
    const rss = /maxrss_kb=(\d+)/.exec(child.stderr.toString());
    if (rss) peakRssMb = Math.max(peakRssMb ?? 0, Number(rss[1]) / 1024);
  }
  const s = timeStats(runs);
  return {
    runs,
    peakRssMb,
    db,
    row: {
      name: `analyze ${config.patterns} files end to end (CLI, ${availableParallelism()} workers, match 1k)`,
      ...s,
      target: config.patterns === 1000 ? '< 30 s on 2 cores, < 1 GB' : '(1 000 files in full run)',
      note: peakRssMb === null ? 'peak RSS not measured (no /usr/bin/time)' : `peak RSS ${peakRssMb.toFixed(0)} MB`,
    },
  };
}

interface PythonResult {
  versions: Record<string, string>;
  steps: Record<string, number[]>;
  index100kBuildMs?: number;
  peaksFound: number[];
  fitWorkPerFile?: Record<string, number>;
}

function pythonAvailable(): string | null {
  const found = findPython();
  if ('missing' in found) return found.missing;
  PYTHON = found.python;
  return null;
}

function runPython(inputs: BenchInputs, config: BenchConfig): PythonResult {
  const list = join(inputs.dir, `files-${config.patterns}.txt`);
  writeFileSync(list, inputs.patternFiles.join('\n') + '\n');
  const largeJson = prepareLargeLibraryJson(syntheticLibrary(config.largeLibrary));
  log(`python: same steps on ${config.stepFiles} files, one process`);
  const child = spawnSync(
    PYTHON,
    [
      PYTHON_SCRIPT,
      '--mode', 'steps',
      '--files', list,
      '--library', inputs.smallLibraryFlatJson,
      '--large-library', largeJson,
      '--step-files', String(config.stepFiles),
      '--repeats', String(config.repeats),
    ],
    { encoding: 'utf8', maxBuffer: 2 ** 28, stdio: ['ignore', 'pipe', 'inherit'] },
  );
  if (child.status !== 0) throw new Error(`the Python script failed (exit ${child.status})`);
  return JSON.parse(child.stdout) as PythonResult;
}

function compare(step: string, ours: number, theirs: number | null, note = ''): Comparison {
  return { step, oursMs: ours, theirsMs: theirs, ratio: theirs ? ours / theirs : null, note };
}

function formatMs(ms: number | null): string {
  if (ms === null) return '—';
  if (ms >= 10_000) return `${(ms / 1000).toFixed(1)} s`;
  if (ms >= 100) return `${ms.toFixed(0)} ms`;
  if (ms >= 1) return `${ms.toFixed(2)} ms`;
  return `${(ms * 1000).toFixed(1)} µs`;
}

function printRows(title: string, rows: BenchRow[]): void {
  const out = [`\n${title}`, `${'step'.padEnd(72)} ${'median'.padStart(10)} ${'min'.padStart(10)} ${'max'.padStart(10)}  target / note`];
  for (const r of rows) {
    const tail = [r.target, r.note].filter(Boolean).join('; ');
    out.push(`${r.name.padEnd(72)} ${formatMs(r.medianMs).padStart(10)} ${formatMs(r.minMs).padStart(10)} ${formatMs(r.maxMs).padStart(10)}  ${tail}`);
  }
  process.stdout.write(out.join('\n') + '\n');
}

function printComparisons(comparisons: Comparison[], pythonNote: string): void {
  const out = [`\nSide by side with numpy/scipy (${pythonNote}); ratio = ours / theirs, below 1 means ours is faster`];
  out.push(`${'step'.padEnd(44)} ${'ours'.padStart(10)} ${'scipy'.padStart(10)} ${'ratio'.padStart(8)} ${'faster'.padStart(8)}  note`);
  for (const c of comparisons) {
    const ratio = c.ratio === null ? '—' : c.ratio.toFixed(3);
    const faster = c.ratio === null ? '—' : `${(1 / c.ratio).toFixed(1)}×`;
    out.push(`${c.step.padEnd(44)} ${formatMs(c.oursMs).padStart(10)} ${formatMs(c.theirsMs).padStart(10)} ${ratio.padStart(8)} ${faster.padStart(8)}  ${c.note}`);
  }
  process.stdout.write(out.join('\n') + '\n');
}

/** Every area's bench module (bench/<area>.js) that exists, each run in turn. */
function runAreaInItsOwnProcess(area: string): BenchRow[] {
  const runner = join(dirname(fileURLToPath(import.meta.url)), 'area-runner.js');
  const child = spawnSync(process.execPath, [runner, area], { encoding: 'utf8', stdio: ['ignore', 'pipe', 'inherit'], maxBuffer: 64 * 2 ** 20 });
  if (child.status !== 0) throw new Error(`exit code ${child.status}`);
  const lines = child.stdout.trim().split('\n');
  return JSON.parse(lines[lines.length - 1]) as BenchRow[];
}

async function runAreaModules(): Promise<Record<string, BenchRow[] | { error: string }>> {
  const results: Record<string, BenchRow[] | { error: string }> = {};
  for (const area of AREA_MODULES) {
    const file = join(dirname(fileURLToPath(import.meta.url)), `${area}.js`);
    if (!existsSync(file)) continue;
    log(`area bench: ${area}`);
    try {
      const rows = runAreaInItsOwnProcess(area);
      results[area] = rows;
      printRows(`bench/${area}.ts`, rows);
    } catch (err) {
      results[area] = { error: err instanceof Error ? err.message : String(err) };
      log(`  ${area}: failed: ${results[area] && 'error' in results[area] ? (results[area] as { error: string }).error : ''}`);
    }
  }
  return results;
}

/**
 * A fixed arithmetic loop that no change to Crystallog touches, timed (median of 3) at the start and the
 * end of the run: on a shared machine whose speed drifts, it tells which runs can be compared.
 */
function machineSpeedProbeMs(): number {
  const times: number[] = [];
  let sink = 0;
  for (let rep = 0; rep < 3; rep++) {
    const started = performance.now();
    for (let i = 0; i < 5_000_000; i++) {
      const u = (i % 1000) * 0.004;
      sink += Math.exp(-2.772588722239781 * u * u) + 1 / (1 + 4 * u * u);
    }
    times.push(performance.now() - started);
  }
  if (!Number.isFinite(sink)) throw new Error('speed probe overflowed');
  return timeStats(times).medianMs;
}

/** Wall time of a bare `node -e 0` (median of 3): the machine's load, stated beside the figures. */
function bareNodeMs(): number {
  const times: number[] = [];
  for (let i = 0; i < 3; i++) {
    const start = performance.now();
    spawnSync(process.execPath, ['-e', '0']);
    times.push(performance.now() - start);
  }
  return timeStats(times).medianMs;
}

/** The interleaved whole-job comparison, the agreement check and what each side does that the other does not. */
function printPeer(peer: { rounds: PeerRound[]; summary: Record<string, number>; agreement: Agreement }, config: BenchConfig, loadMs: number): void {
  const s = peer.summary;
  const a = peer.agreement;
  const w = availableParallelism();
  const files = config.pythonFiles;
  const out = [
    `\nWhole job against the scipy peer: ${files} files, ${peer.rounds.length} interleaved round(s) (ours, peer / peer, ours), ours ${w} worker threads, peer ${w} processes; load: bare node -e 0 ${loadMs.toFixed(0)} ms`,
    `${''.padEnd(34)} ${'ours'.padStart(10)} ${'scipy'.padStart(10)} ${'scipy/ours'.padStart(11)}  note`,
    `${'CPU, user + sys, process tree'.padEnd(34)} ${`${s.oursCpuS.toFixed(1)} s`.padStart(10)} ${`${s.peerCpuS.toFixed(1)} s`.padStart(10)} ${`${s.cpuRatio.toFixed(1)}×`.padStart(11)}  target ≥ 20× (${s.cpuRatio >= 20 ? 'met' : 'missed'}); median of per-round ratios`,
    `${'wall'.padEnd(34)} ${formatMs(s.oursWallMs).padStart(10)} ${formatMs(s.peerWallMs).padStart(10)} ${`${s.wallRatio.toFixed(1)}×`.padStart(11)}  per file: ours ${formatMs(s.oursWallMs / files)}, scipy ${formatMs(s.peerWallMs / files)}`,
    `${'CPU per file'.padEnd(34)} ${formatMs((1000 * s.oursCpuS) / files).padStart(10)} ${formatMs((1000 * s.peerCpuS) / files).padStart(10)}`,
    `${'peak RSS'.padEnd(34)} ${`${s.oursRssMb.toFixed(0)} MB`.padStart(10)} ${`${s.peerLargestProcessRssMb.toFixed(0)} MB`.padStart(10)} ${''.padStart(11)}  ours: one process; scipy: largest process (parent ${s.peerSelfRssMb.toFixed(0)} MB + ${w} × worker ${s.peerWorkerRssMb.toFixed(0)} MB = ${(s.peerSelfRssMb + w * s.peerWorkerRssMb).toFixed(0)} MB at most in all)`,
    '',
    `Agreement on the same ${a.files} files (last round's outputs): ours ${a.oursPeaks} peaks, scipy ${a.peerPeaks}; ${a.paired} of ours have a scipy peak within ½ FWHM (${a.clearPaired} clear: ≥ 20σ, not overlapped)`,
    `  clear peaks within |Δ2θ| ≤ ${a.tolerances.twoThetaDeg}° and |ΔFWHM|/FWHM ≤ ${100 * a.tolerances.fwhmRel} %: ${a.clearWithin}/${a.clearPaired} (${((100 * a.clearWithin) / Math.max(1, a.clearPaired)).toFixed(1)} %, tolerance ≥ ${100 * a.tolerances.clearPeakShare} %); largest differences: |Δ2θ| ${a.maxTwoThetaDiffDeg.toFixed(4)}°, |ΔFWHM|/FWHM ${(100 * a.maxFwhmRelDiff).toFixed(1)} %`,
    `  Scherrer size max rel. diff ${a.maxScherrerRelDiff === null ? '—' : `${(100 * a.maxScherrerRelDiff).toFixed(1)} %`} (tolerance ${100 * a.tolerances.scherrerRel} %); Williamson–Hall size ${a.maxWilliamsonHallRelDiff === null ? '—' : `${(100 * a.maxWilliamsonHallRelDiff).toFixed(1)} %`} (tolerance ${100 * a.tolerances.williamsonHallRel} %); same present phases in ${a.samePhaseSets}/${a.files}; sizes compared where both sized the same phase: ${a.sameSizedPhase}/${a.files}`,
    `  ${a.pass ? 'within tolerances' : 'NOT within tolerances'}`,
    '',
    'What ours does that the scipy peer does not:',
    ...ONLY_OURS.map((line) => `  - ${line}`),
    'What the scipy peer does that ours does not:',
    ...ONLY_PEER.map((line) => `  - ${line}`),
  ];
  process.stdout.write(out.join('\n') + '\n');
}

/** Linux's CPU pressure over the last minute (share of time some task waited for a CPU), or null. */
function cpuPressureAvg60(): number | null {
  try {
    const match = /some avg10=[\d.]+ avg60=([\d.]+)/.exec(readFileSync('/proc/pressure/cpu', 'utf8'));
    return match ? Number(match[1]) : null;
  } catch {
    return null;
  }
}

async function main(): Promise<void> {
  const config = parseArgs(process.argv.slice(2));
  const machine = { cpus: cpus().length, cpuModel: cpus()[0]?.model ?? 'unknown', memoryGb: totalmem() / 2 ** 30, node: process.version };
  log(`Crystallog benchmark (${config.quick ? 'quick' : 'full'}): ${machine.cpus} cores (${machine.cpuModel}), Node ${machine.node}`);
  const probeStartMs = machineSpeedProbeMs();
  const pressureStart = cpuPressureAvg60();
  log(`machine speed probe (a fixed loop, not our code): ${probeStartMs.toFixed(1)} ms${pressureStart !== null ? `; CPU pressure ${pressureStart} % over the last minute` : ''}`);
  const loadMs = bareNodeMs();
  log(`load: a bare \`node -e 0\` takes ${loadMs.toFixed(0)} ms (median of 3)`);
  log(`inputs: ${config.patterns} simulated patterns (cached in the temp folder; first run simulates them)`);
  const inputs = prepareInputs(config.patterns, log);

  const steps = measureSteps(inputs, config);
  printRows('Our steps (single thread, per file unless said)', steps.rows);
  const whole = measureWholeJob(inputs, config);
  printRows('Whole job', [whole.row]);

  const missing = config.python ? pythonAvailable() : 'not requested (--no-python)';
  let python: PythonResult | null = null;
  if (missing) log(`scipy column skipped: ${missing}`);
  else python = runPython(inputs, config);

  let peer: { rounds: PeerRound[]; summary: Record<string, number>; agreement: Agreement } | null = null;
  if (python) {
    const files = inputs.patternFiles.slice(0, config.pythonFiles);
    log(`whole job against the scipy peer: ${files.length} files, ${config.peerRounds} interleaved round(s), ours ${availableParallelism()} workers, peer ${availableParallelism()} processes`);
    const run = interleavedRounds({
      python: PYTHON, script: PYTHON_SCRIPT, cli: CLI, db: whole.db, flatLibrary: inputs.smallLibraryFlatJson,
      files, workers: availableParallelism(), rounds: config.peerRounds, dir: inputs.dir, log,
    });
    peer = { rounds: run.rounds, summary: summariseRounds(run.rounds), agreement: agreement(run.oursOut, run.peerOut) };
  }

  const theirs = (key: string): number | null => (python?.steps[key] ? timeStats(python.steps[key]).medianMs : null);
  const ours = (key: string): number => timeStats(steps.perFile[key]).medianMs;
  const comparisons: Comparison[] = [
    compare('read (per file)', ours('read'), theirs('read')),
    compare('peaks (per file)', ours('peaks'), theirs('peaks'), 'both: smooth, SNIP, Kα2-stripped search, grouped pseudo-Voigt + Kα2 fits, pruning'),
    compare('match 1k (per file)', ours('match1k'), theirs('match1k'), 'scipy: screen + zero/displacement refinement of 8 candidates, phases in turn'),
    compare(`match ${config.largeLibrary / 1000}k (per file)`, ours('match100k'), theirs('match100k')),
    compare('size (per file)', ours('size'), theirs('size'), 'both: Scherrer + Williamson–Hall (Voigt parts); ours also Halder–Wagner'),
    compare('one file end to end, one thread', ours('analyze'), theirs('read') !== null ? ['read', 'peaks', 'match1k', 'size'].reduce((s, k) => s + (theirs(k) ?? 0), 0) : null),
  ];
  const pythonNote = python ? `${PYTHON}: Python ${python.versions.python}, numpy ${python.versions.numpy}, scipy ${python.versions.scipy}` : `not run: ${missing}`;
  printComparisons(comparisons, pythonNote);
  if (python?.fitWorkPerFile) {
    const w = python.fitWorkPerFile;
    process.stdout.write(`scipy fit work per file: ${w.lmFits.toFixed(0)} group fits (${w.boundedRefits.toFixed(1)} refitted bounded), ${w.residualCalls.toFixed(0)} residual and ${w.jacobianCalls.toFixed(0)} Jacobian evaluations\n`);
  }
  if (peer) printPeer(peer, config, loadMs);

  const areas = config.modules ? await runAreaModules() : {};
  const probeEndMs = machineSpeedProbeMs();
  log(`\nmachine speed probe at the end: ${probeEndMs.toFixed(1)} ms (start ${probeStartMs.toFixed(1)} ms); compare runs whose probes agree`);
  const summary = {
    kind: 'crystallog benchmark',
    date: new Date().toISOString(),
    mode: config.quick ? 'quick' : 'full',
    machine: { ...machine, speedProbeMs: { start: probeStartMs, end: probeEndMs }, cpuPressureAvg60AtStart: pressureStart },
    config,
    inputs: { dir: inputs.dir, patterns: config.patterns, points: 10_001, simulated: true },
    steps: steps.rows,
    wholeJob: { ...whole.row, runsMs: whole.runs, peakRssMb: whole.peakRssMb, files: config.patterns },
    python: python ? { versions: python.versions, steps: python.steps, peaksFound: python.peaksFound, fitWorkPerFile: python.fitWorkPerFile ?? null } : { skipped: missing },
    peer: peer ?? null,
    loadNodeStartMs: loadMs,
    comparisons,
    areas,
  };
  mkdirSync(dirname(RESULTS_FILE), { recursive: true });
  writeFileSync(RESULTS_FILE, JSON.stringify(summary, null, 2) + '\n');
  log(`\nwrote ${RESULTS_FILE}`);
}

main().catch((err: unknown) => {
  process.stderr.write(`bench: ${err instanceof Error ? (err.stack ?? err.message) : String(err)}\n`);
  process.exitCode = 1;
});
