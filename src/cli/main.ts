import { Command, CommanderError } from 'commander';
import { registerCommands } from './commands/index.js';

/** The `crystallog` command line (contract: CLI.md in the project's shared notes). */
export async function main(argv: string[]): Promise<void> {
  const program = new Command();
  program
    .name('crystallog')
    .description('Powder X-ray diffraction checks: peaks, phase verdicts, crystallite sizes, series.')
    .showHelpAfterError()
    .exitOverride();
  // argv: node, script, then the command name (options come after it).
  await registerCommands(program, argv[2]);
  try {
    await program.parseAsync(argv);
  } catch (err) {
    if (err instanceof CommanderError) {
      // Help and version are not errors; usage mistakes are the user's (exit 2).
      if (err.exitCode === 0) return;
      process.exitCode = 2;
      return;
    }
    throw err;
  }
}
