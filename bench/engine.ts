/**
 * Per-file CPU of the analysis engine on the whole-job benchmark's patterns (bench/inputs.ts: 10 001 points,
 * 40–80 peaks, Cu Kα1/Kα2), single thread, after a warm-up pass: analyzePattern (search, match against the
 * 1 000-reference library, sizes), findPeaks alone, and the profile fit alone: the search's first
 * fitPeakGroups call with its own inputs (searchFitInputs; a search that widens its background after the fit
 * fits once more). CPU time, since the machine may be shared; the fit's counted work (fitWork) beside it
 * does not drift with the load.
 */
import { analyzePattern, createAnalysisContext } from '../src/core/analysis/analyse.js';
import { fitPeakGroups, fitWork, resetFitWork } from '../src/core/process/fit.js';
import { findPeaks, searchFitInputs } from '../src/core/process/peaks.js';
import { readPatternFile } from '../src/node/files.js';
import { asStored, BENCH_WAVELENGTH, prepareInputs } from './inputs.js';
import { timeStats, type BenchRow } from './types.js';

const FILES = 30;
const ROUNDS = 3;
const TARGET_MS = 10;

function cpuMs(): number {
  const c = process.cpuUsage();
  return (c.user + c.system) / 1000;
}

/** Per-file CPU of `work` on every pattern, ROUNDS times after a warm-up pass; one median per file over the rounds. */
function perFileCpu<T>(items: T[], work: (item: T) => unknown): number[] {
  for (const item of items) work(item);
  const runs = items.map(() => [] as number[]);
  for (let r = 0; r < ROUNDS; r++) {
    items.forEach((item, i) => {
      const c0 = cpuMs();
      work(item);
      runs[i].push(cpuMs() - c0);
    });
  }
  return runs.map((times) => timeStats(times).medianMs);
}

function summary(name: string, perFile: number[], note: string): BenchRow {
  const mean = perFile.reduce((s, v) => s + v, 0) / perFile.length;
  return { name, ...timeStats(perFile), target: `≤ ${TARGET_MS} ms per file`, note: `mean ${mean.toFixed(1)} ms CPU per file over ${perFile.length} files (min/max are the fastest and slowest file); ${note}` };
}

function workNote(files: number): string {
  return `fit work per file: ${(fitWork.evaluations / files).toFixed(0)} model + Jacobian evaluations, ${(fitWork.profilePoints / files).toFixed(0)} profile points, ${(fitWork.lmSteps / files).toFixed(0)} LM steps`;
}

export async function run(): Promise<BenchRow[]> {
  const inputs = prepareInputs(FILES);
  const patterns = inputs.patternFiles.map((file) => readPatternFile(file));
  const context = createAnalysisContext(asStored(inputs.smallLibrary), null, {});
  const rows: BenchRow[] = [];

  rows.push(summary(`engine: analyzePattern (search + match 1k + sizes), ${patterns.length} benchmark patterns`, perFileCpu(patterns, (p) => analyzePattern(p, context)), 'median over files of each file’s median over rounds'));

  resetFitWork();
  for (const p of patterns) findPeaks(p, { wavelength: BENCH_WAVELENGTH });
  const searchWork = workNote(patterns.length);
  rows.push(summary('engine: findPeaks (smoothing, SNIP, Kα2 stripping, candidates, profile fit)', perFileCpu(patterns, (p) => findPeaks(p, { wavelength: BENCH_WAVELENGTH })), searchWork));

  const cases = patterns.map((pattern) => ({ pattern, inputs: searchFitInputs(pattern, { wavelength: BENCH_WAVELENGTH }) }));
  const fitAlone = ({ pattern, inputs }: (typeof cases)[number]) => fitPeakGroups(pattern, inputs.level.snip, inputs.guesses, inputs.fitOptions, inputs.acceptance);
  resetFitWork();
  for (const c of cases) fitAlone(c);
  const fitNote = workNote(cases.length);
  rows.push(summary('engine: profile fit alone (the search’s first fitPeakGroups call)', perFileCpu(cases, fitAlone), fitNote));
  return rows;
}
