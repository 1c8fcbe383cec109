import type { Command } from 'commander';
import { analyzeFiles } from '../../node/batch.js';
import { analyzePattern, createAnalysisContext, type AnalysisResult } from '../../core/analysis/analyse.js';
import { InputError } from '../../core/errors.js';
import { readPatternFile } from '../../node/files.js';
import { seriesSamplesFromAnalyses } from '../../core/analysis/series-from-analysis.js';
import { analyzeSeries, type SeriesResult } from '../../core/series/series.js';
import { loadAllReferences } from '../common/io.js';
import { numberOption, runCommand } from '../common/run-command.js';
import { settingsFromFlags } from '../common/settings-flags.js';
import { loadInstrumentProfile } from './instrument.js';

interface SeriesCommandOptions {
  labels?: string;
  hours?: string;
  temperatures?: string;
  library: string;
  target: string;
  instrument?: string;
  k?: string;
  breadth?: string;
  correction?: string;
  wavelength?: string;
  tolerance?: string;
  alpha?: string;
  replicates?: string;
  spread?: string;
  json?: boolean;
}

export interface SeriesCommandResult extends SeriesResult {
  files: string[];
  target: string;
}

/** `crystallog series FILE... [--labels L1,L2,...] --library DB --target NAME [--instrument P] --json` */
export function registerSeries(program: Command): void {
  program
    .command('series')
    .description('Compare samples of one product (workup variants, exposure times or temperatures): verdicts, low-angle extra peaks, sizes, and whether the sizes differ.')
    .argument('<files...>', 'pattern files, one per sample')
    .option('--labels <list>', 'comma-separated labels, one per file (e.g. "as made,ground,washed" or "0 h,1 h,4 h")')
    .option('--hours <list>', 'comma-separated exposure times in hours, one per file (default: read from time labels)')
    .option('--temperatures <list>', 'comma-separated temperatures in °C (annealing, drying...), one per file (default: read from labels such as "150 °C")')
    .requiredOption('--library <db>', 'reference library file')
    .requiredOption('--target <name>', 'the expected phase')
    .option('--instrument <profile>', 'instrument profile JSON from "crystallog instrument" (or its name in the library)')
    .option('--k <k>', 'Scherrer K: a number or a preset name (default 0.9)')
    .option('--breadth <kind>', 'fwhm or integral (default fwhm)')
    .option('--correction <kind>', 'voigt, lorentzian or gaussian (default voigt)')
    .option('--wavelength <w>', 'Cu, Co, Fe, Cr, Mo, Ag or a number in Å (default: from each file, else Cu)')
    .option('--tolerance <deg>', 'line matching tolerance, degrees 2θ (default 0.1)')
    .option('--alpha <p>', 'significance level of the size comparisons (default 0.05)')
    .option('--replicates <list>', 'comma-separated replicate groups, one per file: files of one group are preparations of one variant (their spread measures reproducibility)')
    .option('--spread <percent>', 'size spread between preparations when no replicates are marked, % (default 2)')
    .option('--json', 'print the result as JSON')
    .action((files: string[], o: SeriesCommandOptions) => runCommand(Boolean(o.json), () => seriesCommand(files, o), seriesText));
}

function splitList(text: string | undefined): string[] | undefined {
  return text === undefined ? undefined : text.split(',').map((s) => s.trim());
}

/** A comma-separated list of numbers (a decimal comma is not possible inside it: "1,5" is two entries). */
function numberList(option: string, text: string | undefined, valid: (v: number) => boolean, what: string): number[] | undefined {
  return splitList(text)?.map((entry, i) => {
    const value = Number(entry);
    if (entry === '' || !Number.isFinite(value) || !valid(value)) throw new InputError(`option ${option}: entry ${i + 1} "${entry}" is not ${what}`);
    return value;
  });
}

/** From this many files on, the patterns are analysed on the worker-thread pool (below it, start-up costs more than it saves). */
const POOL_FROM_FILES = 6;

