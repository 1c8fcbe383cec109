import type { Command } from 'commander';
import { existsSync, readFileSync } from 'node:fs';
import { analyzeFiles, defaultWorkerCount, type BatchFileOutcome } from '../../node/batch.js';
import type { AnalysisResult, AnalysisSettings } from '../../core/analysis/analyse.js';
import { InputError } from '../../core/errors.js';
import { parseInstrumentProfile, type InstrumentProfile } from '../../core/size/instrument.js';
import { quotedSize } from '../../core/size/sizes.js';
import { loadReferencesWithIndex } from '../common/io.js';
import { addMatchFlags, settingsFromFlags, TOLERANCE_HELP, type AnalysisFlags } from '../common/settings-flags.js';
import { BACKGROUND_OPTION_HELP, numberOption, runCommand } from '../common/run-command.js';

export interface AnalyzeCommandOptions extends AnalysisFlags {
  library: string;
  target?: string;
  instrument?: string;
  wavelength?: string;
  tolerance?: string;
  k?: string;
  breadth?: string;
  correction?: string;
  background?: string;
  workers?: string;
  filesFrom?: string;
  jsonl?: boolean;
  json?: boolean;
}

/** Where the command writes; the CLI passes the process streams, tests pass collectors. */
export interface AnalyzeIo {
  stdout: (text: string) => void;
  stderr: (text: string) => void;
  /** Draw a progress bar on stderr (only when stderr is a terminal). */
  progress: boolean;
  /** Override of the worker module (tests run from sources). */
  workerScript?: URL;
  /** Reads the --files-from list when it is "-" (standard input). */
  readStdin?: () => string;
}

/**
 * `crystallog analyze FILE... --library DB [--target NAME] [--instrument P] [--workers N] [--jsonl] [--json]`
 * Peaks, match and sizes for many files on a pool of worker threads.
 */
export function registerAnalyze(program: Command): void {
  const command = program
    .command('analyze')
    .description('Peaks, phase verdicts and crystallite sizes for many patterns at once (worker threads; results in input order).')
    .argument('[files...]', 'pattern files (xy text, CSV or pdCIF)')
    .requiredOption('--library <db>', 'reference library file')
    .option('--target <name>', 'the phase you expect')
    .option('--instrument <profile>', 'instrument profile JSON from "crystallog instrument" (corrects the peak breadths)')
    .option('--wavelength <w>', 'Cu, Co, Fe, Cr, Mo, Ag or a number in Å (default: from each file, else Cu)')
    .option('--tolerance <deg>', TOLERANCE_HELP)
    .option('--source <kind>', 'the beam: ni-filter (default), no-filter, monochromator or synchrotron (which Kβ and W Lα satellites to expect)')
    .option('--k <k>', 'Scherrer K, a number or preset (default 0.9)')
    .option('--breadth <kind>', 'fwhm or integral (default fwhm)')
    .option('--correction <kind>', 'voigt, lorentzian or gaussian (default voigt)')
    .option('--background <deg>', BACKGROUND_OPTION_HELP)
    .option('--workers <n>', `worker threads (default: one per 16 files, at most the number of cores, here ${defaultWorkerCount()})`)
    .option('--files-from <list>', 'read more file paths from this list, one per line ("-" for standard input)')
    .option('--jsonl', 'print one JSON line per file as each finishes (with its input index)')
    .option('--json', 'print one JSON document {files: [...]} in input order');
  addMatchFlags(command).action(async (files: string[], o: AnalyzeCommandOptions) => {
      const io: AnalyzeIo = {
        stdout: (text) => process.stdout.write(text),
        stderr: (text) => process.stderr.write(text),
        progress: Boolean(process.stderr.isTTY),
        readStdin: () => readFileSync(0, 'utf8'),
      };
      await runCommand(
        Boolean(o.json),
        async () => {
          const exitCode = await analyzeCommand(files, o, io);
          if (exitCode !== 0) process.exitCode = exitCode;
        },
        () => '',
      );
    });
}

/** Run the batch and write its output; returns the exit code: 0 all well, 2 a file was bad input, 1 an internal fault. */
export async function analyzeCommand(files: string[], o: AnalyzeCommandOptions, io: AnalyzeIo): Promise<number> {
  const allFiles = [...files, ...(o.filesFrom ? readFileList(o.filesFrom, io) : [])];
  if (allFiles.length === 0) throw new InputError('no pattern files given; name them after "analyze" or list them with --files-from');
  const settings = settingsFromOptions(o);
  const workers = numberOption('--workers', o.workers, (v) => Number.isInteger(v) && v >= 1 && v <= 256, 'give a whole number of worker threads, 1 or more');
  const { references, index } = loadReferencesWithIndex(o.library);
  const instrument = o.instrument ? loadInstrument(o.instrument) : null;

  const progress = io.progress ? progressBar(allFiles.length, io.stderr) : null;
  const streaming = Boolean(o.jsonl);
  // --json is written in input order as results arrive, so the results are never all held at once.
  const document = o.json && !streaming ? jsonDocumentWriter(io.stdout) : null;
  const outcomes = await analyzeFiles(allFiles, { references, index, instrument, settings }, {
    ...(workers !== undefined ? { workers } : {}),
    ...(io.workerScript ? { workerScript: io.workerScript } : {}),
    keepJson: false,
    onOutcome: (outcome) => {
      if (outcome.error !== null) io.stderr(`${progress ? '\r\x1b[K' : ''}crystallog: ${oneLine(outcome.error)}\n`);
      if (streaming) io.stdout(jsonLine(outcome));
      else if (document) document.add(outcome);
      else io.stdout(`${progress ? '\r\x1b[K' : ''}${textLine(outcome)}`);
      progress?.step(outcome.error !== null);
    },
  });
  progress?.finish();

  if (document) document.finish();
  else if (!streaming) io.stdout(`${outcomes.length} files analysed, ${outcomes.filter((o) => o.error !== null).length} failed\n`);
  return outcomes.some((r) => r.errorKind === 'internal') ? 1 : outcomes.some((r) => r.errorKind === 'input') ? 2 : 0;
}

