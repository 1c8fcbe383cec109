import type { Command } from 'commander';

type Register = (program: Command) => void;

/**
 * The commands by name, in the order of the job (as help lists them). Each lives in its own module,
 * loaded only when it runs, so a one-file command does not pay for the others' libraries.
 */
const COMMANDS: ReadonlyArray<readonly [name: string, load: () => Promise<Register>]> = [
  ['peaks', async () => (await import('./peaks.js')).registerPeaks],
  ['library', async () => (await import('./library.js')).registerLibrary],
  ['match', async () => (await import('./match.js')).registerMatch],
  ['instrument', async () => (await import('./instrument.js')).registerInstrument],
  ['size', async () => (await import('./size.js')).registerSize],
  ['series', async () => (await import('./series.js')).registerSeries],
  ['analyze', async () => (await import('./analyze.js')).registerAnalyze],
];

/** Register the command named on the command line, or every command (for help and usage mistakes). */
export async function registerCommands(program: Command, commandName?: string): Promise<void> {
  const one = COMMANDS.find(([name]) => name === commandName);
  for (const [, load] of one ? [one] : COMMANDS) (await load())(program);
}