export async function seriesCommand(files: string[], o: SeriesCommandOptions): Promise<SeriesCommandResult> {
  const alpha = numberOption('--alpha', o.alpha, (v) => v > 0 && v < 0.5, 'give a significance level between 0 and 0.5, such as 0.05');
  const settings = settingsFromFlags(o);
  const labels = splitList(o.labels);
  const hours = numberList('--hours', o.hours, (v) => v >= 0, 'a time in hours');
  const temperatures = numberList('--temperatures', o.temperatures, (v) => v >= -273.15, 'a temperature in °C');
  const references = loadAllReferences(o.library);
  const instrument = o.instrument !== undefined ? loadInstrumentProfile(o.instrument, o.library) : null;
  const analyses = files.length >= POOL_FROM_FILES ? await analyzeOnPool(files, { references, instrument, settings }) : analyzeInTurn(files, createAnalysisContext(references, instrument, settings));
  const samples = seriesSamplesFromAnalyses(analyses, { ...(labels ? { labels } : {}), ...(hours ? { exposureHours: hours } : {}), ...(temperatures ? { temperaturesC: temperatures } : {}), target: o.target });
  const groups = splitList(o.replicates);
  if (groups && groups.length !== files.length) throw new InputError(`option --replicates: ${groups.length} groups for ${files.length} files; give one per file, in the same order`);
  groups?.forEach((g, i) => (samples[i]!.replicateGroup = g === '' ? null : g));
  const spread = numberOption('--spread', o.spread, (v) => v >= 0 && v <= 50, 'give the preparation spread in %, between 0 and 50, such as 2');
  const result = analyzeSeries(samples, { ...(alpha !== undefined ? { alpha } : {}), ...(spread !== undefined ? { preparationSpreadRelative: spread / 100 } : {}) });
  for (const w of result.warnings) process.stderr.write(`crystallog: warning: ${w}\n`);
  return { files, target: o.target, ...result };
}

function analyzeInTurn(files: readonly string[], context: ReturnType<typeof createAnalysisContext>): AnalysisResult[] {
  return files.map((file) => analyzePattern(readPatternFile(file), context));
}

/** One series is one set of settings: a file that cannot be read stops the series with its reason. */
async function analyzeOnPool(files: readonly string[], setup: Parameters<typeof analyzeFiles>[1]): Promise<AnalysisResult[]> {
  const outcomes = await analyzeFiles(files, setup);
  const failed = outcomes.find((outcome) => outcome.error !== null);
  if (failed) {
    if (failed.errorKind === 'input') throw new InputError(failed.error ?? `${failed.file}: unreadable file`);
    throw new Error(failed.error ?? `analysis of ${failed.file} failed`);
  }
  return outcomes.map((outcome) => JSON.parse(outcome.json as string) as AnalysisResult);
}

function seriesText(r: SeriesCommandResult): string {
  const out = [`series of ${r.rows.length} samples (${r.kind}), target ${r.target}; K = ${r.settings.k}, ${r.settings.breadth}, correction ${r.settings.correction}`];
  for (const row of r.rows) {
    const strain = row.williamsonHall?.strainDetected ? `ε ${row.williamsonHall.strain?.toExponential(1) ?? '—'}` : 'no strain detected';
    const wh = row.williamsonHall ? `W–H ${row.williamsonHall.sizeNm?.toPrecision(3) ?? '—'} nm, ${strain}` : 'W–H —';
    out.push(`  ${row.label}: ${row.verdict ?? '—'}; ${row.lowAnglePeaks.length} low-angle extra peak(s); Scherrer ${row.scherrer.statement}; ${wh}`);
  }
  out.push(`size comparisons (${r.comparison.test}):`);
  for (const p of r.comparison.pairs) out.push(`  ${p.a} vs ${p.b}: ${p.statement}`);
  if (r.comparison.trend) out.push(`  trend over the series: ${r.comparison.trend.statement}`);
  for (const g of r.growth) out.push(`growth of ${g.phase} (${g.basis}): ${g.analysis.statement}`);
  for (const w of r.warnings) out.push(`warning: ${w}`);
  for (const c of r.cautions) out.push(`note: ${c}`);
  return out.join('\n') + '\n';
}
