import type { Command } from 'commander';
import { registerAnalyze } from './analyze.js';
import { registerInstrument } from './instrument.js';
import { registerLibrary } from './library.js';
import { registerMatch } from './match.js';
import { registerPeaks } from './peaks.js';
import { registerSeries } from './series.js';
import { registerSize } from './size.js';

/** Each command lives in its own module and registers itself here. */
export function registerCommands(program: Command): void {
  registerPeaks(program);
  registerLibrary(program);
  registerMatch(program);
  registerInstrument(program);
  registerSize(program);
  registerSeries(program);
  registerAnalyze(program);
}
