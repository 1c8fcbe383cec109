import type { Command } from 'commander';

/** Each command lives in its own module and registers itself here. */
export function registerCommands(program: Command): void {
  void program;
}
