/**
 * Speed at library scale (issue 15), measured as whole `crystallog` commands in child processes, CPU
 * time (user + system, GNU time) and peak RSS rather than wall time, because the machine is shared:
 * importing a 100 000-reference JSON file, `match` of one file against it, `analyze` set-up with it,
 * and single-file `peaks` start-up above a bare `node -e 0`. The commands run interleaved, round by
 * round, so a drift of the machine's speed touches every figure alike.
 * Sizes: CRYSTALLOG_BENCH_SCALE_REFS (default 100 000), CRYSTALLOG_BENCH_SCALE_ROUNDS (default 3);
 * CRYSTALLOG_BENCH_SCALE_ONLY=start-up runs the start-up rows alone (no library):
 *   CRYSTALLOG_BENCH_SCALE_ONLY=start-up node dist/bench/scale.js
 * Inputs are simulated (seeded synthetic references, one simulated two-phase pattern), and for start-up
 * also one measured pattern (test/fixtures/measured, 16 509 points).
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { formatReferenceJson } from '../src/core/library/json-format.js';
import { patternToXyText, simulatePattern } from '../src/core/crystal/simulate.js';
import { BENCH_WAVELENGTH, cacheDir, syntheticLibrary } from './inputs.js';
import { timeStats, type BenchRow } from './types.js';

const CLI = join(dirname(fileURLToPath(import.meta.url)), '..', '..', 'bin', 'crystallog.js');
/** The bundled `peaks` command module (its file named in the build's modules.json): importing it alone is the command's module load, without its first call. */
const PEAKS_MODULE = ((): string => {
  const bundle = join(dirname(fileURLToPath(import.meta.url)), '..', 'cli-bundle');
  const inputs = JSON.parse(readFileSync(join(bundle, 'modules.json'), 'utf8')) as Record<string, string[]>;
  const file = Object.keys(inputs).find((f) => inputs[f]!.includes('dist/src/cli/commands/peaks.js'));
  if (!file) throw new Error(`${join(bundle, 'modules.json')} names no bundle file with the peaks command`);
  return pathToFileURL(join(bundle, file)).href;
})();
const REFS = Number(process.env.CRYSTALLOG_BENCH_SCALE_REFS ?? 100_000);
const ROUNDS = Number(process.env.CRYSTALLOG_BENCH_SCALE_ROUNDS ?? 3);
/** Two batch sizes, both small enough for one worker: their difference gives the per-file cost, the rest is set-up. */
const BATCH_SMALL = 4;
const BATCH_LARGE = 12;
/** Start-up runs are short: at least this many interleaved (bare, load, peaks) triples, spread over the rounds. */
const START_UP_RUNS = 9;
/** Only the start-up rows: peaks on the simulated and on a measured pattern, with bare node and module load. */
const ONLY_START_UP = process.env.CRYSTALLOG_BENCH_SCALE_ONLY === 'start-up';
const MEASURED_PATTERN = join(dirname(fileURLToPath(import.meta.url)), '..', '..', 'test', 'fixtures', 'measured', 'corundum-1976b-cu-ka12.xy');
/** Start-up target (issue 15): module load + first call of a one-file `peaks`, CPU above a bare `node -e 0`. */
const START_UP_TARGET_MS = 250;

interface Usage {
  cpuMs: number;
  rssMb: number;
}

/** Run a command under GNU time: its CPU time (user + system, all threads) and peak RSS. */
function measured(args: string[]): Usage {
  const child = spawnSync('/usr/bin/time', ['-f', 'usage %U %S %M', process.execPath, ...args], { stdio: ['ignore', 'ignore', 'pipe'], maxBuffer: 2 ** 28 });
  const usage = /usage ([\d.]+) ([\d.]+) (\d+)/.exec(child.stderr.toString());
  if (child.status !== 0 || !usage) throw new Error(`${args.join(' ')} failed (exit ${child.status}): ${child.stderr.toString().slice(-400)}`);
  return { cpuMs: 1000 * (Number(usage[1]) + Number(usage[2])), rssMb: Number(usage[3]) / 1024 };
}

function median(values: number[]): number {
  return timeStats(values).medianMs;
}

function verdict(value: number, limit: number): string {
  return value <= limit ? 'met' : 'NOT met';
}

function writePattern(file: string, lines: ReturnType<typeof syntheticLibrary>): void {
  const pattern = simulatePattern({
    phases: [
      { lines: lines[137]!.lines, scale: 1, sizeNm: 60 },
      { lines: lines[211]!.lines, scale: 0.1, sizeNm: 60 },
    ],
    wavelength: BENCH_WAVELENGTH,
    twoThetaMinDeg: 5,
    twoThetaMaxDeg: 85,
    stepDeg: 0.01,
    zeroShiftDeg: 0.03,
    peakCounts: 10_000,
    noiseSeed: 9100,
    name: 'bench scale pattern (simulated)',
  });
  writeFileSync(file, patternToXyText(pattern));
}

/**
 * Start-up of a one-file `peaks`: bare `node -e 0`, the command's modules alone and the whole command on
 * each pattern, interleaved run by run (a drift of the machine touches all alike); figures are medians
 * of the children's CPU (user + system) and of the per-run differences to the bare run beside them.
 */
