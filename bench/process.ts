/**
 * Benchmark of the peak search: findPeaks on a simulated 10 001-point pattern (10–110° 2θ, Cu Kα1/Kα2)
 * with 60 peaks, median after warm-up, against the same steps done with scipy
 * (bench/python/peaks_scipy.py on the same file). Target: under 30 ms, and at least 5 times faster.
 * Also findPeaks on the whole-job benchmark's patterns (bench/inputs.ts: 40–80 peaks, FWHM 0.1–0.5°),
 * each timed once after a warm-up pass; wall and CPU time (the machine may be shared). Each row also
 * prints the fit's counted work (model evaluations with their Jacobian, profile points, LM steps), which,
 * unlike the time, does not drift with the machine's load.
 */
import { execFileSync } from 'node:child_process';
import { existsSync, mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { patternToXyText, simulatePattern } from '../src/core/crystal/simulate.js';
import { seededUniform } from '../src/core/numeric/random.js';
import { dFromTwoTheta } from '../src/core/model/units.js';
import { anodeWavelength } from '../src/core/model/wavelengths.js';
import { readPatternFile } from '../src/node/files.js';
import { findPeaks } from '../src/core/process/peaks.js';
import { findPython } from './peer.js';
import { fitWork, resetFitWork } from '../src/core/process/fit.js';
import { BENCH_WAVELENGTH, prepareInputs } from './inputs.js';
import { timeStats, type BenchRow } from './types.js';

const PEAK_COUNT = 60;
const WARM_UP_RUNS = 5;
const TIMED_RUNS = 21;
const TARGET_MS = 30;
const TARGET_RATIO = 5;
/** How many of the whole-job benchmark's patterns to time (the first ones; cached on disk by bench/inputs.ts). */
const JOB_PATTERNS = 40;

function benchPattern() {
  const uniform = seededUniform(6060);
  const lines = [];
  for (let k = 0; k < PEAK_COUNT; k++) {
    // Spread over 12–108° so that neighbours are mostly resolved, as in a real multi-phase pattern.
    const twoTheta = 12 + (96 * (k + uniform())) / PEAK_COUNT;
    lines.push({ d: dFromTwoTheta(twoTheta, 1.5405929), intensity: 5 + 95 * uniform() ** 2 });
  }
  return simulatePattern({
    phases: [{ lines, scale: 1, sizeNm: 80 }],
    wavelength: anodeWavelength('Cu'),
    twoThetaMinDeg: 10,
    twoThetaMaxDeg: 110,
    stepDeg: 0.01,
    peakCounts: 20000,
    noiseSeed: 6061,
    name: 'simulated 60-peak pattern',
  });
}

export async function run(): Promise<BenchRow[]> {
  const pattern = benchPattern();
  const wavelength = anodeWavelength('Cu');
  let found = 0;
  for (let r = 0; r < WARM_UP_RUNS; r++) found = findPeaks(pattern, { wavelength }).peaks.length;
  resetFitWork();
  findPeaks(pattern, { wavelength });
  const work = workNote();
  const times: number[] = [];
  const cpuTimes: number[] = [];
  for (let r = 0; r < TIMED_RUNS; r++) {
    const cpu0 = process.cpuUsage();
    const t0 = performance.now();
    findPeaks(pattern, { wavelength });
    times.push(performance.now() - t0);
    const cpu = process.cpuUsage(cpu0);
    cpuTimes.push((cpu.user + cpu.system) / 1000);
  }
  const ours = timeStats(times);
  const cpuMedianMs = timeStats(cpuTimes).medianMs;
  const rows: BenchRow[] = [
    {
      name: `process: findPeaks, ${pattern.x.length} points, ${PEAK_COUNT} Kα doublets`,
      ...ours,
      target: `< ${TARGET_MS} ms`,
      note: `${found} peaks found of ${PEAK_COUNT} simulated; CPU time median ${cpuMedianMs.toFixed(1)} ms (wall time counts waiting on a busy machine); fit work per search: ${work}`,
    },
  ];

  rows.push(jobPatternsRow());

  const dir = mkdtempSync(join(tmpdir(), 'crystallog-bench-process-'));
  const file = join(dir, 'pattern-60-peaks.xy');
  writeFileSync(file, patternToXyText(pattern, ['simulated by Crystallog for the benchmark']));
  // Beside this module when run from source, or two levels up when run from dist/bench.
  const here = dirname(fileURLToPath(import.meta.url));
  const scriptPath = [join(here, 'python', 'peaks_scipy.py'), join(here, '..', '..', 'bench', 'python', 'peaks_scipy.py')].find((p) => existsSync(p)) ?? 'peaks_scipy.py';
  try {
    const found = findPython();
    if ('missing' in found) throw new Error(found.missing);
    const output = execFileSync(found.python, [scriptPath, file, String(wavelength.lambda1), String(wavelength.lambda2), String(wavelength.ratio)], {
      encoding: 'utf8',
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    const python = JSON.parse(output.trim().split('\n').pop() as string) as { medianMs: number; minMs: number; maxMs: number; peaks: number; scipy: string };
    rows.push({
      name: 'process: same steps in scipy (whole_job_scipy.py: Kα2-stripped find_peaks, grouped least_squares fits, analytic Jacobian)',
      medianMs: python.medianMs,
      minMs: python.minMs,
      maxMs: python.maxMs,
      note: `scipy ${python.scipy}, ${python.peaks} peaks; ours is ${(python.medianMs / ours.medianMs).toFixed(1)}× faster (target ≥ ${TARGET_RATIO}×)`,
    });
  } catch (err) {
    const message = err instanceof Error ? err.message : String(err);
    const hint = message.split('\n')[0];
    rows.push({ name: 'process: scipy comparison skipped', medianMs: Number.NaN, minMs: Number.NaN, maxMs: Number.NaN, note: hint });
  }
  return rows;
}

/** findPeaks on the whole-job benchmark's simulated patterns: one timed run each after a warm-up pass. */
function jobPatternsRow(): BenchRow {
  const inputs = prepareInputs(JOB_PATTERNS);
  const patterns = inputs.patternFiles.map((file) => readPatternFile(file));
  for (const pattern of patterns.slice(0, WARM_UP_RUNS)) findPeaks(pattern, { wavelength: BENCH_WAVELENGTH });
  const times: number[] = [];
  const cpuTimes: number[] = [];
  let peaks = 0;
  resetFitWork();
  for (const pattern of patterns) {
    const cpu0 = process.cpuUsage();
    const t0 = performance.now();
    peaks += findPeaks(pattern, { wavelength: BENCH_WAVELENGTH }).peaks.length;
    times.push(performance.now() - t0);
    const cpu = process.cpuUsage(cpu0);
    cpuTimes.push((cpu.user + cpu.system) / 1000);
  }
  const cpu = timeStats(cpuTimes);
  const work = workNote();
  return {
    name: `process: findPeaks on ${patterns.length} whole-job benchmark patterns (bench/inputs.ts, 10 001 points, 40–80 peaks)`,
    ...timeStats(times),
    target: `< ${TARGET_MS} ms median`,
    note: `${(peaks / patterns.length).toFixed(1)} peaks per pattern; CPU time median ${cpu.medianMs.toFixed(1)} ms, min ${cpu.minMs.toFixed(1)}, max ${cpu.maxMs.toFixed(1)} ms; fit work, all ${patterns.length}: ${work}`,
  };
}

/** The fit's counted work since the last resetFitWork, for a row's note. */
function workNote(): string {
  return `${fitWork.evaluations} model + Jacobian evaluations, ${fitWork.profilePoints} profile points, ${fitWork.lmSteps} LM steps`;
}
