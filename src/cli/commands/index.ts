import type { Command } from 'commander';
import { registerLibrary } from './library.js';
import { registerPeaks } from './peaks.js';
import { registerInstrument } from './instrument.js';
import { registerSize } from './size.js';

/** Each command lives in its own module and registers itself here. */
export function registerCommands(program: Command): void {
  registerPeaks(program);
  registerLibrary(program);
  registerInstrument(program);
  registerSize(program);
}