function startUpRows(patterns: ReadonlyArray<{ label: string; file: string }>, rounds: number): BenchRow[] {
  const bare: Usage[] = [];
  const load: Usage[] = [];
  const peaks = patterns.map(() => [] as Usage[]);
  for (let run = 0; run < Math.max(START_UP_RUNS, rounds); run++) {
    bare.push(measured(['-e', '0']));
    load.push(measured(['--input-type=module', '-e', `await import(${JSON.stringify(PEAKS_MODULE)})`]));
    patterns.forEach((p, k) => peaks[k]!.push(measured([CLI, 'peaks', p.file, '--json'])));
  }
  const cpu = (u: Usage[]) => u.map((x) => x.cpuMs);
  const bareMs = median(cpu(bare));
  const moduleLoad = median(cpu(load)) - bareMs;
  return patterns.map((p, k) => {
    const aboveBare = cpu(peaks[k]!).map((c, i) => c - bare[i]!.cpuMs);
    const startUp = median(aboveBare);
    return {
      name: `scale: single-file peaks (${p.label}), module load + first call above bare node -e 0 (CPU)`,
      ...timeStats(aboveBare),
      target: `≤ ${START_UP_TARGET_MS} ms CPU`,
      note:
        `${startUp.toFixed(0)} ms against the target ${START_UP_TARGET_MS} ms: ${verdict(startUp, START_UP_TARGET_MS)}; bare node ${bareMs.toFixed(0)} ms (the machine's load), ` +
        `peaks ${median(cpu(peaks[k]!)).toFixed(0)} ms (medians of ${bare.length} interleaved runs); the command's modules ${moduleLoad.toFixed(0)} ms (importing them alone), ` +
        `the rest (CLI frame, reading, the cold first call of the analysis) ${(startUp - moduleLoad).toFixed(0)} ms`,
    };
  });
}

export async function run(): Promise<BenchRow[]> {
  if (!existsSync('/usr/bin/time')) return [{ name: 'scale: skipped (needs GNU time: apt-get install time)', medianMs: 0, minMs: 0, maxMs: 0 }];
  const dir = join(cacheDir(), 'scale');
  mkdirSync(dir, { recursive: true });
  const pattern = join(dir, 'pattern.xy');
  const startUpPatterns = [
    { label: 'simulated, 8 001 points', file: pattern },
    { label: 'measured corundum, 16 509 points', file: MEASURED_PATTERN },
  ];
  if (ONLY_START_UP) {
    // The pattern uses two of the first 1 000 references, which do not depend on the library's size.
    writePattern(pattern, syntheticLibrary(1000));
    return startUpRows(startUpPatterns, ROUNDS);
  }
  const library = syntheticLibrary(REFS);
  const json = join(dir, `library-${REFS}.json`);
  if (!existsSync(json)) writeFileSync(json, formatReferenceJson(library));
  writePattern(pattern, library);
  const list = (n: number) => {
    const file = join(dir, `files-${n}.txt`);
    writeFileSync(file, Array.from({ length: n }, () => pattern).join('\n') + '\n');
    return file;
  };
  const small = list(BATCH_SMALL);
  const large = list(BATCH_LARGE);
  const db = join(dir, `library-${REFS}.sqlite`);
  for (const f of [db, `${db}-wal`, `${db}-shm`]) rmSync(f, { force: true });

  const imported = measured([CLI, 'library', 'import', json, '--library', db]);
  const runs = { match: [] as Usage[], small: [] as Usage[], large: [] as Usage[] };
  for (let round = 0; round < ROUNDS; round++) {
    runs.match.push(measured([CLI, 'match', pattern, '--library', db, '--json']));
    runs.small.push(measured([CLI, 'analyze', '--files-from', small, '--library', db, '--json']));
    runs.large.push(measured([CLI, 'analyze', '--files-from', large, '--library', db, '--json']));
  }
  const cpu = (u: Usage[]) => u.map((x) => x.cpuMs);
  const rss = (u: Usage[]) => Math.max(...u.map((x) => x.rssMb));
  const refs = REFS.toLocaleString('en');
  const full = REFS === 100_000;
  const matchCpu = median(cpu(runs.match));
  const matchRss = rss(runs.match);
  const perFile = (median(cpu(runs.large)) - median(cpu(runs.small))) / (BATCH_LARGE - BATCH_SMALL);
  const setup = median(cpu(runs.small)) - BATCH_SMALL * perFile;
  const analyzeRss = rss([...runs.small, ...runs.large]);
  const row = (name: string, values: number[], target: string, note: string): BenchRow => ({ name, ...timeStats(values), target, note });
  return [
    row(`scale: library import of ${refs} references (CLI, CPU)`, [imported.cpuMs], full ? '≤ 6 000 ms CPU, ≤ 500 MB' : '(100 000 in full run)',
      `peak RSS ${imported.rssMb.toFixed(0)} MB; CPU ${verdict(imported.cpuMs, 6000)}, memory ${verdict(imported.rssMb, 500)}`),
    row(`scale: match one file vs ${refs} references, whole command (CPU)`, cpu(runs.match), full ? '≤ 1 500 ms CPU, ≤ 300 MB' : '(100 000 in full run)',
      `peak RSS ${matchRss.toFixed(0)} MB; CPU ${verdict(matchCpu, 1500)}, memory ${verdict(matchRss, 300)}; ratio to target ${(matchCpu / 1500).toFixed(2)}`),
    row(`scale: analyze set-up with ${refs} references (CPU; from ${BATCH_SMALL}- and ${BATCH_LARGE}-file runs, one worker)`, [setup], full ? '≤ 3 000 ms CPU, peak RSS ≤ 600 MB' : '(100 000 in full run)',
      `per file ${perFile.toFixed(0)} ms CPU; peak RSS ${analyzeRss.toFixed(0)} MB (${BATCH_LARGE} files, not 1 000); set-up ${verdict(setup, 3000)}, memory ${verdict(analyzeRss, 600)}`),
    ...startUpRows(startUpPatterns, ROUNDS),
  ];
}

if (import.meta.url === `file://${process.argv[1]}`) {
  for (const r of await run()) console.log(`${r.name}: median ${r.medianMs.toFixed(0)} ms; target ${r.target}; ${r.note}`);
}