function readFileList(list: string, io: AnalyzeIo): string[] {
  let text: string;
  if (list === '-') text = io.readStdin ? io.readStdin() : '';
  else if (!existsSync(list)) throw new InputError(`the file list ${list} does not exist`);
  else text = readFileSync(list, 'utf8');
  return text
    .split(/\r?\n/)
    .map((line) => line.trim())
    .filter((line) => line !== '' && !line.startsWith('#'));
}

function settingsFromOptions(o: AnalyzeCommandOptions): AnalysisSettings {
  return settingsFromFlags(o);
}

export function loadInstrument(path: string): InstrumentProfile {
  if (!existsSync(path)) throw new InputError(`instrument profile ${path} does not exist; make one with "crystallog instrument"`);
  return parseInstrumentProfile(readFileSync(path, 'utf8'), path);
}

/** One line of --jsonl: the input index first, then the result's fields (or the error). */
function jsonLine(outcome: BatchFileOutcome): string {
  if (outcome.json !== null) return `{"index":${outcome.index},${outcome.json.slice(1)}\n`;
  return JSON.stringify({ index: outcome.index, file: outcome.file, error: outcome.error }) + '\n';
}

/**
 * The --json document, one file's result per line, in input order: each result is written as soon as
 * every earlier file's is, and only the results waiting for an earlier one are held.
 */
function jsonDocumentWriter(write: (text: string) => void): { add: (outcome: BatchFileOutcome) => void; finish: () => void } {
  const waiting = new Map<number, string>();
  let nextIndex = 0;
  return {
    add: (outcome) => {
      waiting.set(outcome.index, outcome.json ?? JSON.stringify({ file: outcome.file, error: outcome.error }));
      let text = '';
      for (let item = waiting.get(nextIndex); item !== undefined; item = waiting.get(nextIndex)) {
        waiting.delete(nextIndex);
        text += (nextIndex === 0 ? '{"files": [\n' : ',\n') + item;
        nextIndex++;
      }
      if (text !== '') write(text);
    },
    finish: () => write('\n]}\n'),
  };
}

/** One readable line per file, written as it arrives (results are not held for a summary). */
function textLine(o: BatchFileOutcome): string {
  if (o.json === null) return `${o.file}: ERROR ${oneLine(o.error ?? '')}\n`;
  const r = JSON.parse(o.json) as AnalysisResult;
  const best = r.match.phases.find((p) => p.name.toLowerCase() === r.settings.target?.toLowerCase()) ?? r.match.phases[0];
  const phase = best ? `${best.name} ${best.verdict} (score ${best.score.toFixed(2)})` : 'no phase';
  const lowAngle = r.match.unexplained.filter((u) => u.lowAngle).length;
  const quoted = quotedSize(r.size);
  const size = quoted === null ? 'no size' : `${quoted.method === 'scherrer' ? 'Scherrer' : 'group fit'} ${quoted.sizeNm.toFixed(1)}${quoted.sizeSigmaNm !== null ? ` ± ${quoted.sizeSigmaNm.toFixed(1)}` : ''} nm`;
  return `${r.file}: ${r.peaks.length} peaks; ${phase}; ${r.match.unexplained.length} unexplained (${lowAngle} low-angle); ${size}\n`;
}

function progressBar(total: number, write: (text: string) => void): { step: (failed: boolean) => void; finish: () => void } {
  const width = 30;
  const started = Date.now();
  let done = 0;
  let failed = 0;
  let drawnAt = 0;
  const draw = (): void => {
    const filled = Math.round((width * done) / total);
    const seconds = ((Date.now() - started) / 1000).toFixed(1);
    write(`\r\x1b[K[${'#'.repeat(filled)}${'.'.repeat(width - filled)}] ${done}/${total} files${failed ? `, ${failed} failed` : ''}, ${seconds} s`);
  };
  return {
    step: (isFailure) => {
      done++;
      if (isFailure) failed++;
      const now = Date.now();
      if (now - drawnAt > 100 || done === total) {
        drawnAt = now;
        draw();
      }
    },
    finish: () => write('\r\x1b[K'),
  };
}

function oneLine(text: string): string {
  return text.replace(/\s*\n\s*/g, ' ');
}
